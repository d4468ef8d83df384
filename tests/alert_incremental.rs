//! The analysis fed row by row (as `check --follow` does) raises the same per-row alerts
//! (non-finite, spike, runaway, restart, skipped lines) as the analysis of the whole file.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use plateau::alert::{Alert, AlertKind, Thresholds};
use plateau::analysis::{AnalysisOptions, Analyzer};
use plateau::parse::{LogParser, ParseOptions};
use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

fn per_row(alerts: &[Alert]) -> Vec<(AlertKind, Option<String>, Option<u64>)> {
    let mut v: Vec<_> = alerts
        .iter()
        .filter(|a| {
            matches!(
                a.kind,
                AlertKind::Nonfinite
                    | AlertKind::Spike
                    | AlertKind::Runaway
                    | AlertKind::Restart
                    | AlertKind::SkippedLines
            )
        })
        .map(|a| (a.kind, a.column.clone(), a.row))
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

fn compare(text: &[u8], chunk: usize) {
    let mut whole = LogParser::new(ParseOptions::default());
    whole.feed(text);
    whole.finish();
    let mut batch = Analyzer::new(opts());
    batch.update(whole.table(), true, None, false);

    let mut live = LogParser::new(ParseOptions::default());
    let mut inc = Analyzer::new(opts());
    for piece in text.chunks(chunk) {
        live.feed(piece);
        inc.update(live.table(), false, None, false);
    }
    live.finish();
    inc.update(live.table(), true, None, true);
    assert_eq!(
        per_row(batch.engine().alerts()),
        per_row(inc.engine().alerts())
    );
    assert!(!per_row(batch.engine().alerts()).is_empty());
}

#[test]
fn blow_up_alerts_are_the_same_fed_in_pieces() {
    let spec = ScenarioSpec::new(Scenario::BlowUp, LogStyle::Whitespace, 1200);
    let mut text = Vec::new();
    write_log(&spec, &mut text).unwrap();
    compare(&text, 4096);
    compare(&text, 50_000);
}

#[test]
fn restart_and_skipped_lines_are_the_same_fed_in_pieces() {
    let dir = std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join("tests/fixtures/alerts");
    compare(&std::fs::read(dir.join("restart.log")).unwrap(), 700);
    compare(&std::fs::read(dir.join("skipped.log")).unwrap(), 333);
    compare(&std::fs::read(dir.join("nonfinite.log")).unwrap(), 1000);
}
