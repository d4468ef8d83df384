//! `plateau report`: the JSON parses back into the typed report structs; text and markdown
//! are compared with expected files (`tests/fixtures/alerts/*.expected.*`). To accept a
//! deliberate change of the output, run the tests with `PLATEAU_UPDATE_SNAPSHOTS=1` and
//! review the diff.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::path::{Path, PathBuf};

use assert_cmd::Command;
use plateau::alert::{AlertKind, RunStatus, Severity};
use plateau::report::{EquilibrationState, Report, SCHEMA_VERSION};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn plateau() -> Command {
    let mut c = Command::cargo_bin("plateau").unwrap();
    c.current_dir(root());
    c
}

fn run(args: &[&str]) -> String {
    let out = plateau().args(args).output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

fn snapshot(actual: &str, expected_file: &str) {
    let path = root().join("tests/fixtures/alerts").join(expected_file);
    if std::env::var_os("PLATEAU_UPDATE_SNAPSHOTS").is_some() {
        std::fs::write(&path, actual).unwrap();
        return;
    }
    let expected = std::fs::read_to_string(&path).unwrap_or_else(|e| {
        panic!(
            "{}: {e} (PLATEAU_UPDATE_SNAPSHOTS=1 writes it)",
            path.display()
        )
    });
    assert_eq!(actual, expected, "output differs from {}", path.display());
}

#[test]
fn json_parses_back_into_typed_structs() {
    let text = run(&[
        "report",
        "tests/fixtures/alerts/restart.log",
        "--format",
        "json",
    ]);
    let r: Report = serde_json::from_str(&text).unwrap();
    assert_eq!(r.schema_version, SCHEMA_VERSION);
    assert_eq!(r.source.path, "tests/fixtures/alerts/restart.log");
    // restart.log: 300 rows, then 200 rows from row 200's step on (README of the fixtures).
    assert_eq!(r.rows, 400);
    assert_eq!(r.restarts.len(), 1);
    assert_eq!(r.restarts[0].replaced, 100);
    assert_eq!(r.segments.len(), 1);
    assert_eq!(r.throughput, None, "finished file: no arrival times");
    assert_eq!(r.eta, None);
    let t = r.columns.iter().find(|c| c.name == "temperature").unwrap();
    assert_eq!(t.role.as_deref(), Some("temperature"));
    assert_eq!(t.unit, "K");
    assert_eq!(t.count, 400);
    assert_eq!(t.equilibration_state, EquilibrationState::Equilibrated);
    let p = t.production.as_ref().unwrap();
    assert_eq!(p.inefficiency_estimator, "first-negative");
    // The fixture's temperature is 300 + 3·(sum of six uniforms − 3): SD 3/sqrt(2) = 2.12.
    assert!((p.mean - 300.0).abs() < 0.5, "{}", p.mean);
    assert!((p.std.unwrap() - 2.12).abs() < 0.3);
    let step = r.columns.iter().find(|c| c.name == "step").unwrap();
    assert_eq!(step.equilibration_state, EquilibrationState::NotAnalysed);
    assert_eq!(r.alerts.len(), 1);
    assert_eq!(r.alerts[0].kind, AlertKind::Restart);
    assert_eq!(r.alerts[0].severity, Severity::Info);
    assert_eq!(r.status, RunStatus::Steady);
    // Kebab-case values, snake_case keys.
    assert!(text.contains("\"kind\": \"restart\""));
    assert!(text.contains("\"equilibration_state\": \"not-analysed\""));
    assert!(text.contains("\"skipped_lines\": 0"));
}

#[test]
fn json_writes_non_finite_values_as_strings() {
    let text = run(&[
        "report",
        "tests/fixtures/alerts/nonfinite.log",
        "--format",
        "json",
    ]);
    let r: Report = serde_json::from_str(&text).unwrap();
    let a = r
        .alerts
        .iter()
        .find(|a| a.kind == AlertKind::Nonfinite)
        .unwrap();
    assert!(a.value.unwrap().is_nan());
    assert!(text.contains("\"value\": \"nan\""));
    assert!(!text.contains("NaN"));
    let t = r.columns.iter().find(|c| c.name == "temperature").unwrap();
    assert_eq!(t.nonfinite, 1);
}

#[test]
fn json_lists_skipped_lines_with_reasons() {
    let text = run(&[
        "report",
        "tests/fixtures/alerts/skipped.log",
        "--format",
        "json",
    ]);
    let r: Report = serde_json::from_str(&text).unwrap();
    assert_eq!(r.skipped_lines, 2);
    let lines: Vec<u64> = r.skipped.iter().map(|s| s.line).collect();
    assert_eq!(lines, vec![52, 203]);
    assert!(r.skipped.iter().all(|s| !s.reason.is_empty()));
}

#[test]
fn text_report_snapshot() {
    let text = run(&["report", "tests/fixtures/alerts/restart.log"]);
    snapshot(&text, "restart.expected.txt");
    let text = run(&["report", "tests/fixtures/alerts/skipped.log"]);
    snapshot(&text, "skipped.expected.txt");
}

#[test]
fn markdown_report_snapshot() {
    let text = run(&[
        "report",
        "tests/fixtures/alerts/skipped.log",
        "--format",
        "markdown",
    ]);
    snapshot(&text, "skipped.expected.md");
}

#[test]
fn svg_plots_mark_onset_and_mean() {
    let dir = tempfile::tempdir().unwrap();
    let log = root().join("demo-logs/equilibration.log");
    plateau()
        .args(["report", log.to_str().unwrap(), "--svg"])
        .arg(dir.path())
        .assert()
        .success();
    let potential = std::fs::read_to_string(dir.path().join("potential.svg")).unwrap();
    assert!(potential.contains("class=\"onset\""));
    assert!(potential.contains("class=\"mean\""));
    assert!(potential.contains("class=\"error-band\""));
    assert!(!Path::new(&dir.path().join("step.svg")).exists());
}

#[test]
fn timings_go_to_standard_error() {
    let out = plateau()
        .args(["report", "tests/fixtures/alerts/healthy.log", "--timings"])
        .output()
        .unwrap();
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(err.contains("ingest: "), "{err}");
    assert!(err.contains("statistics: "), "{err}");
    assert!(!String::from_utf8(out.stdout).unwrap().contains("ingest:"));
}

#[test]
fn a_spike_is_counted_on_its_column_in_a_one_shot_report() {
    // 3000 rows of smooth, correlated noise (AR(1), φ = 0.9, uniform innovations from a
    // fixed linear congruential generator) with one value pushed 40 SDs away at row 1500:
    // the spike alert and the column's spike count must agree (the count used to be read
    // before the same update's scan had counted it).
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("spike.log");
    let mut state: u64 = 12345;
    let mut uniform = || {
        state = state
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
    };
    let mut text = String::from("# step time(ps) potential(kJ/mol)\n");
    let mut x = 0.0f64;
    for row in 0..3000 {
        x = 0.9 * x + uniform();
        let v = if row == 1500 {
            -1000.0 + 40.0
        } else {
            -1000.0 + x
        };
        text.push_str(&format!("{} {:.3} {:.5}\n", row * 10, row as f64 * 0.02, v));
    }
    std::fs::write(&path, text).unwrap();
    let out = plateau()
        .args(["report", "--format", "json"])
        .arg(&path)
        .output()
        .unwrap();
    let r: Report = serde_json::from_slice(&out.stdout).unwrap();
    let spikes: Vec<_> = r
        .alerts
        .iter()
        .filter(|a| a.kind == AlertKind::Spike)
        .collect();
    assert_eq!(spikes.len(), 1, "{:?}", r.alerts);
    assert_eq!(spikes[0].row, Some(1500));
    let p = r.columns.iter().find(|c| c.name == "potential").unwrap();
    assert_eq!(p.spikes, 1);
}
