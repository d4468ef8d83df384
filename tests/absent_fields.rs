//! Rows that carry their own names (JSON objects, `name=value` pairs) and miss a field:
//! the missing field is *absent* (no value), not a non-finite value. The statistics skip
//! absent values and only a `nan` written in the log raises the non-finite alert.
//!
//! Invented logs: stationary AR(1) columns (Box & Jenkins, textbook) with some fields left
//! out of some rows, planted with a known mean.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code

#[path = "support/verdicts_mc.rs"]
mod mc;

use mc::Rng;
use plateau::alert::{Alert, AlertKind, RunStatus, Severity, Thresholds};
use plateau::analysis::{AnalysisOptions, Analyzer, RunAnalysis};
use plateau::parse::{parse_bytes_guessing, ParseOptions};
use plateau::table::is_absent;

const ROWS: usize = 4000;

#[derive(Clone, Copy, PartialEq)]
enum Style {
    Json,
    Pairs,
}

/// A log of `ROWS` rows: step, time, temperature (every row), pressure (every third row),
/// potential (missing from a random 10 % of rows). `nan_row`: a row whose potential is
/// written as `nan`.
fn log(style: Style, seed: u64, nan_row: Option<usize>) -> (String, usize, usize) {
    let mut rng = Rng::new(seed);
    let phi = 0.6_f64;
    let innov = (1.0 - phi * phi).sqrt();
    let mut x = [rng.normal(), rng.normal(), rng.normal()];
    let mut out = String::new();
    let mut pressure_rows = 0;
    let mut potential_rows = 0;
    for r in 0..ROWS {
        let t = 300.0 + 2.0 * x[0];
        let p = 1.0 + 150.0 * x[1];
        let u = -41_000.0 + 40.0 * x[2];
        for v in &mut x {
            *v = phi * *v + innov * rng.normal();
        }
        let with_p = r.is_multiple_of(3);
        let with_u = rng.uniform() >= 0.1 || nan_row == Some(r);
        pressure_rows += usize::from(with_p);
        potential_rows += usize::from(with_u);
        let u_text = if nan_row == Some(r) {
            "nan".to_string()
        } else {
            format!("{u:.4}")
        };
        match style {
            Style::Json => {
                let mut fields = vec![
                    format!("\"step\": {}", r * 100),
                    format!("\"time\": {:.2}", r as f64 * 0.2),
                    format!("\"temperature\": {t:.4}"),
                ];
                if with_p {
                    fields.push(format!("\"pressure\": {p:.4}"));
                }
                if with_u {
                    if nan_row == Some(r) {
                        fields.push("\"potential\": \"nan\"".to_string());
                    } else {
                        fields.push(format!("\"potential\": {u_text}"));
                    }
                }
                out.push_str(&format!("{{{}}}\n", fields.join(", ")));
            }
            Style::Pairs => {
                let mut line = format!(
                    "step={} time={:.2} temperature={t:.4}",
                    r * 100,
                    r as f64 * 0.2
                );
                if with_p {
                    line.push_str(&format!(" pressure={p:.4}"));
                }
                if with_u {
                    line.push_str(&format!(" potential={u_text}"));
                }
                out.push_str(&line);
                out.push('\n');
            }
        }
    }
    (out, pressure_rows, potential_rows)
}

fn analyse(text: &str) -> (plateau::table::RunTable, RunAnalysis, Vec<Alert>) {
    // As the commands read a file: the layout from the log's start, then the rows.
    let (table, _) = parse_bytes_guessing(text.as_bytes(), ParseOptions::default());
    let mut analyzer = Analyzer::new(AnalysisOptions {
        thresholds: Thresholds::default(),
        ..AnalysisOptions::default()
    });
    let a = analyzer.update(&table, true, None, false);
    let alerts = analyzer.engine().alerts_by_row();
    (table, a, alerts)
}

fn check_absent_is_not_nonfinite(style: Style) {
    for seed in 1..=3u64 {
        let (text, pressure_rows, potential_rows) = log(style, seed, None);
        let (table, a, alerts) = analyse(&text);
        let seg = table.segments.last().unwrap();
        let col = |name: &str| seg.columns.iter().find(|c| c.spec.name == name).unwrap();
        // The table records absence, apart from non-finite values.
        let p = col("pressure");
        assert_eq!(p.absent as usize, ROWS - pressure_rows);
        assert_eq!(p.non_finite, 0);
        assert_eq!(
            p.values().iter().filter(|v| is_absent(**v)).count(),
            ROWS - pressure_rows
        );
        assert_eq!(col("potential").absent as usize, ROWS - potential_rows);
        // No non-finite alert, nothing critical, the run is not unstable.
        assert!(
            !alerts.iter().any(|x| x.kind == AlertKind::Nonfinite),
            "{alerts:#?}"
        );
        assert!(!alerts.iter().any(|x| x.severity == Severity::Critical));
        assert_ne!(a.status, RunStatus::Unstable, "{}", a.status_reason);
        // The statistics use the present values: the pressure's production mean is within
        // 4 standard errors of its planted mean (1 bar), over the present values only.
        let pa = a.columns.iter().find(|c| c.name == "pressure").unwrap();
        let prod = pa.production.as_ref().expect("pressure production");
        assert!(prod.count <= pressure_rows, "{prod:?}");
        assert!(prod.count * 2 >= pressure_rows, "{prod:?}");
        let sem = prod.sem_block.or(prod.sem_from_g).unwrap();
        assert!((prod.mean - 1.0).abs() < 4.0 * sem, "{prod:?}");
        assert!(prod.mean.is_finite() && prod.std.is_some_and(f64::is_finite));
        // Rows found on the present values are rows of the segment.
        assert!(prod.first_row < ROWS);
    }
}

#[test]
fn json_rows_missing_a_field_raise_no_nonfinite_alert() {
    check_absent_is_not_nonfinite(Style::Json);
}

#[test]
fn name_value_rows_missing_a_field_raise_no_nonfinite_alert() {
    check_absent_is_not_nonfinite(Style::Pairs);
}

/// A `nan` written in the log is still a non-finite value, raised at its row, among rows
/// that miss the same field.
#[test]
fn a_written_nan_is_still_non_finite() {
    for style in [Style::Json, Style::Pairs] {
        let nan_row = 2500;
        let (text, _, _) = log(style, 7, Some(nan_row));
        let (table, a, alerts) = analyse(&text);
        let seg = table.segments.last().unwrap();
        let u = seg
            .columns
            .iter()
            .find(|c| c.spec.name == "potential")
            .unwrap();
        assert_eq!(u.non_finite, 1);
        let nf: Vec<&Alert> = alerts
            .iter()
            .filter(|x| x.kind == AlertKind::Nonfinite)
            .collect();
        assert_eq!(nf.len(), 1, "{nf:#?}");
        assert_eq!(nf[0].row, Some(nan_row as u64));
        assert_eq!(nf[0].column.as_deref(), Some("potential"));
        // Cleared by the finite rows after it (a single bad row), so it does not decide
        // the status; the statistics stop at it.
        let ua = a.columns.iter().find(|c| c.name == "potential").unwrap();
        assert!(ua.production.as_ref().is_none_or(|p| p.first_row < nan_row));
    }
}

/// The same logs followed under a memory cap of 2,000 rows (the smallest), so that most
/// rows are folded into block summaries: a row without a value is a row of its block but
/// not a value (analysis::folded, fold::FoldedSeries). The folded statistics of the
/// pressure (written every third row) and the potential (missing from 10 % of rows) stay
/// finite, count only the values written, and their means lie within 4 standard errors
/// of the planted means.
#[test]
fn folded_rows_without_a_value_are_left_out_of_the_block_summaries() {
    use plateau::live::bound_memory;
    use plateau::parse::{sniff, LogParser};
    for style in [Style::Json, Style::Pairs] {
        let (text, pressure_rows, potential_rows) = log(style, 7, None);
        let mut options = ParseOptions::default();
        sniff::sniff_layout(text.as_bytes(), &options).apply(&mut options);
        let mut parser = LogParser::new(options);
        let mut analyzer = Analyzer::new(AnalysisOptions {
            thresholds: Thresholds::default(),
            ..AnalysisOptions::default()
        });
        let mut arrivals: Vec<f64> = Vec::new();
        for piece in text.as_bytes().chunks(3000) {
            parser.feed(piece);
            while arrivals.len() < parser.table().rows() {
                arrivals.push(arrivals.len() as f64);
            }
            analyzer.update(parser.table(), false, Some(&arrivals), false);
            bound_memory(&mut parser, &mut analyzer, &mut arrivals, 2000);
        }
        parser.finish();
        let a = analyzer.update(parser.table(), true, Some(&arrivals), true);
        assert!(a.folding.is_some(), "not folded");
        assert!(analyzer.rows_forgotten() >= 1000);
        let planted = [
            ("pressure", 1.0, pressure_rows),
            ("potential", -41_000.0, potential_rows),
        ];
        for (name, mean, written) in planted {
            let c = a.columns.iter().find(|c| c.name == name).unwrap();
            let prod = c
                .production
                .as_ref()
                .unwrap_or_else(|| panic!("{name}: {c:?}"));
            assert!(
                prod.mean.is_finite() && prod.std.is_some_and(f64::is_finite),
                "{prod:?}"
            );
            assert!(prod.count <= written, "{name}: {} of {written}", prod.count);
            assert!(
                prod.count * 2 >= written,
                "{name}: {} of {written}",
                prod.count
            );
            let sem = prod.sem_block.or(prod.sem_from_g).unwrap();
            assert!((prod.mean - mean).abs() < 4.0 * sem, "{name}: {prod:?}");
        }
    }
}

/// JSON rows whose pressure and volume are written only from a later stage on (constant
/// pressure after constant volume), first seen far past the start the layout is guessed
/// from (256 KiB): a whole file is read again with them as columns, so the later stage's
/// pressure and volume are analysed, each with a value in exactly the rows that wrote it.
#[test]
fn names_first_seen_late_in_a_file_are_columns() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("late.jsonl");
    let mut rng = Rng::new(11);
    let (nvt, npt) = (4000usize, 3000usize);
    let mut text = String::new();
    for r in 0..nvt + npt {
        let t = 300.0 + 2.0 * rng.normal();
        let mut fields = vec![
            format!("\"step\": {}", r * 100),
            format!("\"time\": {:.2}", r as f64 * 0.2),
            format!("\"temperature\": {t:.4}"),
            format!("\"potential\": {:.3}", -41_000.0 + 40.0 * rng.normal()),
        ];
        if r >= nvt {
            fields.push(format!("\"pressure\": {:.3}", 1.0 + 150.0 * rng.normal()));
            fields.push(format!("\"volume\": {:.5}", 27.0 + 0.05 * rng.normal()));
        }
        text.push_str(&format!("{{{}}}\n", fields.join(", ")));
    }
    let first_late = text.lines().position(|l| l.contains("pressure")).unwrap();
    let offset: usize = text.lines().take(first_late).map(|l| l.len() + 1).sum();
    assert!(
        offset > 256 * 1024,
        "the new names must come after the guessed start"
    );
    std::fs::write(&path, &text).unwrap();

    let (_, table) = plateau::commands::load(&path, &plateau::cli::InputArgs::default()).unwrap();
    assert!(table.later_names.is_empty(), "{:?}", table.later_names);
    let rows: usize = table.rows();
    assert_eq!(rows, nvt + npt);
    for name in ["pressure", "volume"] {
        let col = table
            .segments
            .iter()
            .flat_map(|s| &s.columns)
            .find(|c| c.spec.name == name)
            .unwrap_or_else(|| panic!("no {name} column"));
        let present = col.values().iter().filter(|v| !is_absent(**v)).count();
        assert_eq!(present, npt, "{name}");
    }
    // The quantities written from row 4000 on start a stage there (planted): the report's
    // production is the constant-pressure stage, the stage before has no volume to judge.
    let (_, staged, _) = plateau::commands::report::analyse_run(
        std::slice::from_ref(&path),
        &plateau::cli::InputArgs::default(),
        &plateau::cli::AlertArgs::default(),
        &plateau::cli::StageArgs::default(),
    )
    .unwrap();
    let stages = &staged.stages;
    assert_eq!(stages.len(), 2, "{stages:#?}");
    assert_eq!(stages[1].first_row as usize, nvt);
    assert_eq!(
        stages[1].started_by,
        plateau::stages::StartReason::NewColumns
    );
    assert_eq!(stages[1].kind, plateau::stages::StageKind::Production);
    assert_eq!(stages[0].conditions, None);
    assert_eq!(stages[0].verdict, "equilibrated", "{:?}", stages[0]);
}

/// The same rows parsed with the layout of the start only (as a followed run or a pipe
/// is): the later names are listed with the line each was first seen on.
#[test]
fn names_first_seen_late_are_listed_with_their_line() {
    let mut text = String::new();
    for r in 0..50 {
        text.push_str(&format!("step={} temperature=300.{r}\n", r * 10));
    }
    text.push_str("step=500 temperature=301 pressure=1.5\n");
    let start = text.rfind("step=500").unwrap();
    let mut options = ParseOptions::default();
    plateau::parse::sniff::sniff_layout(&text.as_bytes()[..start], &options).apply(&mut options);
    assert!(options.records.is_some(), "self-named rows");
    let mut parser = plateau::parse::LogParser::new(options);
    parser.feed(text.as_bytes());
    parser.finish();
    let later = &parser.table().later_names;
    assert_eq!(later.len(), 1, "{later:?}");
    assert_eq!((later[0].name.as_str(), later[0].line), ("pressure", 51));
}
