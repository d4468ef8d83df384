//! The bodies of plateau's fuzz targets, as plain functions of the input bytes.
//!
//! Each one must never panic, hang or use memory out of proportion for any input, and
//! checks properties the code promises (a panic here is a crash the fuzzer reports):
//! - [`block_parser`]: classifying and parsing one block (`parse::parse_block`) under
//!   options taken from the first byte;
//! - [`log_parser`]: the whole reader (`LogParser`: headers, segments, restarts). Feeding
//!   the input in any chunks gives the same table as feeding it at once (its documented
//!   promise), and the two-thread block reader (`ingest::read_blocks`) with any block size
//!   gives that table too;
//! - [`header_layout`]: header detection and name/unit splitting for every delimiter, and
//!   the role guessed from each name; a line said to be a header of `n` columns yields `n`
//!   names;
//! - [`units`]: unit, quantity, time and duration parsing; every unit parsed reads back
//!   from its own name, and converting to canonical and back returns the value;
//! - [`schedule`]: `TIME=VALUE,...` schedules; a value is always between the smallest and
//!   largest point (linear between points, held after the last);
//! - [`config`]: the settings file (TOML) and its merge with an empty command line.

use std::path::Path;

use plateau::parse::{parse_block, DelimiterChoice, LogParser, ParseOptions};
use plateau::units::{Dimension, Schedule, Unit};

const DIMENSIONS: [Dimension; 6] = [
    Dimension::Time,
    Dimension::Temperature,
    Dimension::Pressure,
    Dimension::Energy,
    Dimension::Volume,
    Dimension::Density,
];

/// Parse options chosen by `selector` (delimiter, row tag, comment prefixes).
fn options(selector: u8) -> ParseOptions {
    let mut o = ParseOptions {
        delimiter: match selector & 3 {
            0 => DelimiterChoice::Auto,
            1 => DelimiterChoice::Whitespace,
            2 => DelimiterChoice::Comma,
            _ => DelimiterChoice::Tab,
        },
        ..ParseOptions::default()
    };
    if selector & 4 != 0 {
        o.row_tag = Some("DATA".to_string());
    }
    if selector & 8 != 0 {
        o.comment_prefixes = Vec::new();
    }
    if selector & 16 != 0 {
        o.timestep_ps = Some(0.002);
    }
    o
}

/// Target `block_parser`.
pub fn block_parser(data: &[u8]) {
    let Some((&selector, text)) = data.split_first() else {
        return;
    };
    let (block, complete) = parse_block(text, &options(selector));
    assert!(complete <= text.len(), "complete lines end past the input");
    std::hint::black_box(block);
}

/// Target `log_parser`.
pub fn log_parser(data: &[u8]) {
    let [selector, a, b, text @ ..] = data else {
        return;
    };
    let opts = options(*selector);
    let whole = {
        let mut p = LogParser::new(opts.clone());
        p.feed(text);
        p.finish();
        p.into_table()
    };
    // Two cut points anywhere (inside lines, inside UTF-8 sequences, inside CRLF).
    let n = text.len();
    let (mut x, mut y) = (usize::from(*a) * n / 255, usize::from(*b) * n / 255);
    if x > y {
        std::mem::swap(&mut x, &mut y);
    }
    let chunked = {
        let mut p = LogParser::new(opts.clone());
        p.feed(&text[..x]);
        p.feed(&text[x..y]);
        p.feed(&text[y..]);
        p.finish();
        p.into_table()
    };
    // Debug text compares NaN values as equal (f64's == does not).
    let whole_text = format!("{whole:?}");
    assert_eq!(
        whole_text,
        format!("{chunked:?}"),
        "chunked feeding differs"
    );
    let block_size = 1 + usize::from(*a % 64);
    let workers = 1 + usize::from(*b % 2);
    let blocks = plateau::ingest::read_blocks(
        std::io::Cursor::new(text),
        opts,
        block_size,
        workers,
        Some(n as u64),
    );
    match blocks {
        Ok(table) => assert_eq!(whole_text, format!("{table:?}"), "block reader differs"),
        Err(e) => panic!("block reader failed on bytes in memory: {e}"),
    }
}

/// Target `header_layout`.
pub fn header_layout(data: &[u8]) {
    use plateau::parse::Delimiter;
    let line = data.split(|&b| b == b'\n').next().unwrap_or_default();
    for delim in [Delimiter::Whitespace, Delimiter::Comma, Delimiter::Tab] {
        if let Some(n) = plateau::parse::layout::header_column_count(line, delim) {
            let names = plateau::parse::layout::header_names(line, delim);
            assert_eq!(names.len(), n, "header of {n} columns gave other names");
            for name in &names {
                std::hint::black_box(plateau::mapping::guess_role(&name.name));
                if let Some(unit) = &name.unit {
                    let _ = Unit::parse(unit);
                }
            }
        }
    }
    if let Some(n) = plateau::parse::layout::wide_header_column_count(line) {
        let names = plateau::parse::layout::wide_header_names(line);
        assert_eq!(
            names.len(),
            n,
            "wide header of {n} columns gave other names"
        );
    }
}

/// Target `units`.
pub fn units(data: &[u8]) {
    let text = String::from_utf8_lossy(data);
    if let Ok(unit) = Unit::parse(&text) {
        let name = unit.to_string();
        assert_eq!(
            Unit::parse(&name).ok(),
            Some(unit),
            "{name} does not read back"
        );
        for v in [1.0, -273.15, 1e-3, 12_345.678] {
            let back = unit.from_canonical(unit.to_canonical(v));
            assert!(
                (back - v).abs() <= 1e-9 * v.abs().max(1.0),
                "{name}: {v} -> {back}"
            );
        }
    }
    for d in DIMENSIONS {
        let _ = Unit::parse_for(&text, d);
        let _ = plateau::units::parse_quantity(&text, d);
    }
    let _ = plateau::units::parse_time(&text);
    let _ = plateau::units::parse_duration(&text);
}

/// Target `schedule`.
pub fn schedule(data: &[u8]) {
    let Some((&selector, rest)) = data.split_first() else {
        return;
    };
    let text = String::from_utf8_lossy(rest);
    let dimension = DIMENSIONS[usize::from(selector) % DIMENSIONS.len()];
    let timestep = (selector & 0x80 != 0).then_some(0.002);
    let Ok(s) = Schedule::parse(&text, dimension, timestep) else {
        return;
    };
    let points = s.points();
    let values: Vec<f64> = points.iter().map(|p| p.1).collect();
    if values
        .iter()
        .chain(points.iter().map(|p| &p.0))
        .any(|v| !v.is_finite())
    {
        return; // non-finite points: nothing to bound (must still not panic)
    }
    let lo = values.iter().copied().fold(f64::INFINITY, f64::min);
    let hi = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    let mut times: Vec<f64> = points.iter().map(|p| p.0).collect();
    times.extend(points.windows(2).map(|w| 0.5 * (w[0].0 + w[1].0)));
    times.extend([f64::MIN, -1.0, 0.0, 1e12, f64::MAX]);
    for t in times {
        let v = s.value_at(t);
        let slack = 1e-9 * (lo.abs().max(hi.abs()).max(1.0));
        assert!(
            v >= lo - slack && v <= hi + slack,
            "value {v} at {t} outside [{lo}, {hi}] for {text:?}"
        );
    }
}

/// Target `config`.
pub fn config(data: &[u8]) {
    let text = String::from_utf8_lossy(data);
    let path = Path::new("plateau.toml");
    if let Ok(file) = plateau::config::FileConfig::parse(&text, path) {
        let args = plateau::cli::InputArgs::default();
        let _ = plateau::config::Settings::merge(&args, Some(&file), Some(path));
    }
}

/// A target's body.
pub type Target = fn(&[u8]);

/// Every target by name (for the replayer).
pub const TARGETS: [(&str, Target); 6] = [
    ("block_parser", block_parser),
    ("log_parser", log_parser),
    ("header_layout", header_layout),
    ("units", units),
    ("schedule", schedule),
    ("config", config),
];
