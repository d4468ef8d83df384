//! A log cannot drive the user's terminal: column names, units, free text, skipped-line
//! excerpts, alert messages and file names that carry terminal sequences (`ESC ] 0 ; title
//! BEL` sets the window title, `ESC [ 2 J` clears the screen), a carriage return or NUL
//! are shown escaped in every output: `columns`, `report` (text, markdown, JSON), `check`
//! (alert lines, summary, errors), `check --follow`. JSON keeps the exact text (it parses
//! back to it). The sequences are those of ECMA-48 (control functions) and the xterm
//! control sequences document (OSC 0: set the title), from memory.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::path::Path;
use std::process::Output;
use std::time::Duration;

use assert_cmd::Command;

const TITLE: &str = "\u{1b}]0;pwned\u{7}";
const CLEAR: &str = "\u{1b}[2J";

fn plateau(dir: &Path) -> Command {
    let mut c = Command::cargo_bin("plateau").unwrap();
    c.current_dir(dir).timeout(Duration::from_secs(120));
    c
}

/// A log with hostile text in a column name, a unit, free text and a skipped line, and a
/// non-finite value (an alert whose message names the hostile column).
fn hostile_log() -> String {
    let mut s = String::new();
    s.push_str(&format!("note {TITLE} from the writer{CLEAR}\r\n"));
    s.push_str(&format!(
        "step temp{TITLE}erature(K) press\u{8}\0ure(bar) energy{CLEAR}\n"
    ));
    for i in 0..400u32 {
        let t = 300.0 + f64::from((i * 7919) % 13) * 0.1;
        let e = -1000.0 + f64::from((i * 104_729) % 17) * 0.2;
        if i == 250 {
            s.push_str(&format!("{i} nan 1.0 {e}\n"));
        } else if i == 260 {
            s.push_str(&format!("{i} 30{CLEAR}0 {TITLE} x\0\n"));
        } else {
            s.push_str(&format!("{i} {t} 1.0 {e}\n"));
        }
    }
    s
}

/// No control character but the line break, no C1 control, no invisible format character.
fn assert_inert(what: &str, bytes: &[u8]) {
    let text = String::from_utf8_lossy(bytes);
    for (i, c) in text.char_indices() {
        assert!(
            c == '\n' || !::plateau::text::needs_escape(c),
            "{what}: raw {c:?} at byte {i}:\n{text}"
        );
    }
}

fn inert_run(what: &str, out: &Output) {
    assert!(
        !String::from_utf8_lossy(&out.stderr).contains("panicked"),
        "{what}"
    );
    assert_inert(&format!("{what} (stdout)"), &out.stdout);
    assert_inert(&format!("{what} (stderr)"), &out.stderr);
}

fn setup() -> tempfile::TempDir {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("run.log"), hostile_log()).unwrap();
    dir
}

#[test]
fn columns_text_and_json_are_inert() {
    let dir = setup();
    let out = plateau(dir.path())
        .args(["columns", "run.log"])
        .output()
        .unwrap();
    inert_run("columns", &out);
    let text = String::from_utf8(out.stdout).unwrap();
    assert!(text.contains("temp\\x1b]0;pwned\\x07erature"), "{text}");
    assert!(text.contains("press\\x08\\x00ure"), "{text}");

    let out = plateau(dir.path())
        .args(["columns", "--format", "json", "run.log"])
        .output()
        .unwrap();
    inert_run("columns json", &out);
    let view: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    let names: Vec<String> = view["segments"][0]["columns"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["name"].as_str().unwrap().to_string())
        .collect();
    assert!(
        names.contains(&format!("temp{TITLE}erature")),
        "JSON keeps the exact name: {names:?}"
    );
}

#[test]
fn report_in_every_format_is_inert() {
    let dir = setup();
    for format in ["text", "markdown", "json"] {
        let out = plateau(dir.path())
            .args(["report", "--format", format, "run.log"])
            .output()
            .unwrap();
        inert_run(&format!("report {format}"), &out);
        assert!(out.status.success(), "{format}");
        let text = String::from_utf8(out.stdout).unwrap();
        if format == "json" {
            let report: serde_json::Value = serde_json::from_str(&text).unwrap();
            assert!(
                report["columns"]
                    .as_array()
                    .unwrap()
                    .iter()
                    .any(|c| c["name"] == format!("temp{TITLE}erature")),
                "{report}"
            );
        } else {
            assert!(text.contains("temp\\x1b]0;pwned\\x07erature"), "{text}");
            assert!(text.contains("\\x1b[2J"), "{text}");
        }
    }
}

#[test]
fn check_alert_lines_summary_and_errors_are_inert() {
    let dir = setup();
    let evil = format!("evil{CLEAR}.log");
    std::fs::write(dir.path().join(&evil), hostile_log()).unwrap();
    let missing = format!("gone{TITLE}.log");
    let out = plateau(dir.path())
        .args(["check", "run.log"])
        .arg(&evil)
        .arg(&missing)
        .output()
        .unwrap();
    inert_run("check", &out);
    assert_eq!(out.status.code(), Some(2), "the missing file");
    let stdout = String::from_utf8(out.stdout).unwrap();
    assert!(
        stdout.contains("[temp\\x1b]0;pwned\\x07erature]"),
        "{stdout}"
    );
    assert!(stdout.contains("evil\\x1b[2J.log: "), "{stdout}");
    let stderr = String::from_utf8(out.stderr).unwrap();
    assert!(stderr.contains("gone\\x1b]0;pwned\\x07.log"), "{stderr}");
}

#[test]
fn check_follow_is_inert() {
    let dir = setup();
    let out = plateau(dir.path())
        .args(["check", "--follow", "-"])
        .write_stdin(hostile_log())
        .output()
        .unwrap();
    inert_run("check --follow", &out);
    assert_eq!(out.status.code(), Some(1));
    let stdout = String::from_utf8(out.stdout).unwrap();
    assert!(stdout.contains("nonfinite"), "{stdout}");
}
