//! `plateau replay`: the destination receives exactly the source's bytes, at about the
//! requested pace (checked loosely: never faster than the schedule; no upper bound, a busy
//! machine may be slower).

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::path::{Path, PathBuf};
use std::process::Command as Process;
use std::time::{Duration, Instant};

use assert_cmd::cargo::CommandCargoExt;
use assert_cmd::Command;
use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

fn generated(dir: &Path, scenario: Scenario, style: LogStyle, rows: u64) -> PathBuf {
    let spec = ScenarioSpec::new(scenario, style, rows);
    let path = dir.join(format!("{}.{}", scenario.name(), style.extension()));
    let mut out = Vec::new();
    write_log(&spec, &mut out).unwrap();
    std::fs::write(&path, out).unwrap();
    path
}

#[test]
fn replay_writes_the_exact_bytes_at_the_pace() {
    let dir = tempfile::tempdir().unwrap();
    // A chatty log (free text between tagged rows) that ends in half a row.
    let source = generated(dir.path(), Scenario::Stalled, LogStyle::Tagged, 120);
    let expected = std::fs::read(&source).unwrap();
    let destination = dir.path().join("live.log");
    let started = Instant::now();
    let mut child = Process::cargo_bin("plateau")
        .unwrap()
        .arg("replay")
        .arg(&source)
        .arg(&destination)
        .args(["--rows-per-second", "60"])
        .spawn()
        .unwrap();
    // While it runs, the destination only ever holds a beginning of the source.
    let mut partial_seen = false;
    while child.try_wait().unwrap().is_none() {
        if let Ok(now) = std::fs::read(&destination) {
            assert!(expected.starts_with(&now), "not a prefix of the source");
            partial_seen |= !now.is_empty() && now.len() < expected.len();
        }
        std::thread::sleep(Duration::from_millis(20));
        assert!(started.elapsed() < Duration::from_secs(120), "replay hangs");
    }
    let elapsed = started.elapsed();
    assert!(child.wait().unwrap().success());
    assert_eq!(std::fs::read(&destination).unwrap(), expected);
    // 120 rows at 60 a second: the last row is due 119/60 s after the first.
    assert!(
        elapsed >= Duration::from_secs_f64(119.0 / 60.0),
        "{elapsed:?}"
    );
    assert!(
        partial_seen,
        "the destination never held a part of the source"
    );
}

#[test]
fn replay_to_standard_output() {
    let dir = tempfile::tempdir().unwrap();
    let source = generated(dir.path(), Scenario::Heating, LogStyle::Csv, 50);
    let out = Command::cargo_bin("plateau")
        .unwrap()
        .arg("replay")
        .arg(&source)
        .arg("-")
        .args(["--rows-per-second", "1000"])
        .timeout(Duration::from_secs(60))
        .output()
        .unwrap();
    assert!(out.status.success());
    assert_eq!(out.stdout, std::fs::read(&source).unwrap());
}

#[test]
fn replay_never_overwrites_and_names_what_is_wrong() {
    let dir = tempfile::tempdir().unwrap();
    let source = generated(dir.path(), Scenario::Equilibration, LogStyle::Whitespace, 5);
    let before = std::fs::read(&source).unwrap();
    // Onto itself, or onto any existing file: refused, nothing changed.
    Command::cargo_bin("plateau")
        .unwrap()
        .arg("replay")
        .arg(&source)
        .arg(&source)
        .assert()
        .code(2)
        .stderr(predicates::str::contains(
            "exists; replay writes a new file",
        ));
    assert_eq!(std::fs::read(&source).unwrap(), before);
    Command::cargo_bin("plateau")
        .unwrap()
        .arg("replay")
        .arg(dir.path().join("missing.log"))
        .arg(dir.path().join("out.log"))
        .assert()
        .code(2)
        .stderr(predicates::str::contains("missing.log"));
    Command::cargo_bin("plateau")
        .unwrap()
        .arg("replay")
        .arg(&source)
        .arg(dir.path().join("out.log"))
        .args(["--rows-per-second", "0"])
        .assert()
        .code(2)
        .stderr(predicates::str::contains("rows per second"));
}
