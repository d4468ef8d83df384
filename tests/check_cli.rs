//! `plateau check`: exit codes (0 healthy, 1 alerts at or above --fail-on, 2 unreadable input
//! or bad arguments, 2 wins over 1), one line per alert, the JSONL alert log, and
//! `--on-alert` never executing anything but the user's own command.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::path::{Path, PathBuf};

use assert_cmd::Command;
use plateau::alert::AlertKind;
use plateau::commands::check::hook::AlertLogLine;
use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

fn plateau(dir: &Path) -> Command {
    let mut c = Command::cargo_bin("plateau").unwrap();
    c.current_dir(dir);
    c
}

fn fixture(name: &str) -> String {
    root()
        .join("tests/fixtures/alerts")
        .join(name)
        .display()
        .to_string()
}

fn generated(dir: &Path, scenario: Scenario, style: LogStyle, rows: u64) -> String {
    let spec = ScenarioSpec::new(scenario, style, rows);
    let path = dir.join(format!("{}.{}", scenario.name(), style.extension()));
    let mut out = Vec::new();
    write_log(&spec, &mut out).unwrap();
    std::fs::write(&path, out).unwrap();
    path.display().to_string()
}

fn code(c: &mut Command) -> i32 {
    c.output().unwrap().status.code().unwrap()
}

#[test]
fn healthy_logs_exit_0_without_warnings() {
    let dir = tempfile::tempdir().unwrap();
    // The bundled example, and generated healthy scenarios in several layouts, with
    // targets and degrees of freedom given so every test runs.
    let demo = root().join("demo-logs/equilibration.log");
    let out = plateau(dir.path())
        .arg("check")
        .arg(&demo)
        .args([
            "--atoms",
            "3000",
            "--target-temperature",
            "300K",
            "--target-pressure",
            "1bar",
        ])
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stdout)
    );
    assert!(
        out.stdout.is_empty(),
        "{}",
        String::from_utf8_lossy(&out.stdout)
    );
    for style in [
        LogStyle::Whitespace,
        LogStyle::Csv,
        LogStyle::Tab,
        LogStyle::Fortran,
    ] {
        for scenario in [Scenario::Equilibration, Scenario::Stalled] {
            let f = generated(dir.path(), scenario, style, 2500);
            let out = plateau(dir.path())
                .args([
                    "check",
                    &f,
                    "--atoms",
                    "3000",
                    "--target-temperature",
                    "300K",
                ])
                .args(["--target-pressure", "1bar"])
                .output()
                .unwrap();
            assert_eq!(
                out.status.code(),
                Some(0),
                "{f}: {}",
                String::from_utf8_lossy(&out.stdout)
            );
        }
        let f = generated(dir.path(), Scenario::Heating, style, 2500);
        let out = plateau(dir.path())
            .args(["check", &f, "--atoms", "3000"])
            .args(["--target-temperature", "0ps=10K,100ps=300K"])
            .output()
            .unwrap();
        assert_eq!(
            out.status.code(),
            Some(0),
            "{f}: {}",
            String::from_utf8_lossy(&out.stdout)
        );
    }
}

#[test]
fn alerting_log_exits_1_with_one_line_per_alert() {
    let dir = tempfile::tempdir().unwrap();
    let f = generated(dir.path(), Scenario::NveDrift, LogStyle::Whitespace, 2000);
    let out = plateau(dir.path()).args(["check", &f]).output().unwrap();
    assert_eq!(out.status.code(), Some(1));
    let stdout = String::from_utf8(out.stdout).unwrap();
    let lines: Vec<&str> = stdout.lines().collect();
    assert_eq!(lines.len(), 1, "{stdout}");
    assert!(
        lines[0].starts_with(&format!("{f}: warning  drift [conserved]")),
        "{stdout}"
    );
    // Only critical fails: the drift warning is not enough.
    assert_eq!(
        code(plateau(dir.path()).args(["check", &f, "--fail-on", "critical"])),
        0
    );
    // A critical alert fails both ways.
    let b = generated(dir.path(), Scenario::BlowUp, LogStyle::Whitespace, 1200);
    assert_eq!(
        code(plateau(dir.path()).args(["check", &b, "--fail-on", "critical"])),
        1
    );
}

#[test]
fn info_alerts_never_fail() {
    let dir = tempfile::tempdir().unwrap();
    let out = plateau(dir.path())
        .args(["check", &fixture("restart.log")])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(0));
    assert!(String::from_utf8(out.stdout)
        .unwrap()
        .contains("info     restart"));
}

#[test]
fn unreadable_input_exits_2_and_wins_over_alerts() {
    let dir = tempfile::tempdir().unwrap();
    let missing = dir.path().join("missing.log").display().to_string();
    assert_eq!(code(plateau(dir.path()).args(["check", &missing])), 2);
    let b = generated(dir.path(), Scenario::BlowUp, LogStyle::Whitespace, 1200);
    let out = plateau(dir.path())
        .args(["check", &b, &missing])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    // The readable file was still checked.
    assert!(String::from_utf8(out.stdout).unwrap().contains("runaway"));
    // A folder is not a log.
    assert_eq!(code(plateau(dir.path()).args(["check", "."])), 2);
}

#[test]
fn bad_arguments_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    let ok = fixture("healthy.log");
    for args in [
        vec!["check"],
        vec!["check", &ok, "--fail-on", "sometimes"],
        vec!["check", &ok, "--threshold", "spike-size=3"],
        vec!["check", &ok, "--threshold", "drift-warning"],
        vec!["check", &ok, "--target-temperature", "hot"],
        vec!["check", &ok, "--target-temperature", "50ps=300K,10ps=10K"],
        vec!["check", &ok, "--stall-after", "soon"],
        vec!["check", &ok, "--pid", "1"],
        vec!["check", &ok, "--on-alert", "'unclosed"],
    ] {
        let out = plateau(dir.path()).args(&args).output().unwrap();
        assert_eq!(
            out.status.code(),
            Some(2),
            "{args:?}: {}",
            String::from_utf8_lossy(&out.stderr)
        );
    }
}

#[test]
fn thresholds_from_plateau_toml_and_unknown_keys_rejected() {
    let dir = tempfile::tempdir().unwrap();
    let f = generated(dir.path(), Scenario::NveDrift, LogStyle::Whitespace, 2000);
    // A drift warning level above the generator's 0.017 k_B·T/ns/dof: no alert.
    std::fs::write(
        dir.path().join("plateau.toml"),
        "[alerts]\ndrift-warning = 0.05\n",
    )
    .unwrap();
    assert_eq!(code(plateau(dir.path()).args(["check", &f])), 0);
    // The command line wins over the file.
    assert_eq!(
        code(plateau(dir.path()).args(["check", &f, "--threshold", "drift_warning=0.01"])),
        1
    );
    std::fs::write(
        dir.path().join("plateau.toml"),
        "[alerts]\ndrift-warn = 0.05\n",
    )
    .unwrap();
    let out = plateau(dir.path()).args(["check", &f]).output().unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8_lossy(&out.stderr).contains("drift-warn"));
}

#[test]
fn alert_log_appends_one_json_line_per_alert() {
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("alerts.jsonl");
    std::fs::write(&log, "").unwrap();
    for _ in 0..2 {
        plateau(dir.path())
            .args(["check", &fixture("nonfinite.log"), "--alert-log"])
            .arg(&log)
            .assert()
            .code(1);
    }
    let text = std::fs::read_to_string(&log).unwrap();
    let lines: Vec<AlertLogLine> = text
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(lines.len(), 2, "appended, not truncated");
    assert_eq!(lines[0].alert.kind, AlertKind::Nonfinite);
    assert_eq!(lines[0].alert.row, Some(250));
    assert!(lines[0].file.ends_with("nonfinite.log"));
}

/// A log whose column name (and so the alert message) is full of shell syntax.
fn hostile_log(dir: &Path) -> String {
    let name = "temp $(touch pwned1); touch pwned2 `touch pwned3` | x & y";
    let mut text = format!("\"step\",\"time [ps]\",\"{name}\"\n");
    for i in 0..100 {
        let v = if i == 60 {
            "nan".to_string()
        } else {
            format!("{:.1}", 300.0 + (i % 7) as f64)
        };
        text.push_str(&format!("{},{}.0,{v}\n", i * 10, i));
    }
    let p = dir.join("hostile.csv");
    std::fs::write(&p, text).unwrap();
    p.display().to_string()
}

#[test]
fn on_alert_passes_log_text_only_in_environment_variables() {
    let dir = tempfile::tempdir().unwrap();
    let f = hostile_log(dir.path());
    // The user's own shell line: it prints the variables, quoted, into a file.
    let out = plateau(dir.path())
        .args(["check", &f, "--on-alert"])
        .arg("sh -c 'printf \"%s|%s|%s|%s\\n\" \"$PLATEAU_ALERT_KIND\" \"$PLATEAU_ALERT_COLUMN\" \"$PLATEAU_ALERT_ROW\" \"$PLATEAU_ALERT_MESSAGE\" >> seen.txt'")
        .output()
        .unwrap();
    assert_eq!(
        out.status.code(),
        Some(1),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let seen = std::fs::read_to_string(dir.path().join("seen.txt")).unwrap();
    assert!(
        seen.starts_with("nonfinite|temp $(touch pwned1); touch pwned2 `touch pwned3` | x & y|60|"),
        "{seen}"
    );
    for p in ["pwned1", "pwned2", "pwned3", "y"] {
        assert!(
            !dir.path().join(p).exists(),
            "{p} was created: log text was executed"
        );
    }
}

#[test]
fn on_alert_without_a_shell_runs_only_the_given_program() {
    let dir = tempfile::tempdir().unwrap();
    let f = hostile_log(dir.path());
    // No shell: `$(touch pwned4)` is a literal argument of touch, so touch creates a file
    // with exactly that odd name and nothing else.
    plateau(dir.path())
        .args(["check", &f, "--on-alert", "touch marker '$(touch pwned4)'"])
        .assert()
        .code(1);
    assert!(dir.path().join("marker").exists());
    assert!(dir.path().join("$(touch pwned4)").exists());
    assert!(!dir.path().join("pwned4").exists());
}

#[test]
fn failing_on_alert_command_is_reported_not_fatal() {
    let dir = tempfile::tempdir().unwrap();
    let f = hostile_log(dir.path());
    let out = plateau(dir.path())
        .args(["check", &f, "--on-alert", "false"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&out.stderr).contains("--on-alert command exited"));
    let out = plateau(dir.path())
        .args(["check", &f, "--on-alert", "/no/such/program"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    assert!(String::from_utf8_lossy(&out.stderr).contains("could not be started"));
}
