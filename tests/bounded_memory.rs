//! Bounded memory while following: a long log fed in pieces with a small cap on the rows
//! kept (`check --follow --keep-rows`) keeps the table and the arrival times bounded,
//! raises the same per-row alerts at the same rows and lines as the whole file, and its
//! folded statistics match the unfolded ones: exactly where folding keeps them exact,
//! within the stated tolerance where it makes them approximate.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use plateau::alert::{Alert, AlertKind, Thresholds};
use plateau::analysis::{AnalysisOptions, Analyzer, RunAnalysis, MIN_KEEP_ROWS};
use plateau::live::bound_memory;
use plateau::mapping::Role;
use plateau::parse::{LogParser, ParseOptions};
use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

type PerRow = (AlertKind, Option<String>, Option<u64>, Option<u64>);

/// Per-row alerts (kind, column, row, line), sorted.
fn per_row(alerts: &[Alert]) -> Vec<PerRow> {
    let mut v: Vec<_> = alerts
        .iter()
        .filter(|a| {
            matches!(
                a.kind,
                AlertKind::Nonfinite | AlertKind::Spike | AlertKind::Runaway | AlertKind::Restart
            )
        })
        .map(|a| (a.kind, a.column.clone(), a.row, a.line))
        .collect();
    v.sort();
    v
}

fn opts() -> AnalysisOptions {
    AnalysisOptions {
        thresholds: Thresholds::default(),
        ..AnalysisOptions::default()
    }
}

fn log(scenario: Scenario, rows: u64) -> Vec<u8> {
    let spec = ScenarioSpec::new(scenario, LogStyle::Whitespace, rows);
    let mut text = Vec::new();
    write_log(&spec, &mut text).unwrap();
    text
}

/// Sets the temperature (third field) of data row `row` to `value`: a spike.
fn with_spike(text: &[u8], row: usize, value: f64) -> Vec<u8> {
    let s = String::from_utf8(text.to_vec()).unwrap();
    let mut data = 0usize;
    let mut out = String::new();
    for line in s.lines() {
        if line.starts_with('#') {
            out.push_str(line);
        } else {
            if data == row {
                let mut f: Vec<String> = line.split_whitespace().map(String::from).collect();
                f[2] = format!("{value:.3}");
                out.push_str(&f.join(" "));
            } else {
                out.push_str(line);
            }
            data += 1;
        }
        out.push('\n');
    }
    out.into_bytes()
}

struct Followed {
    analyzer: Analyzer,
    analysis: RunAnalysis,
    /// Most rows the table held after a fold.
    max_rows: usize,
    max_arrivals: usize,
    rows_seen: usize,
}

/// Feeds `text` in `chunk`-byte pieces as `check --follow` does (update, then bound the
/// memory); one arrival second per row.
fn follow(text: &[u8], chunk: usize, keep_rows: usize) -> Followed {
    let mut parser = LogParser::new(ParseOptions::default());
    let mut analyzer = Analyzer::new(opts());
    let mut arrivals: Vec<f64> = Vec::new();
    let mut max_rows = 0;
    let mut max_arrivals = 0;
    let mut clock = 0.0;
    for piece in text.chunks(chunk) {
        parser.feed(piece);
        // As the follow loop does: a restart cut rows, their arrivals go too.
        arrivals.truncate(parser.table().rows());
        while arrivals.len() < parser.table().rows() {
            clock += 1.0;
            arrivals.push(clock);
        }
        analyzer.update(parser.table(), false, Some(&arrivals), false);
        bound_memory(&mut parser, &mut analyzer, &mut arrivals, keep_rows);
        assert_eq!(arrivals.len(), parser.table().rows());
        max_rows = max_rows.max(parser.table().rows());
        max_arrivals = max_arrivals.max(arrivals.len());
    }
    parser.finish();
    let analysis = analyzer.update(parser.table(), true, Some(&arrivals), true);
    let rows_seen = parser.table().rows() + analyzer.rows_forgotten() as usize;
    Followed {
        analyzer,
        analysis,
        max_rows,
        max_arrivals,
        rows_seen,
    }
}

fn whole(text: &[u8]) -> (Analyzer, RunAnalysis, plateau::table::RunTable) {
    let mut parser = LogParser::new(ParseOptions::default());
    parser.feed(text);
    parser.finish();
    let table = parser.into_table();
    let mut analyzer = Analyzer::new(opts());
    let analysis = analyzer.update(&table, true, None, false);
    (analyzer, analysis, table)
}

#[test]
fn a_long_blow_up_keeps_memory_bounded_and_the_same_alerts() {
    // Blowing up from row 21 000 (the log ends when values overflow), two spikes before
    // and after the first fold.
    let mut text = log(Scenario::BlowUp, 30_000);
    text = with_spike(&text, 1_500, 390.0);
    text = with_spike(&text, 12_345, 395.0);
    let keep = MIN_KEEP_ROWS;
    let chunk = 4096; // about 60 rows a piece
    let live = follow(&text, chunk, keep);
    let (batch, _, table) = whole(&text);

    assert_eq!(live.rows_seen, table.rows());
    assert!(live.analyzer.rows_forgotten() > 15_000);
    // The table never holds more than the cap plus one piece of rows.
    assert!(live.max_rows <= keep + 100, "{} rows kept", live.max_rows);
    assert!(live.max_arrivals <= keep + 100);

    let expected = per_row(batch.engine().alerts());
    let got = per_row(live.analyzer.engine().alerts());
    assert!(
        expected
            .iter()
            .any(|a| a.0 == AlertKind::Spike && a.2 == Some(12_345)),
        "{expected:?}"
    );
    assert!(expected.iter().any(|a| a.0 == AlertKind::Runaway));
    assert!(expected.iter().any(|a| a.0 == AlertKind::Nonfinite));
    // Same rows and the same line numbers (3 comment lines before the first row).
    assert_eq!(got, expected);
    for a in &got {
        if let (Some(row), Some(line)) = (a.2, a.3) {
            assert_eq!(line, row + 4, "{a:?}");
        }
    }
    assert!(live.analysis.folding.is_some());
}

#[test]
fn the_same_log_in_other_pieces_and_caps_gives_the_same_alerts() {
    let text = with_spike(&log(Scenario::Equilibration, 12_000), 9_000, 420.0);
    let (batch, _, _) = whole(&text);
    let expected = per_row(batch.engine().alerts());
    assert!(!expected.is_empty());
    for (chunk, keep) in [(1000, 2000), (50_000, 3000), (7777, 5000)] {
        let live = follow(&text, chunk, keep);
        assert_eq!(per_row(live.analyzer.engine().alerts()), expected);
        assert!(live.max_rows <= keep + chunk / 60 + 1);
    }
}

fn rel(a: f64, b: f64) -> f64 {
    (a - b).abs() / a.abs().max(b.abs()).max(1e-300)
}

/// Folded against unfolded on a relaxing NPT run long enough to fold many times.
#[test]
fn folded_statistics_match_the_unfolded_ones() {
    let rows = 60_000;
    let text = log(Scenario::Equilibration, rows);
    let live = follow(&text, 16_384, 4_000);
    let (_, full, table) = whole(&text);
    let folded = &live.analysis;
    let fold = folded.folding.as_ref().expect("folded");
    assert!(fold.rows_folded > 50_000);
    assert!(fold.block_rows > 1);
    assert_eq!(full.columns.len(), folded.columns.len());
    let seg = &table.segments[0];
    for (u, f) in full.columns.iter().zip(&folded.columns) {
        assert_eq!(u.name, f.name);
        // Exact: the count of rows, the last value.
        assert_eq!(u.count, f.count, "{}", u.name);
        assert_eq!(u.last, f.last);
        let (Some(pu), Some(pf)) = (&u.production, &f.production) else {
            assert_eq!(u.production.is_some(), f.production.is_some(), "{}", u.name);
            continue;
        };
        // Exact for the production part it reports: count, mean, std, min, max of the
        // rows from its first row, computed here from the raw column.
        let raw = &seg
            .columns
            .iter()
            .find(|c| c.spec.name == f.name)
            .unwrap()
            .values[pf.first_row..];
        let m = plateau::stats::summarize(raw).unwrap();
        assert_eq!(pf.count, raw.len());
        assert!(rel(pf.mean, m.mean) < 1e-12, "{}", f.name);
        assert!(rel(pf.std.unwrap(), m.std.unwrap()) < 1e-9, "{}", f.name);
        assert_eq!((pf.min, pf.max), (m.min, m.max));
        // Approximate (tolerances stated in the module documentation of analysis::folded):
        // the onset within 2 % of the run plus two blocks...
        let tolerance = rows as usize / 50 + 2 * fold.block_rows;
        assert!(
            pu.first_row.abs_diff(pf.first_row) <= tolerance,
            "{}: onset {} vs {}",
            f.name,
            pu.first_row,
            pf.first_row
        );
        // ...the mean within 3 standard errors, the standard errors and g within a
        // factor of 1.5.
        let se = pu.sem_block.unwrap();
        assert!((pu.mean - pf.mean).abs() <= 3.0 * se, "{}", f.name);
        let ratio = |a: f64, b: f64| a.max(b) / a.min(b);
        assert!(
            ratio(se, pf.sem_block.unwrap()) < 1.5,
            "{}: sem {se} vs {:?}",
            f.name,
            pf.sem_block
        );
        assert!(
            ratio(pu.inefficiency.unwrap(), pf.inefficiency.unwrap()) < 1.5,
            "{}: g {:?} vs {:?}",
            f.name,
            pu.inefficiency,
            pf.inefficiency
        );
        assert!(ratio(pu.sem_from_g.unwrap(), pf.sem_from_g.unwrap()) < 1.5);
        // The trend verdict is the same.
        assert_eq!(
            u.trend.as_ref().map(|t| t.still_changing),
            f.trend.as_ref().map(|t| t.still_changing),
            "{}",
            f.name
        );
    }
    // The run's onset and the inferred ensemble.
    let (ru, rf) = (
        full.equilibration.and_then(|e| e.row()).unwrap(),
        folded.equilibration.and_then(|e| e.row()).unwrap(),
    );
    assert!(ru.abs_diff(rf) <= rows as usize / 50 + 2 * fold.block_rows);
    assert_eq!(
        full.ensemble.as_ref().map(|e| e.ensemble),
        folded.ensemble.as_ref().map(|e| e.ensemble)
    );
    assert!(seg.column(Role::Conserved).is_some());
}

/// The NVE drift of the conserved energy: slope within 3 standard errors, same verdict.
#[test]
fn folded_drift_matches_the_unfolded_fit() {
    let text = log(Scenario::NveDrift, 40_000);
    let live = follow(&text, 16_384, 3_000);
    let (_, full, _) = whole(&text);
    let du = full
        .columns
        .iter()
        .find_map(|c| c.drift.clone())
        .expect("unfolded drift");
    let df = live
        .analysis
        .columns
        .iter()
        .find_map(|c| c.drift.clone())
        .expect("folded drift");
    assert!(live.analysis.folding.is_some());
    assert!(
        (du.slope_per_ns - df.slope_per_ns).abs() <= 3.0 * du.stderr_per_ns,
        "{} vs {} (se {})",
        du.slope_per_ns,
        df.slope_per_ns,
        du.stderr_per_ns
    );
    assert_eq!(du.significant, df.significant);
    let ratio = du.stderr_per_ns.max(df.stderr_per_ns) / du.stderr_per_ns.min(df.stderr_per_ns);
    assert!(
        ratio < 2.0,
        "stderr {} vs {}",
        du.stderr_per_ns,
        df.stderr_per_ns
    );
}

/// Drops the last column of every line (header and rows): a log with other columns.
fn without_last_column(text: &[u8]) -> Vec<u8> {
    let s = String::from_utf8(text.to_vec()).unwrap();
    let mut out = String::new();
    for line in s.lines() {
        let fields: Vec<&str> = line.split_whitespace().collect();
        if line.starts_with("# step") {
            out.push_str(&fields[..fields.len() - 1].join(" "));
        } else if line.starts_with('#') {
            out.push_str(line);
        } else {
            out.push_str(&fields[..fields.len() - 1].join(" "));
        }
        out.push('\n');
    }
    out.into_bytes()
}

/// A header with other columns after the first segment was folded: the second segment's
/// rows are numbered after every row of the first, and its alerts carry the same rows and
/// lines as unfolded.
#[test]
fn a_new_segment_after_folding_keeps_rows_and_lines() {
    let mut text = log(Scenario::Equilibration, 9_000);
    let second = with_spike(
        &without_last_column(&log(Scenario::Equilibration, 7_000)),
        5_500,
        430.0,
    );
    text.extend_from_slice(&second);
    let live = follow(&text, 8192, MIN_KEEP_ROWS);
    let (batch, full, table) = whole(&text);
    assert_eq!(table.segments.len(), 2);
    assert!(live.analyzer.rows_forgotten() > 10_000);
    let expected = per_row(batch.engine().alerts());
    assert!(
        expected
            .iter()
            .any(|a| a.0 == AlertKind::Spike && a.2 == Some(9_000 + 5_500)),
        "{expected:?}"
    );
    assert_eq!(per_row(live.analyzer.engine().alerts()), expected);
    assert_eq!(live.analysis.first_row, full.first_row);
    assert_eq!(live.analysis.segment, 1);
    assert_eq!(live.rows_seen, table.rows());
}

/// A restart (the step counter goes back 200 rows) after folding: the restart alert and
/// later per-row alerts have the same rows and lines as unfolded.
#[test]
fn a_restart_into_the_kept_rows_after_folding() {
    let full_log = String::from_utf8(log(Scenario::Equilibration, 12_000)).unwrap();
    let lines: Vec<&str> = full_log.lines().collect();
    let header = 3; // comment lines before the first row
    let mut text = String::new();
    for l in &lines[..header + 8_000] {
        text.push_str(l);
        text.push('\n');
    }
    for l in &lines[header + 7_800..] {
        text.push_str(l);
        text.push('\n');
    }
    let text = with_spike(text.as_bytes(), 8_000 + 2_000, 425.0);
    let live = follow(&text, 4096, MIN_KEEP_ROWS);
    let (batch, _, _) = whole(&text);
    let expected = per_row(batch.engine().alerts());
    assert!(
        expected
            .iter()
            .any(|a| a.0 == AlertKind::Restart && a.2 == Some(7_800)),
        "{expected:?}"
    );
    assert!(live.analyzer.rows_forgotten() > 5_000);
    assert_eq!(per_row(live.analyzer.engine().alerts()), expected);
}
