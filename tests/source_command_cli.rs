//! Runs read from a command's output, as users give them: `--source-command` (one value,
//! split into words, no shell) and `[[run]]` in plateau.toml; restarts of the command do
//! not count rows twice; options that cannot work together are refused with exit 2.
//! No timing is asserted: the commands' restarts are plateau's own back-off.

#![cfg(unix)]
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::fmt::Write as _;
use std::path::Path;
use std::time::Duration;

use assert_cmd::Command;

/// A log of `rows` rows, steps 0, 10, 20, ... with a header.
fn log_text(rows: usize) -> String {
    let mut text = String::from("# step temperature potential\n");
    for i in 0..rows {
        let _ = writeln!(
            text,
            "{} {}.{} -{}.5",
            i * 10,
            300 + i % 7,
            i % 10,
            4000 + i % 13
        );
    }
    text
}

fn plateau(dir: &Path) -> Command {
    let mut c = Command::cargo_bin("plateau").unwrap();
    c.current_dir(dir).timeout(Duration::from_secs(120));
    c
}

/// The command starts over at each restart (no `{start-byte}`): each run prints more of
/// the log from its first line, as a reconnecting reader without an offset would; the
/// restart rule replaces the rows given again, so the run ends with each row once.
#[test]
fn a_command_that_starts_over_counts_each_row_once() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("full.log"), log_text(51)).unwrap();
    // Run n (1, 2, 3, ...) prints the header and the first 20·n rows, then exits.
    let script = "n=$(cat count 2>/dev/null || echo 0); n=$((n + 1)); echo $n > count; \
                  head -n $((20 * n + 1)) full.log";
    let out = plateau(dir.path())
        .args([
            "check",
            "--follow",
            "--until",
            "500steps",
            "--source-command",
        ])
        .arg(format!("sh -c '{script}'"))
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(out.status.code().is_some_and(|c| c < 2), "{stderr}");
    let runs: u32 = std::fs::read_to_string(dir.path().join("count"))
        .unwrap()
        .trim()
        .parse()
        .unwrap();
    assert!(runs >= 3, "the command ran {runs} times: {stderr}");
    let label = format!("sh -c '{script}'");
    assert!(
        stderr.contains(&format!("{label}: finished (51 rows,")),
        "{stderr}"
    );
}

/// `[[run]]` in plateau.toml gives the command as a list (a file name with a blank stays
/// one word) and a name, used when the command line names no file.
#[test]
fn a_run_from_the_settings_file_is_followed() {
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("md log.txt");
    std::fs::write(&log, log_text(51)).unwrap();
    let toml = format!(
        "[[run]]\nname = \"rehearsal\"\ncommand = [\"tail\", \"-c\", \"+{{start-byte}}\", \"-F\", {:?}]\n",
        log.to_str().unwrap()
    );
    std::fs::write(dir.path().join("plateau.toml"), toml).unwrap();
    let out = plateau(dir.path())
        .args(["check", "--follow", "--until", "500steps"])
        .output()
        .unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(out.status.code().is_some_and(|c| c < 2), "{stderr}");
    assert!(stderr.contains("rehearsal: finished (51 rows,"), "{stderr}");
}

#[test]
fn options_that_cannot_work_are_refused() {
    let dir = tempfile::tempdir().unwrap();
    let refused = |args: &[&str], words: &str| {
        let out = plateau(dir.path()).args(args).output().unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert_eq!(out.status.code(), Some(2), "{args:?}: {stderr}");
        assert!(stderr.contains(words), "{args:?}: {stderr}");
    };
    refused(&["check", "--jobs"], "need --follow");
    refused(&["check", "--source-command", "tail -F x"], "need --follow");
    refused(&["check"], "name at least one log FILE");
    refused(&["check", "--follow"], "nothing to follow");
    refused(
        &["check", "--follow", "--source-command", "tail 'x"],
        "unclosed ' quote in --source-command",
    );
    refused(
        &["check", "--follow", "--log-glob", "*.log", "x.log"],
        "--jobs",
    );
    refused(
        &["check", "--follow", "--remote-dir", "/s", "x.log"],
        "--jobs",
    );
    refused(
        &["check", "--follow", "--jobs", "--jobs-every", "0s"],
        "positive",
    );
    std::fs::write(dir.path().join("plateau.toml"), "[[run]]\ncommand = []\n").unwrap();
    refused(&["check", "--follow"], "run");
}
