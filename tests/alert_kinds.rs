//! Each alert kind is raised on an invented log made to trigger it, at the right row, and
//! not raised on a healthy log of the same shape (false alarms are defects too).
//!
//! The logs come from plateau's own scenario generator (invented, deterministic) and are
//! changed in known rows here; small hand-written ones live in `tests/fixtures/alerts/`.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::path::{Path, PathBuf};

use plateau::alert::{AlertKind, Severity};
use plateau::cli::InputArgs;
use plateau::commands::check::AlertArgs;
use plateau::commands::report::analyse_file;
use plateau::report::{AlertRecord, Report};
use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

/// Lines before the first data row in the generator's whitespace style (two comment lines
/// and the header).
const HEADER_LINES: u64 = 3;

fn generated(scenario: Scenario, rows: u64) -> String {
    let spec = ScenarioSpec::new(scenario, LogStyle::Whitespace, rows);
    let mut out = Vec::new();
    write_log(&spec, &mut out).unwrap();
    String::from_utf8(out).unwrap()
}

/// Rewrites the data rows of a whitespace log: `f(row, fields)`.
fn edit(text: &str, f: impl Fn(usize, &mut Vec<String>)) -> String {
    let mut row = 0;
    let mut out = String::new();
    for line in text.lines() {
        if line.starts_with('#') || line.trim().is_empty() {
            out.push_str(line);
        } else {
            let mut fields: Vec<String> = line.split_whitespace().map(str::to_string).collect();
            f(row, &mut fields);
            out.push_str(&fields.join(" "));
            row += 1;
        }
        out.push('\n');
    }
    out
}

fn shift(fields: &mut [String], index: usize, by: f64) {
    let v: f64 = fields[index].parse().unwrap();
    fields[index] = format!("{:.4}", v + by);
}

fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
    let p = dir.join(name);
    std::fs::write(&p, text).unwrap();
    p
}

fn report(path: &Path, atoms: Option<u64>, alerts: AlertArgs) -> Report {
    let input = InputArgs {
        atoms,
        ..InputArgs::default()
    };
    analyse_file(path, &input, &alerts).unwrap().0
}

fn of_kind(r: &Report, kind: AlertKind) -> Vec<&AlertRecord> {
    r.alerts.iter().filter(|a| a.kind == kind).collect()
}

fn targets(t: Option<&str>, p: Option<&str>) -> AlertArgs {
    AlertArgs {
        target_temperature: t.map(str::to_string),
        target_pressure: p.map(str::to_string),
        ..AlertArgs::default()
    }
}

fn fixture(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/alerts")
        .join(name)
}

#[test]
fn healthy_generated_log_raises_nothing_at_all() {
    let dir = tempfile::tempdir().unwrap();
    let p = write(
        dir.path(),
        "ok.log",
        &generated(Scenario::Equilibration, 3000),
    );
    let r = report(&p, Some(3000), targets(Some("300K"), Some("1bar")));
    assert!(r.alerts.is_empty(), "{:#?}", r.alerts);
}

#[test]
fn nonfinite_at_the_first_bad_row() {
    let dir = tempfile::tempdir().unwrap();
    let healthy = generated(Scenario::Equilibration, 800);
    let bad = edit(&healthy, |row, f| {
        if row == 400 || row == 401 {
            f[2] = "nan".to_string();
        }
    });
    let r = report(
        &write(dir.path(), "bad.log", &bad),
        None,
        AlertArgs::default(),
    );
    let a = of_kind(&r, AlertKind::Nonfinite);
    assert_eq!(a.len(), 1, "{a:#?}");
    assert_eq!(a[0].row, Some(400));
    assert_eq!(a[0].line, Some(400 + HEADER_LINES + 1));
    assert_eq!(a[0].column.as_deref(), Some("temperature"));
    assert_eq!(a[0].severity, Severity::Critical);
    let ok = report(
        &write(dir.path(), "ok.log", &healthy),
        None,
        AlertArgs::default(),
    );
    assert!(of_kind(&ok, AlertKind::Nonfinite).is_empty());
}

#[test]
fn spike_at_its_row_only() {
    let dir = tempfile::tempdir().unwrap();
    let healthy = generated(Scenario::Equilibration, 1500);
    // The potential energy fluctuates by about 166 kJ/mol (0.4 % of 41500, the generator's
    // setting); a jump of 3000 kJ/mol (18 SD) in one row is a spike.
    let bad = edit(&healthy, |row, f| {
        if row == 900 {
            shift(f, 4, 3000.0);
        }
    });
    let r = report(
        &write(dir.path(), "spike.log", &bad),
        None,
        AlertArgs::default(),
    );
    let a = of_kind(&r, AlertKind::Spike);
    assert_eq!(a.len(), 1, "{a:#?}");
    assert_eq!(a[0].row, Some(900));
    assert_eq!(a[0].column.as_deref(), Some("potential"));
    assert!(of_kind(&r, AlertKind::Runaway).is_empty());
    let ok = report(
        &write(dir.path(), "ok.log", &healthy),
        None,
        AlertArgs::default(),
    );
    assert!(
        of_kind(&ok, AlertKind::Spike).is_empty(),
        "{:#?}",
        ok.alerts
    );
}

#[test]
fn runaway_before_the_first_nonfinite_row() {
    let dir = tempfile::tempdir().unwrap();
    let rows = 1200;
    let text = generated(Scenario::BlowUp, rows);
    let r = report(
        &write(dir.path(), "b.log", &text),
        None,
        AlertArgs::default(),
    );
    let first_nonfinite = of_kind(&r, AlertKind::Nonfinite)
        .iter()
        .filter_map(|a| a.row)
        .min()
        .unwrap();
    let first_runaway = of_kind(&r, AlertKind::Runaway)
        .iter()
        .filter_map(|a| a.row)
        .min()
        .unwrap();
    // The generator starts the exponential growth at 70 % of the rows.
    let start = rows * 7 / 10;
    assert!(first_runaway >= start, "{first_runaway} < {start}");
    assert!(
        first_runaway < first_nonfinite,
        "{first_runaway} >= {first_nonfinite}"
    );
    assert_eq!(r.status, plateau::alert::RunStatus::Unstable);
    // The same run cut before the growth: nothing.
    let calm: String = text
        .lines()
        .take((start as usize) + HEADER_LINES as usize)
        .map(|l| format!("{l}\n"))
        .collect();
    let ok = report(
        &write(dir.path(), "calm.log", &calm),
        None,
        AlertArgs::default(),
    );
    assert!(
        of_kind(&ok, AlertKind::Runaway).is_empty(),
        "{:#?}",
        ok.alerts
    );
}

#[test]
fn blow_up_demo_log_is_reported_before_its_first_nonfinite_row() {
    let p = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-logs/blow-up.log");
    let r = report(&p, None, AlertArgs::default());
    let first_nonfinite = of_kind(&r, AlertKind::Nonfinite)
        .iter()
        .filter_map(|a| a.line)
        .min()
        .unwrap();
    let first_runaway = of_kind(&r, AlertKind::Runaway)
        .iter()
        .filter_map(|a| a.line)
        .min()
        .unwrap();
    assert!(first_runaway < first_nonfinite);
}

#[test]
fn drift_of_the_conserved_energy() {
    let dir = tempfile::tempdir().unwrap();
    let text = generated(Scenario::NveDrift, 2000);
    let r = report(
        &write(dir.path(), "d.log", &text),
        Some(3000),
        AlertArgs::default(),
    );
    let a = of_kind(&r, AlertKind::Drift);
    assert_eq!(a.len(), 1, "{:#?}", r.alerts);
    assert_eq!(a[0].column.as_deref(), Some("conserved"));
    assert_eq!(a[0].severity, Severity::Warning);
    // The generator's drift: 0.4 kJ/mol per ps = 400 kJ/mol per ns.
    let slope = a[0].value.unwrap();
    assert!((slope - 400.0).abs() < 5.0, "{slope}");
    assert_eq!(a[0].unit.as_deref(), Some("kJ/mol/ns"));
    // The same NVE log with the drift taken out of the conserved and total energies.
    let flat = edit(&text, |row, f| {
        let t = row as f64; // one row per ps
        shift(f, 7, -0.4 * t);
        shift(f, 6, -0.4 * t);
    });
    let ok = report(
        &write(dir.path(), "flat.log", &flat),
        Some(3000),
        AlertArgs::default(),
    );
    assert!(
        of_kind(&ok, AlertKind::Drift).is_empty(),
        "{:#?}",
        ok.alerts
    );
}

#[test]
fn temperature_off_target_after_the_thermostat_slips() {
    let dir = tempfile::tempdir().unwrap();
    let healthy = generated(Scenario::Equilibration, 3000);
    let bad = edit(&healthy, |row, f| {
        if row >= 2000 {
            shift(f, 2, -15.0);
        }
    });
    let r = report(
        &write(dir.path(), "t.log", &bad),
        None,
        targets(Some("300K"), None),
    );
    let a = of_kind(&r, AlertKind::TemperatureOffTarget);
    assert_eq!(a.len(), 1, "{:#?}", r.alerts);
    let row = a[0].row.unwrap();
    // Raised within one window (50 rows) of the change.
    assert!((2000..2050).contains(&row), "row {row}");
    assert!(a[0].value.unwrap() < 290.0);
    let ok = report(
        &write(dir.path(), "ok.log", &healthy),
        None,
        targets(Some("300K"), None),
    );
    assert!(of_kind(&ok, AlertKind::TemperatureOffTarget).is_empty());
}

#[test]
fn temperature_schedule_is_followed_during_heating() {
    let dir = tempfile::tempdir().unwrap();
    let text = generated(Scenario::Heating, 1500);
    let p = write(dir.path(), "h.log", &text);
    // The generator ramps 10 K -> 300 K over 100 ps.
    let ok = report(&p, None, targets(Some("0ps=10K,100ps=300K"), None));
    assert!(
        of_kind(&ok, AlertKind::TemperatureOffTarget).is_empty(),
        "{:#?}",
        ok.alerts
    );
    // A wrong schedule (ramp to 350 K) is reported.
    let bad = report(&p, None, targets(Some("0ps=10K,100ps=350K"), None));
    assert_eq!(of_kind(&bad, AlertKind::TemperatureOffTarget).len(), 1);
}

#[test]
fn pressure_off_target_after_the_barostat_slips() {
    let dir = tempfile::tempdir().unwrap();
    let healthy = generated(Scenario::Equilibration, 3000);
    let bad = edit(&healthy, |row, f| {
        if row >= 2000 {
            shift(f, 3, 300.0);
        }
    });
    let r = report(
        &write(dir.path(), "p.log", &bad),
        None,
        targets(None, Some("1bar")),
    );
    let a = of_kind(&r, AlertKind::PressureOffTarget);
    assert_eq!(a.len(), 1, "{:#?}", r.alerts);
    let row = a[0].row.unwrap();
    // Raised within one off-target window of the change: the window is set in correlation
    // times so that its margin stays within half the 50 bar tolerance, which for a
    // pressure that fluctuates by hundreds of bar is hundreds of rows; the message says
    // how long ("over the last … (W rows)").
    let window: u64 = a[0]
        .message
        .split(" rows)")
        .next()
        .and_then(|s| s.rsplit('(').next())
        .and_then(|w| w.trim().parse().ok())
        .unwrap_or_else(|| panic!("no window in {:?}", a[0].message));
    assert!(window > 50, "window {window}");
    assert!(
        (2000..2000 + window).contains(&row),
        "row {row}, window {window}"
    );
    let ok = report(
        &write(dir.path(), "ok.log", &healthy),
        None,
        targets(None, Some("1atm")),
    );
    assert!(of_kind(&ok, AlertKind::PressureOffTarget).is_empty());
}

#[test]
fn fluctuation_size_of_a_suppressing_thermostat() {
    let dir = tempfile::tempdir().unwrap();
    let bad = generated(Scenario::ThermostatFailure, 2000);
    let r = report(
        &write(dir.path(), "f.log", &bad),
        Some(3000),
        AlertArgs::default(),
    );
    let a = of_kind(&r, AlertKind::FluctuationSize);
    assert_eq!(a.len(), 1, "{:#?}", r.alerts);
    assert!(a[0].message.contains("too small"));
    assert!(
        a[0].message.contains("8997"),
        "names N_df: {}",
        a[0].message
    );
    // Raised at the run's onset (the start of the tested part).
    assert_eq!(a[0].row, r.equilibration.map(|o| o.row));
    let ok = generated(Scenario::Equilibration, 2000);
    let r = report(
        &write(dir.path(), "ok.log", &ok),
        Some(3000),
        AlertArgs::default(),
    );
    assert!(of_kind(&r, AlertKind::FluctuationSize).is_empty());
    // Without N_df the test does not run (Contract).
    let r = report(
        &write(dir.path(), "f2.log", &bad),
        None,
        AlertArgs::default(),
    );
    assert!(of_kind(&r, AlertKind::FluctuationSize).is_empty());
}

#[test]
fn restart_at_the_replacing_row() {
    let r = report(&fixture("restart.log"), None, AlertArgs::default());
    let a = of_kind(&r, AlertKind::Restart);
    assert_eq!(a.len(), 1, "{:#?}", r.alerts);
    // 300 rows written, the step goes back to row 200's step: rows 200.. replaced by 100.
    assert_eq!(a[0].row, Some(200));
    assert_eq!(a[0].line, Some(302));
    assert_eq!(a[0].value, Some(100.0));
    assert_eq!(a[0].severity, Severity::Info);
    let ok = report(&fixture("healthy.log"), None, AlertArgs::default());
    assert!(ok.alerts.is_empty(), "{:#?}", ok.alerts);
}

#[test]
fn skipped_lines_info_and_warning() {
    let r = report(&fixture("skipped.log"), None, AlertArgs::default());
    let a = of_kind(&r, AlertKind::SkippedLines);
    assert_eq!(a.len(), 1, "{:#?}", r.alerts);
    assert_eq!(a[0].line, Some(52));
    assert_eq!(a[0].value, Some(2.0));
    // 2 of 402 data lines: below 1 %.
    assert_eq!(a[0].severity, Severity::Info);
    assert_eq!(r.skipped.len(), 2);
}

#[test]
fn nonfinite_fixture_points_at_its_line() {
    let r = report(&fixture("nonfinite.log"), None, AlertArgs::default());
    let a = of_kind(&r, AlertKind::Nonfinite);
    assert_eq!(a.len(), 1, "{:#?}", r.alerts);
    assert_eq!(a[0].line, Some(252));
    assert_eq!(a[0].row, Some(250));
}
