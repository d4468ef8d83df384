//! `plateau watch` in a pseudo-terminal, as a user runs it: the screen is read through a
//! terminal emulator (vt100), rows appended by another thread reach the screen, `q` quits,
//! and the terminal's modes are given back (raw mode off, alternate screen left, cursor
//! shown). SIGTERM and SIGHUP restore them too. Nothing asserts on timing: waits have a
//! generous limit and only a failing run reaches it.

#![cfg(unix)]
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::fs::OpenOptions;
use std::io::Write;
use std::thread;
use std::time::Duration;

#[path = "support/pty.rs"]
mod pty;

use pty::Session;

use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

fn log_lines(rows: u64) -> Vec<String> {
    let spec = ScenarioSpec::new(Scenario::Equilibration, LogStyle::Whitespace, rows);
    let mut text = Vec::new();
    write_log(&spec, &mut text).unwrap();
    String::from_utf8(text)
        .unwrap()
        .lines()
        .map(|l| format!("{l}\n"))
        .collect()
}

/// The "rows" value of the summary panel.
fn rows_shown(screen: &vt100::Screen) -> Option<u64> {
    let text = screen.contents();
    let line = text.lines().find(|l| l.contains("│ rows"))?;
    let after = line.split("│ rows").nth(1)?;
    after.trim().replace(' ', "").parse().ok()
}

#[test]
fn rows_appended_by_another_writer_reach_the_screen_and_q_restores_the_terminal() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("md.log");
    let lines = log_lines(700);
    let header = lines.iter().take_while(|l| l.starts_with('#')).count();
    std::fs::write(&path, lines[..header + 300].concat()).unwrap();

    let mut s = Session::start(&["watch", "md.log"], dir.path());
    // The row count is shown as soon as the rows are read; the chart once they are
    // analysed (a moment later): wait for both.
    s.wait_for("300 rows analysed on screen", |sc| {
        rows_shown(sc) == Some(300) && sc.contents().contains("1/")
    });
    assert!(s.screen.screen().alternate_screen());
    assert!(!s.cooked(), "raw mode while running");
    let first = s.contents();
    assert!(first.contains("md.log") && first.contains("1/"), "{first}");

    // Another thread writes 400 more rows, in pieces.
    let more: Vec<String> = lines[header + 300..].to_vec();
    let writer_path = path.clone();
    let writer = thread::spawn(move || {
        let mut f = OpenOptions::new().append(true).open(writer_path).unwrap();
        for piece in more.chunks(50) {
            f.write_all(piece.concat().as_bytes()).unwrap();
            f.flush().unwrap();
            thread::sleep(Duration::from_millis(50));
        }
    });
    writer.join().unwrap();
    // The new rows reach the summary, and the chart marks the onset (or says there is
    // none yet) once they are analysed.
    s.wait_for("700 rows analysed on screen", |sc| {
        let text = sc.contents();
        rows_shown(sc) == Some(700) && (text.contains("onset") || text.contains("not equilibrated"))
    });

    // Help, then quit.
    s.writer.write_all(b"?").unwrap();
    s.wait_for("help", |sc| sc.contents().contains("any key closes"));
    s.writer.write_all(b"q").unwrap();
    s.wait_for("help closed", |sc| {
        !sc.contents().contains("any key closes")
    });
    s.writer.write_all(b"q").unwrap();
    assert_eq!(s.wait_exit(), 0);
    s.assert_restored();
}

#[test]
fn sigterm_and_sighup_restore_the_terminal() {
    let dir = tempfile::tempdir().unwrap();
    let lines = log_lines(200);
    std::fs::write(dir.path().join("a.log"), lines.concat()).unwrap();
    std::fs::write(dir.path().join("b.log"), lines.concat()).unwrap();
    for (signal, name) in [(libc::SIGTERM, "SIGTERM"), (libc::SIGHUP, "SIGHUP")] {
        let mut s = Session::start(&["watch", "*.log"], dir.path());
        s.wait_for("the overview", |sc| {
            sc.contents().contains("plateau watch · 2 runs")
        });
        let pid = s.child.process_id().unwrap() as libc::pid_t;
        assert_eq!(unsafe { libc::kill(pid, signal) }, 0);
        assert_eq!(s.wait_exit(), 128 + signal as u32, "{name}");
        s.assert_restored();
    }
}

#[test]
fn without_a_terminal_it_refuses_and_names_check_follow() {
    let out = assert_cmd::Command::cargo_bin("plateau")
        .unwrap()
        .args(["watch", "whatever.log"])
        .timeout(Duration::from_secs(60))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("plateau check --follow"), "{err}");
}
