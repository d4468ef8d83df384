//! Attacks through the log and the settings file:
//! - `--on-alert` never passes log content through a shell: a column named
//!   `$(touch pwned)`, `` `touch pwned2` `` or `; rm -f victim` reaches the command only as
//!   the literal text of `PLATEAU_ALERT_COLUMN`, and nothing runs;
//! - a settings file cannot make plateau write anywhere: it has no key naming an output
//!   path (unknown keys are refused, with the file named), so the only files plateau writes
//!   are those the user names on the command line;
//! - plateau never writes to, locks or truncates a log it follows: bytes, size,
//!   modification and change times are the same after a `check --follow` session, and no
//!   lock on the file appears in `/proc/locks` while it runs.
//!
//! Shell semantics (command substitution, `;`) are POSIX sh's, from memory.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::path::Path;
use std::process::{Output, Stdio};
use std::time::Duration;

use assert_cmd::Command;

fn plateau(dir: &Path) -> Command {
    let mut c = Command::cargo_bin("plateau").unwrap();
    c.current_dir(dir).timeout(Duration::from_secs(120));
    c
}

fn stderr(out: &Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

/// A CSV log (commas keep spaces inside names) whose second column has `name` and turns
/// non-finite at row 200 (a critical alert naming that column).
fn log_with_column(name: &str) -> String {
    let mut s = format!("step,{name},temperature\n");
    for i in 0..300u32 {
        let v = if i == 200 {
            "nan".to_string()
        } else {
            format!("{}", 1.0 + f64::from(i % 5) * 0.01)
        };
        s.push_str(&format!("{i},{v},{}\n", 300.0 + f64::from(i % 3) * 0.1));
    }
    s
}

#[test]
fn on_alert_never_runs_log_text_through_a_shell() {
    let names = [
        "$(touch pwned) x",
        "`touch pwned2` y",
        "x; rm -f victim",
        "$(rm -f victim) z",
        "a' && touch pwned3 && echo 'b",
        "c \" ; touch pwned4 ; \" d",
    ];
    for (i, name) in names.iter().enumerate() {
        let dir = tempfile::tempdir().unwrap();
        std::fs::write(dir.path().join("victim"), b"keep me").unwrap();
        let log = format!("run{i}.log");
        std::fs::write(dir.path().join(&log), log_with_column(name)).unwrap();
        // The name as plateau reads it from the header (the CSV reader's quoting rules).
        let view = plateau(dir.path())
            .args(["columns", "--format", "json", &log])
            .output()
            .unwrap();
        let view: serde_json::Value = serde_json::from_slice(&view.stdout).unwrap();
        let read = view["segments"][0]["columns"][1]["name"]
            .as_str()
            .unwrap()
            .to_string();
        assert!(
            ["$(", "`", ";", "&&"].iter().any(|m| read.contains(m)),
            "the hostile part is in the name: {read:?}"
        );
        // The user's own command: a shell only because the user wrote one; the column
        // reaches it as a variable's value, which the shell does not evaluate.
        let out = plateau(dir.path())
            .args([
                "check",
                "--on-alert",
                "sh -c 'printenv PLATEAU_ALERT_COLUMN >> seen.txt'",
                &log,
            ])
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
        let seen = std::fs::read_to_string(dir.path().join("seen.txt")).unwrap();
        assert!(
            seen.lines().any(|l| l == read),
            "the hook got the name literally: {seen:?} vs {read:?}"
        );
        for marker in ["pwned", "pwned2", "pwned3", "pwned4"] {
            assert!(
                !dir.path().join(marker).exists(),
                "{name}: {marker} created"
            );
        }
        assert_eq!(
            std::fs::read(dir.path().join("victim")).unwrap(),
            b"keep me",
            "{name}"
        );
    }
}

#[test]
fn on_alert_command_is_run_without_a_shell() {
    // Without `sh -c`, shell syntax in the user's own option is not interpreted either:
    // `;` and `$(...)` are plain arguments to printf.
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("run.log"), log_with_column("energy")).unwrap();
    let out = plateau(dir.path())
        .args([
            "check",
            "--on-alert",
            "touch made ; touch pwned $(touch pwned2)",
            "run.log",
        ])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
    // touch received the words as file names: all of them exist as literal names,
    // and no command ran after `;`.
    for literal in ["made", ";", "pwned", "$(touch", "pwned2)"] {
        assert!(dir.path().join(literal).exists(), "{literal}");
    }
    assert!(!dir.path().join("pwned2").exists());
}

#[test]
fn settings_file_cannot_name_an_output_path() {
    let dir = tempfile::tempdir().unwrap();
    let outside = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("run.log"), log_with_column("energy")).unwrap();
    let target = outside.path().join("written");
    for key in [
        "alert-log",
        "report-dir",
        "svg",
        "output",
        "on-alert",
        "log-file",
    ] {
        let toml = format!("{key} = \"{}\"\n", target.display());
        std::fs::write(dir.path().join("plateau.toml"), &toml).unwrap();
        let before: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
        for command in ["report", "check"] {
            let out = plateau(dir.path())
                .args([command, "run.log"])
                .output()
                .unwrap();
            assert_eq!(out.status.code(), Some(2), "{key}: {}", stderr(&out));
            let err = stderr(&out);
            assert!(err.contains("plateau.toml") && err.contains(key), "{err}");
        }
        assert!(!target.exists(), "{key}");
        assert_eq!(std::fs::read_dir(outside.path()).unwrap().count(), 0);
        assert_eq!(
            std::fs::read_dir(dir.path()).unwrap().count(),
            before.len(),
            "{key}: nothing new in the working folder"
        );
    }
    // The same keys inside a named layout are refused too.
    let toml = format!("[layouts.x]\nalert-log = \"{}\"\n", target.display());
    std::fs::write(dir.path().join("plateau.toml"), toml).unwrap();
    let out = plateau(dir.path())
        .args(["report", "run.log"])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2), "{}", stderr(&out));
    assert!(!target.exists());
}

/// Bytes, size, modification time and change time of `path` (the change time moves on any
/// write, truncation, chmod or rename of the file).
#[cfg(unix)]
fn fingerprint(path: &Path) -> (Vec<u8>, u64, i64, i64, i64, i64) {
    use std::os::unix::fs::MetadataExt;
    let m = std::fs::metadata(path).unwrap();
    (
        std::fs::read(path).unwrap(),
        m.size(),
        m.mtime(),
        m.mtime_nsec(),
        m.ctime(),
        m.ctime_nsec(),
    )
}

/// Whether `/proc/locks` lists a lock on the inode of `path`.
#[cfg(target_os = "linux")]
fn locked(path: &Path) -> bool {
    use std::os::unix::fs::MetadataExt;
    let ino = std::fs::metadata(path).unwrap().ino();
    let locks = std::fs::read_to_string("/proc/locks").unwrap_or_default();
    locks.lines().any(|l| {
        l.split_whitespace()
            .nth(5)
            .and_then(|dev_ino| dev_ino.rsplit(':').next())
            .and_then(|i| i.parse::<u64>().ok())
            == Some(ino)
    })
}

#[cfg(target_os = "linux")]
#[test]
fn a_followed_file_is_never_written_locked_or_truncated() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("run.log");
    std::fs::write(&path, log_with_column("energy")).unwrap();
    let before = fingerprint(&path);
    // A process whose end ends the watch (--pid).
    let mut sleeper = std::process::Command::new("sleep")
        .arg("4")
        .spawn()
        .unwrap();
    let child = std::process::Command::new(env!("CARGO_BIN_EXE_plateau"))
        .current_dir(dir.path())
        .args([
            "check",
            "--follow",
            "--alert-log",
            "alerts.jsonl",
            "--pid",
            &sleeper.id().to_string(),
            "run.log",
        ])
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut seen_lock = false;
    while sleeper.try_wait().unwrap().is_none() {
        seen_lock |= locked(&path);
        std::thread::sleep(Duration::from_millis(100));
    }
    let out = child.wait_with_output().unwrap();
    assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
    assert!(!seen_lock, "a lock on the followed file");
    assert!(fingerprint(&path) == before, "the followed file changed");
    // The alert log, which the user named, was written.
    assert!(std::fs::read_to_string(dir.path().join("alerts.jsonl"))
        .unwrap()
        .contains("nonfinite"));
}
