//! `plateau report FILE`: what the statistics say about a log, as text (default, for people),
//! markdown (`--format markdown`, for a lab notebook) or JSON (`--format json`, schema in
//! `docs/report-schema.md`); `--svg DIR` writes one plot per quantity; `--timings` prints
//! the ingest and statistics times to standard error.

use std::io::Write;
use std::path::Path;
use std::time::Instant;

use crate::analysis::{time_values, Analyzer, RunAnalysis};
use crate::cli::{AlertArgs, InputArgs};
pub use crate::cli::{ReportArgs, ReportFormat};
use crate::error::Error;
use crate::report::{build_report, render_markdown, render_text, svg, Report, SourceInfo};
use crate::table::RunTable;

use super::check::analysis_options;

/// Reads, analyses and builds the report of one file (also used by tests).
pub fn analyse_file(
    file: &Path,
    input: &InputArgs,
    alerts: &AlertArgs,
) -> Result<(Report, RunTable, RunAnalysis, [f64; 2]), Error> {
    let t0 = Instant::now();
    let (settings, table) = super::load(file, input)?;
    let ingest = t0.elapsed().as_secs_f64();
    let opts = analysis_options(&settings, alerts)?;
    let until = opts.until_ps;
    let target_sem = opts.target_sem.clone();
    let t1 = Instant::now();
    let mut analyzer = Analyzer::new(opts);
    let analysis = analyzer.update(&table, true, None, false);
    let statistics = t1.elapsed().as_secs_f64();
    let bytes = std::fs::metadata(file).map(|m| m.len()).unwrap_or(0);
    let report = build_report(
        &SourceInfo {
            path: file.display().to_string(),
            bytes,
        },
        &table,
        &analysis,
        &analyzer.engine().alerts_by_row(),
        target_sem.as_ref().map(|(c, v)| (c.as_str(), *v)),
        until,
    );
    Ok((report, table, analysis, [ingest, statistics]))
}

fn write_svgs(dir: &Path, table: &RunTable, analysis: &RunAnalysis) -> Result<(), Error> {
    let io_err = |source: std::io::Error| Error::Read {
        path: dir.to_path_buf(),
        source,
    };
    std::fs::create_dir_all(dir).map_err(io_err)?;
    let Some(seg) = table.segments.get(analysis.segment) else {
        return Ok(());
    };
    let rows: Vec<f64>;
    let times = match time_values(seg) {
        Some(t) => t,
        None => {
            rows = (0..seg.rows()).map(|i| i as f64).collect();
            &rows
        }
    };
    for (col, ca) in seg.columns.iter().zip(&analysis.columns) {
        if ca.equilibration.is_none() {
            continue; // step and time columns
        }
        let onset = ca
            .equilibration
            .and_then(|e| e.row())
            .and_then(|r| times.get(r).copied());
        let (mean, error) = match &ca.production {
            Some(p) => (Some(p.mean), p.sem_block.or(p.sem_from_g)),
            None => (None, None),
        };
        let doc = svg::render_svg(&svg::PlotInput {
            title: &ca.name,
            unit: &ca.unit,
            times,
            values: col.values(),
            onset_time: onset,
            mean,
            error,
        });
        let path = dir.join(svg::file_name(&ca.name));
        std::fs::write(&path, doc).map_err(|source| Error::Read { path, source })?;
    }
    Ok(())
}

/// Runs `plateau report`.
pub fn run(args: &ReportArgs, out: &mut dyn Write) -> Result<u8, Error> {
    let (report, table, analysis, [ingest, statistics]) =
        analyse_file(&args.file, &args.input, &args.alerts)?;
    if args.timings {
        eprintln!("ingest: {ingest:.3} s");
        eprintln!("statistics: {statistics:.3} s");
    }
    let text = match args.format {
        ReportFormat::Text => render_text(&report),
        ReportFormat::Markdown => render_markdown(&report),
        ReportFormat::Json => {
            let s = report
                .to_json()
                .map_err(|e| Error::Output(std::io::Error::other(e)))?;
            let mut s = crate::text::escape_json(&s).into_owned();
            s.push('\n');
            s
        }
    };
    super::emit(out, &text)?;
    if let Some(dir) = &args.svg {
        write_svgs(dir, &table, &analysis)?;
    }
    Ok(0)
}
