//! Measures what `check --follow` holds per run: feeds a log to the parser and analyser in
//! 64 KiB pieces, as the follow loop does (update, then fold past the cap), and prints the
//! rows kept, the largest table, the bytes of values held and the process's peak memory.
//!
//! ```sh
//! cargo run --release --example follow_memory -- LOG [KEEP_ROWS]
//! ```
//! KEEP_ROWS 0: never fold (the unbounded reference). With `--compare` after KEEP_ROWS, the
//! whole file is also analysed unfolded and the production statistics are printed side by
//! side (folded / unfolded).

use std::io::Read;

use plateau::analysis::{AnalysisOptions, Analyzer, DEFAULT_KEEP_ROWS};
use plateau::live::bound_memory;
use plateau::parse::{LogParser, ParseOptions};

fn peak_kib() -> Option<u64> {
    let status = std::fs::read_to_string("/proc/self/status").ok()?;
    let line = status.lines().find(|l| l.starts_with("VmHWM:"))?;
    line.split_whitespace().nth(1)?.parse().ok()
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let mut args = std::env::args().skip(1);
    let path = args.next().ok_or("usage: follow_memory LOG [KEEP_ROWS]")?;
    let keep: usize = match args.next() {
        Some(k) => k.parse()?,
        None => DEFAULT_KEEP_ROWS,
    };
    let mut file = std::fs::File::open(&path)?;
    let mut parser = LogParser::new(ParseOptions::default());
    let mut analyzer = Analyzer::new(AnalysisOptions::default());
    let mut arrivals: Vec<f64> = Vec::new();
    let mut buf = vec![0u8; 64 * 1024];
    let (mut max_rows, mut updates) = (0usize, 0u64);
    let started = std::time::Instant::now();
    loop {
        let n = file.read(&mut buf)?;
        if n == 0 {
            break;
        }
        parser.feed(buf.get(..n).unwrap_or_default());
        while arrivals.len() < parser.table().rows() {
            arrivals.push(started.elapsed().as_secs_f64());
        }
        analyzer.update(parser.table(), false, Some(&arrivals), false);
        updates += 1;
        if keep > 0 {
            bound_memory(&mut parser, &mut analyzer, &mut arrivals, keep);
        }
        max_rows = max_rows.max(parser.table().rows());
    }
    parser.finish();
    let analysis = analyzer.update(parser.table(), true, Some(&arrivals), true);
    let table = parser.table();
    let values: usize = table
        .segments
        .iter()
        .map(|s| s.rows() * (s.columns.len() + 1))
        .sum();
    println!(
        "rows seen {}, kept {}, most kept {}, updates {updates}",
        table.rows() as u64 + analyzer.rows_forgotten(),
        table.rows(),
        max_rows
    );
    println!(
        "values held at full resolution (with lines): {} ({} bytes), arrivals {}",
        values,
        values * 8,
        arrivals.len()
    );
    if let Some(f) = &analysis.folding {
        println!("{}", f.describe());
    }
    println!("peak memory: {} KiB", peak_kib().unwrap_or(0));
    if args.next().as_deref() == Some("--compare") {
        let whole = plateau::parse::parse_bytes(&std::fs::read(&path)?, ParseOptions::default());
        let reference = Analyzer::new(AnalysisOptions::default()).update(&whole, true, None, false);
        println!(
            "column: onset | mean | std | sem | sem_from_g | g | drift/ns (folded / unfolded)"
        );
        for (f, u) in analysis.columns.iter().zip(&reference.columns) {
            let (Some(pf), Some(pu)) = (&f.production, &u.production) else {
                continue;
            };
            let o = |x: Option<f64>| x.map_or("-".to_string(), |v| format!("{v:.4e}"));
            println!(
                "{}: {} / {} | {:.6e} / {:.6e} | {} / {} | {} / {} | {} / {} | {} / {} | {} / {}",
                f.name,
                pf.first_row,
                pu.first_row,
                pf.mean,
                pu.mean,
                o(pf.std),
                o(pu.std),
                o(pf.sem_block),
                o(pu.sem_block),
                o(pf.sem_from_g),
                o(pu.sem_from_g),
                o(pf.inefficiency),
                o(pu.inefficiency),
                o(f.drift.as_ref().map(|d| d.slope_per_ns)),
                o(u.drift.as_ref().map(|d| d.slope_per_ns)),
            );
        }
    }
    Ok(())
}
