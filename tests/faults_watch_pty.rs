//! `plateau watch` under signals and hostile text, in a pseudo-terminal read through a
//! terminal emulator (vt100), with the helpers of `tests/support/pty.rs`:
//! - SIGTSTP sent from outside stops the dashboard with the terminal given back (cooked
//!   mode, alternate screen left, cursor shown); SIGCONT sets the dashboard up again and
//!   redraws it; SIGINT then ends it with 128 + 2 and a restored terminal;
//! - a log whose column names and free text carry terminal sequences (OSC 0 sets the
//!   window title, `ESC [ 2 J` clears the screen; xterm control sequences, from memory)
//!   never gets them to the terminal: the raw bytes plateau writes do not hold them.
//!
//! Nothing asserts on timing: waits have a generous limit and only a failing run reaches it.

#![cfg(unix)]
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::fs::OpenOptions;
use std::io::Write;
use std::thread;
use std::time::{Duration, Instant};

#[path = "support/pty.rs"]
mod pty;

use pty::{Session, PATIENCE};

use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

/// The process state letter of `/proc/PID/stat` (`T`: stopped).
fn state(pid: u32) -> char {
    let stat = std::fs::read_to_string(format!("/proc/{pid}/stat")).unwrap();
    let after = stat.rsplit(')').next().unwrap();
    after.trim_start().chars().next().unwrap()
}

fn wait_state(pid: u32, want: char) {
    let deadline = Instant::now() + PATIENCE;
    while state(pid) != want {
        assert!(Instant::now() < deadline, "state {want} not reached");
        thread::sleep(Duration::from_millis(20));
    }
}

fn generated_log(rows: u64) -> String {
    let spec = ScenarioSpec::new(Scenario::Equilibration, LogStyle::Whitespace, rows);
    let mut text = Vec::new();
    write_log(&spec, &mut text).unwrap();
    String::from_utf8(text).unwrap()
}

#[test]
fn sigtstp_gives_the_terminal_back_and_sigcont_takes_it_again() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("md.log"), generated_log(300)).unwrap();
    let mut s = Session::start(&["watch", "md.log"], dir.path());
    s.wait_for("the run on screen", |sc| sc.contents().contains("md.log"));
    assert!(!s.cooked(), "raw mode while running");
    let pid = s.child.process_id().unwrap();

    // SAFETY: signalling our own child.
    assert_eq!(unsafe { libc::kill(pid as libc::pid_t, libc::SIGTSTP) }, 0);
    wait_state(pid, 'T');
    // Read what it wrote before it stopped: the restore.
    s.drain(Duration::from_millis(300));
    s.assert_restored();

    // SAFETY: as above.
    assert_eq!(unsafe { libc::kill(pid as libc::pid_t, libc::SIGCONT) }, 0);
    s.wait_for("the dashboard again", |sc| {
        sc.alternate_screen() && sc.contents().contains("md.log")
    });
    let deadline = Instant::now() + PATIENCE;
    while s.cooked() {
        assert!(Instant::now() < deadline, "raw mode not set again");
        thread::sleep(Duration::from_millis(20));
    }
    // Appended rows still arrive after the stop.
    let mut f = OpenOptions::new()
        .append(true)
        .open(dir.path().join("md.log"))
        .unwrap();
    let more = generated_log(400);
    let extra: String = more
        .lines()
        .skip(300 + more.lines().take_while(|l| l.starts_with('#')).count())
        .map(|l| format!("{l}\n"))
        .collect();
    f.write_all(extra.as_bytes()).unwrap();
    drop(f);

    // SAFETY: as above.
    assert_eq!(unsafe { libc::kill(pid as libc::pid_t, libc::SIGINT) }, 0);
    assert_eq!(s.wait_exit(), 128 + libc::SIGINT as u32);
    s.assert_restored();
}

#[test]
fn terminal_sequences_in_a_log_never_reach_the_terminal() {
    let dir = tempfile::tempdir().unwrap();
    let mut log = String::from("banner \u{1b}]0;pwned\u{7} zq\u{1b}[2J\n");
    log.push_str("step temp\u{1b}]0;pwned\u{7}(K) zq\u{1b}[2J(kJ/mol)\n");
    for i in 0..300u32 {
        let t = 300.0 + f64::from((i * 7919) % 13) * 0.1;
        let v = if i == 200 {
            "nan".to_string()
        } else {
            format!("{t}")
        };
        log.push_str(&format!("{i} {v} {}\n", -100.0 - f64::from(i % 7)));
    }
    std::fs::write(dir.path().join("evil.log"), log).unwrap();
    let mut s = Session::start(&["watch", "evil.log"], dir.path());
    s.wait_for("the run on screen", |sc| sc.contents().contains("evil.log"));
    // Open the run (its quantities, named after the hostile columns) and its alerts.
    s.writer.write_all(b"\r").unwrap();
    s.wait_for("the run's quantities", |sc| sc.contents().contains("\\x1b"));
    s.writer.write_all(b"q").unwrap();
    let _ = s.wait_exit();
    let raw = String::from_utf8_lossy(&s.raw);
    assert!(
        !raw.contains("\u{1b}]0;pwned"),
        "the title sequence reached the terminal"
    );
    // The dashboard clears the screen itself: the log's clear is the one after its name.
    assert!(
        !raw.contains("zq\u{1b}"),
        "the clear sequence reached the terminal"
    );
    assert!(!raw.contains("pwned\u{7}"), "the bell reached the terminal");
    assert!(raw.contains("zq\\x1b[2J"), "the name is shown escaped");
}
