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

/// An invented production run on its targets (300 K, 1 bar: the generator's own), followed
/// a few rows at a time as `check --follow` reads it: no off-target alert, as the whole
/// file raises none. Each piece's scan rebuilds the windows before its first row; one
/// rebuilt a row short once gave standard errors of zero and false alarms while following.
#[test]
fn a_run_on_its_targets_followed_in_pieces_raises_no_off_target_alert() {
    use plateau::alert::Target;
    let with_targets = || AnalysisOptions {
        target_temperature: Some(Target::constant(300.0)),
        target_pressure: Some(Target::constant(1.0)),
        ..opts()
    };
    let off_target = |a: &Analyzer| {
        a.engine()
            .alerts()
            .iter()
            .filter(|x| {
                matches!(
                    x.kind,
                    AlertKind::TemperatureOffTarget | AlertKind::PressureOffTarget
                )
            })
            .cloned()
            .collect::<Vec<_>>()
    };
    for seed in 1..=3u64 {
        let mut spec = ScenarioSpec::new(Scenario::Production, LogStyle::Whitespace, 2000);
        spec.seed = seed;
        let mut text = Vec::new();
        write_log(&spec, &mut text).unwrap();
        let mut whole = LogParser::new(ParseOptions::default());
        whole.feed(&text);
        whole.finish();
        let mut batch = Analyzer::new(with_targets());
        batch.update(whole.table(), true, None, false);
        assert!(off_target(&batch).is_empty(), "{:#?}", off_target(&batch));

        let mut live = LogParser::new(ParseOptions::default());
        let mut inc = Analyzer::new(with_targets());
        for piece in text.chunks(977) {
            live.feed(piece);
            inc.update(live.table(), false, None, false);
        }
        live.finish();
        inc.update(live.table(), true, None, true);
        assert!(
            off_target(&inc).is_empty(),
            "seed {seed}: {:#?}",
            off_target(&inc)
        );
    }
}
