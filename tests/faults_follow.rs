//! Faults while following, through the binary as a user runs it:
//! - Ctrl-C (SIGINT), SIGTERM and SIGHUP end `check --follow` with its summary and the exit
//!   code of what it saw (1 after a critical alert, 0 on a healthy log);
//! - the followed file is deleted, re-created, truncated and rewritten, replaced by a rename
//!   and moved away and back, in quick succession while rows are appended: the rows counted
//!   equal the writer's own count (no row lost, none counted twice: a rewritten step
//!   replaces the earlier one, the Contract's restart rule);
//! - file events are lost (rows appended through a hard link in another folder: inotify
//!   reports a change to the watches of the folder the path went through, so the followed
//!   folder hears nothing, from memory of inotify(7)): the stat heartbeat still finds
//!   every row.
//!
//! Sleeps only order the writer's steps and leave the follower time to look (its heartbeat
//! is one second); nothing asserts on timing.

#![cfg(unix)]
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::io::{BufRead, BufReader, Write};
use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::sync::mpsc;
use std::thread;
use std::time::Duration;

const PATIENCE: Duration = Duration::from_secs(120);

fn header() -> &'static str {
    "step time(ps) temperature(K) energy(kJ/mol)\n"
}

/// Row `i`: its step is `i` (the step a restart goes back to).
fn row(i: u64) -> String {
    let t = 300.0 + ((i * 7919) % 13) as f64 * 0.1;
    let e = -5000.0 + ((i * 104_729) % 17) as f64 * 0.3;
    format!("{i} {}.0 {t:.2} {e:.2}\n", i * 2)
}

fn rows(range: std::ops::Range<u64>) -> String {
    range.map(row).collect()
}

fn append(path: &Path, text: &str) {
    let mut f = std::fs::OpenOptions::new()
        .append(true)
        .create(true)
        .open(path)
        .unwrap();
    f.write_all(text.as_bytes()).unwrap();
}

/// Appends rows `range` in pieces of `piece` rows, `pause` apart.
fn append_slowly(path: &Path, range: std::ops::Range<u64>, piece: u64, pause: Duration) {
    let mut at = range.start;
    while at < range.end {
        let end = (at + piece).min(range.end);
        append(path, &rows(at..end));
        at = end;
        thread::sleep(pause);
    }
}

/// `plateau check --follow` on `file` in `dir`, ending when `pid` exits.
fn follow(dir: &Path, file: &str, pid: Option<u32>) -> Child {
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_plateau"));
    cmd.current_dir(dir)
        .args(["check", "--follow", "--stall-after", "1h"]);
    if let Some(pid) = pid {
        cmd.args(["--pid", &pid.to_string()]);
    }
    cmd.arg(file)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap()
}

fn sleeper() -> Child {
    Command::new("sleep").arg("600").spawn().unwrap()
}

/// Waits for `child` to end (killing it after [`PATIENCE`]); exit code, stdout, stderr.
fn finish(child: Child) -> (Option<i32>, String, String) {
    let (tx, rx) = mpsc::channel();
    thread::spawn(move || {
        let _ = tx.send(child.wait_with_output());
    });
    let out = rx
        .recv_timeout(PATIENCE)
        .expect("check --follow did not end")
        .unwrap();
    (
        out.status.code(),
        String::from_utf8_lossy(&out.stdout).into_owned(),
        String::from_utf8_lossy(&out.stderr).into_owned(),
    )
}

/// The row count in the summary line `FILE: STATUS (N rows, ...)`.
fn rows_in_summary(stderr: &str, file: &str) -> u64 {
    let line = stderr
        .lines()
        .find(|l| l.starts_with(&format!("{file}: ")) && l.contains(" rows, "))
        .unwrap_or_else(|| panic!("no summary for {file}:\n{stderr}"));
    let inside = line.split('(').nth(1).unwrap();
    inside.split(' ').next().unwrap().parse().unwrap()
}

fn signal(child: &Child, sig: libc::c_int) {
    // SAFETY: signalling our own child.
    assert_eq!(unsafe { libc::kill(child.id() as libc::pid_t, sig) }, 0);
}

#[test]
fn signals_end_check_follow_with_its_summary_and_the_code_of_what_it_saw() {
    for (sig, name) in [
        (libc::SIGINT, "SIGINT"),
        (libc::SIGTERM, "SIGTERM"),
        (libc::SIGHUP, "SIGHUP"),
    ] {
        for critical in [true, false] {
            let dir = tempfile::tempdir().unwrap();
            let path = dir.path().join("run.log");
            let mut text = format!("{}{}", header(), rows(0..300));
            if critical {
                text.push_str("300 600.0 nan -5000.0\n");
            }
            std::fs::write(&path, text).unwrap();
            let mut child = follow(dir.path(), "run.log", None);
            // Wait until it has read the file: the alert line (critical) or a moment.
            let stdout = child.stdout.take().unwrap();
            let (tx, rx) = mpsc::channel();
            thread::spawn(move || {
                for line in BufReader::new(stdout).lines() {
                    let _ = tx.send(line.unwrap());
                }
            });
            if critical {
                let line = rx.recv_timeout(PATIENCE).expect("the alert line");
                assert!(line.contains("nonfinite"), "{line}");
            } else {
                thread::sleep(Duration::from_millis(1500));
            }
            signal(&child, sig);
            let (code, _, stderr) = finish(child);
            let want = if critical { 1 } else { 0 };
            assert_eq!(code, Some(want), "{name}, critical {critical}: {stderr}");
            let extra = if critical { 1 } else { 0 };
            assert_eq!(rows_in_summary(&stderr, "run.log"), 300 + extra, "{name}");
        }
    }
}

#[test]
fn delete_truncate_replace_and_restore_lose_no_row_and_count_none_twice() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("run.log");
    let pause = Duration::from_millis(20);
    std::fs::write(&path, header()).unwrap();
    let mut until = sleeper();
    let child = follow(dir.path(), "run.log", Some(until.id()));
    thread::sleep(Duration::from_millis(500));

    // 1. Appends.
    append_slowly(&path, 0..100, 10, pause);
    // 2. Deleted, then re-created with the rows that follow.
    std::fs::remove_file(&path).unwrap();
    thread::sleep(Duration::from_millis(50));
    std::fs::write(&path, header()).unwrap();
    append_slowly(&path, 100..200, 10, pause);
    // 3. Truncated and rewritten from step 0 (a restart: rows 0..249 replace 0..199).
    std::fs::write(&path, format!("{}{}", header(), rows(0..250))).unwrap();
    thread::sleep(pause);
    // 4. Replaced by a rename (another file, steps from 0 again, further on).
    let tmp = dir.path().join("run.log.new");
    std::fs::write(&tmp, format!("{}{}", header(), rows(0..300))).unwrap();
    std::fs::rename(&tmp, &path).unwrap();
    thread::sleep(pause);
    // 5. Moved away and back, then appended to.
    let away = dir.path().join("run.log.away");
    std::fs::rename(&path, &away).unwrap();
    thread::sleep(Duration::from_millis(50));
    std::fs::rename(&away, &path).unwrap();
    append_slowly(&path, 300..400, 10, pause);
    // The writer's count: steps 0..399, each once.
    let written = 400;

    // Leave the follower a few heartbeats to read the last rows, then end the watch.
    thread::sleep(Duration::from_secs(3));
    until.kill().unwrap();
    until.wait().unwrap();
    let (code, _, stderr) = finish(child);
    assert_eq!(code, Some(0), "{stderr}");
    assert_eq!(rows_in_summary(&stderr, "run.log"), written, "{stderr}");

    // The file as it is now, read once, says the same.
    let once = Command::new(env!("CARGO_BIN_EXE_plateau"))
        .current_dir(dir.path())
        .args(["report", "--format", "json", "run.log"])
        .output()
        .unwrap();
    let report: serde_json::Value = serde_json::from_slice(&once.stdout).unwrap();
    assert_eq!(report["rows"], written);
}

#[test]
fn lost_file_events_are_caught_up_by_the_heartbeat() {
    let root = tempfile::tempdir().unwrap();
    let watched = root.path().join("watched");
    let elsewhere = root.path().join("elsewhere");
    std::fs::create_dir(&watched).unwrap();
    std::fs::create_dir(&elsewhere).unwrap();
    let path = watched.join("run.log");
    std::fs::write(&path, format!("{}{}", header(), rows(0..50))).unwrap();
    // The same file under another name in a folder the follower does not watch.
    let link = elsewhere.join("link.log");
    std::fs::hard_link(&path, &link).unwrap();

    let mut until = sleeper();
    let child = follow(&watched, "run.log", Some(until.id()));
    thread::sleep(Duration::from_millis(500));
    append_slowly(&link, 50..500, 15, Duration::from_millis(30));
    thread::sleep(Duration::from_secs(3));
    until.kill().unwrap();
    until.wait().unwrap();
    let (code, _, stderr) = finish(child);
    assert_eq!(code, Some(0), "{stderr}");
    assert_eq!(rows_in_summary(&stderr, "run.log"), 500, "{stderr}");
}

/// `check --follow` run as the unprivileged user `nobody` when the tests run as root (root
/// reads files whatever their permissions), else as ourselves.
fn follow_unprivileged(dir: &Path, file: &str, pid: u32) -> Child {
    use std::os::unix::process::CommandExt;
    let mut cmd = Command::new(env!("CARGO_BIN_EXE_plateau"));
    cmd.current_dir(dir)
        .args(["check", "--follow", "--stall-after", "1h", "--pid"])
        .arg(pid.to_string())
        .arg(file)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    // SAFETY: geteuid has no failure; the closure only calls async-signal-safe setgid and
    // setuid between fork and exec.
    if unsafe { libc::geteuid() } == 0 {
        unsafe {
            cmd.pre_exec(|| {
                if libc::setgid(65534) != 0 || libc::setuid(65534) != 0 {
                    return Err(std::io::Error::last_os_error());
                }
                Ok(())
            });
        }
    }
    cmd.spawn().unwrap()
}

#[test]
fn read_permission_removed_mid_run_keeps_the_rows_and_names_the_file() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    std::fs::set_permissions(dir.path(), std::fs::Permissions::from_mode(0o755)).unwrap();
    let path = dir.path().join("run.log");
    std::fs::write(&path, format!("{}{}", header(), rows(0..100))).unwrap();
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o644)).unwrap();
    let mut until = sleeper();
    let child = follow_unprivileged(dir.path(), "run.log", until.id());
    thread::sleep(Duration::from_millis(1500));
    // Permission removed: the file already open is still read (permissions are checked
    // when a file is opened, POSIX open(2)), so appended rows still arrive.
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o000)).unwrap();
    append(&path, &rows(100..150));
    thread::sleep(Duration::from_millis(1500));
    // Replaced by a file it may not open: an error naming the file; the rows stay.
    let tmp = dir.path().join("run.log.new");
    std::fs::write(&tmp, format!("{}{}", header(), rows(0..200))).unwrap();
    std::fs::set_permissions(&tmp, std::fs::Permissions::from_mode(0o000)).unwrap();
    std::fs::rename(&tmp, &path).unwrap();
    thread::sleep(Duration::from_secs(3));
    until.kill().unwrap();
    until.wait().unwrap();
    let (code, _, stderr) = finish(child);
    assert_eq!(code, Some(2), "an unreadable input: {stderr}");
    assert!(
        stderr.contains("run.log") && stderr.contains("ermission denied"),
        "{stderr}"
    );
    assert_eq!(rows_in_summary(&stderr, "run.log"), 150, "{stderr}");
}
