//! `plateau demo` in a pseudo-terminal, as a new user runs it: the overview shows several
//! different statuses (the standard demo writes healthy, settling, drifting, blowing-up and
//! stalling runs), `q` quits, and the temporary folder is gone with the terminal's modes
//! given back; SIGTERM cleans up as well. Without a terminal it refuses; an unknown
//! scenario is refused with the list of names. Nothing asserts on timing: waits have a
//! generous limit (the product's ten seconds is shown by `tests/demo_live.rs`, replaying
//! the schedule without waiting) and only a failing run reaches it.

#![cfg(unix)]
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::collections::BTreeSet;
use std::io::Write;
use std::path::Path;
use std::time::Duration;

#[path = "support/pty.rs"]
mod pty;

use pty::Session;

/// The status words of the overview (common to every run list of the dashboard).
const STATUSES: [&str; 6] = [
    "steady", "settling", "drifting", "unstable", "stalled", "finished",
];

/// Starts plateau on a 100×30 terminal in a UTF-8 locale; its temporary files go into
/// `tmp`.
fn start(args: &[&str], tmp: &Path) -> Session {
    let utf8 = std::ffi::OsStr::new("C.UTF-8");
    Session::start_with(
        args,
        tmp,
        (30, 100),
        &[
            ("TMPDIR", tmp.as_os_str()),
            ("LANG", utf8),
            ("LC_ALL", utf8),
            ("LC_CTYPE", utf8),
        ],
    )
}

/// The status words on screen.
fn statuses(screen: &vt100::Screen) -> BTreeSet<&'static str> {
    let text = screen.contents();
    STATUSES
        .into_iter()
        .filter(|word| text.lines().any(|l| l.contains(word)))
        .collect()
}

/// The demo folders left in `tmp`.
fn demo_folders(tmp: &Path) -> Vec<String> {
    std::fs::read_dir(tmp)
        .unwrap()
        .flatten()
        .map(|e| e.file_name().to_string_lossy().into_owned())
        .filter(|n| n.starts_with("plateau-demo-"))
        .collect()
}

#[test]
fn the_demo_shows_several_statuses_then_q_removes_its_folder_and_restores_the_terminal() {
    let tmp = tempfile::tempdir().unwrap();
    let mut s = start(&["demo"], tmp.path());
    s.wait_for("the six demo runs", |sc| {
        let text = sc.contents();
        [
            "production",
            "density-settling",
            "heating",
            "nve-drift",
            "blow-up",
            "stalled",
        ]
        .iter()
        .all(|name| text.contains(name))
    });
    // While it runs, its logs grow in a folder of their own.
    assert_eq!(demo_folders(tmp.path()).len(), 1);
    assert!(!s.cooked(), "raw mode while running");
    s.wait_for("three different statuses", |sc| statuses(sc).len() >= 3);
    // The blow-up and the stall are told apart from the healthy runs as they happen.
    s.wait_for("unstable and stalled", |sc| {
        let seen = statuses(sc);
        seen.contains("unstable") && seen.contains("stalled")
    });
    s.writer.write_all(b"q").unwrap();
    assert_eq!(s.wait_exit(), 0, "{}", s.contents());
    s.assert_restored();
    assert!(demo_folders(tmp.path()).is_empty(), "folder left behind");
}

#[test]
fn sigterm_removes_the_folder_and_restores_the_terminal() {
    let tmp = tempfile::tempdir().unwrap();
    let mut s = start(&["demo", "--scenario", "nve-drift"], tmp.path());
    s.wait_for("the run", |sc| sc.contents().contains("nve-drift"));
    assert_eq!(demo_folders(tmp.path()).len(), 1);
    let pid = s.child.process_id().unwrap() as libc::pid_t;
    assert_eq!(unsafe { libc::kill(pid, libc::SIGTERM) }, 0);
    assert_eq!(s.wait_exit(), 128 + libc::SIGTERM as u32);
    s.assert_restored();
    assert!(demo_folders(tmp.path()).is_empty(), "folder left behind");
}

fn plateau(args: &[&str]) -> std::process::Output {
    assert_cmd::Command::cargo_bin("plateau")
        .unwrap()
        .args(args)
        .timeout(Duration::from_secs(60))
        .output()
        .unwrap()
}

#[test]
fn without_a_terminal_it_refuses_and_names_the_ways_without_one() {
    let out = plateau(&["demo"]);
    assert_eq!(out.status.code(), Some(2));
    let err = String::from_utf8_lossy(&out.stderr);
    assert!(err.contains("plateau check --follow"), "{err}");
    assert!(err.contains("plateau replay"), "{err}");
}

#[test]
fn scenario_names_are_listed_in_help_and_for_an_unknown_one() {
    let names = [
        "equilibration",
        "density-settling",
        "heating",
        "staged-heating",
        "production",
        "nve-drift",
        "blow-up",
        "stalled",
        "thermostat-failure",
    ];
    let help = plateau(&["demo", "--help"]);
    assert_eq!(help.status.code(), Some(0));
    let help = String::from_utf8_lossy(&help.stdout);
    let unknown = plateau(&["demo", "--scenario", "meltdown"]);
    assert_eq!(unknown.status.code(), Some(2));
    let err = String::from_utf8_lossy(&unknown.stderr);
    assert!(err.contains("meltdown"), "{err}");
    for name in names {
        assert!(help.contains(name), "{name} not in help:\n{help}");
        assert!(err.contains(name), "{name} not in the error:\n{err}");
    }
}
