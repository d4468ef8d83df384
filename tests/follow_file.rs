//! Temporary-file scenarios for the file follower, driven by hand (no threads, no sleeps):
//! each `drive` call is one check of the path, as a wake-up would do.
//!
//! Expected behaviour follows `tail -F` semantics (follow by name; POSIX `tail` and GNU
//! coreutils documentation describe `-F` as following the name across rotation and
//! re-creation), and the product Contract: a line without its newline is held back; at the
//! end of input it is reported as given up.

// Test helpers may unwrap: a failure there is a test failure.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use std::fs::{self, OpenOptions};
use std::io::{Cursor, Read, Write};
use std::path::Path;
use std::sync::Arc;
use std::time::{Duration, SystemTime};

use plateau::follow::{
    FileFollower, FollowEvent, FollowOptions, ManualClock, Partial, ReaderSource, Source, Step,
    SystemClock,
};

/// A follower event with data split into lines, for easy comparison.
#[derive(Debug, Clone, PartialEq)]
enum Ev {
    Line(u64, String),
    Truncated(Option<Partial>),
    Rotated(Option<Partial>),
    Deleted(Option<Partial>),
    Waiting,
    Appeared,
    End(Option<Partial>),
    Error(String),
}

fn flatten(events: Vec<FollowEvent>) -> Vec<Ev> {
    let mut v = Vec::new();
    for e in events {
        match e {
            FollowEvent::Data {
                bytes,
                first_line,
                lines,
                ..
            } => {
                // Lines end at `\n`, `\r\n` or a lone `\r`; compared without their ending.
                assert!(
                    matches!(bytes.last(), Some(b'\n' | b'\r')),
                    "data must end at a line ending"
                );
                let mut split = Vec::new();
                plateau::parse::endings::for_each_line(&bytes, |l| split.push(l.to_vec()));
                assert_eq!(split.len() as u64, lines);
                for (k, l) in split.into_iter().enumerate() {
                    v.push(Ev::Line(
                        first_line + k as u64,
                        String::from_utf8_lossy(&l).into_owned(),
                    ));
                }
            }
            FollowEvent::Truncated { dropped } => v.push(Ev::Truncated(dropped)),
            FollowEvent::Rotated { dropped } => v.push(Ev::Rotated(dropped)),
            FollowEvent::Deleted { dropped } => v.push(Ev::Deleted(dropped)),
            FollowEvent::Waiting => v.push(Ev::Waiting),
            FollowEvent::Appeared => v.push(Ev::Appeared),
            FollowEvent::EndOfInput { dropped } => v.push(Ev::End(dropped)),
            FollowEvent::Error { message, .. } => v.push(Ev::Error(message)),
            FollowEvent::Mode(_) => {}
        }
    }
    v
}

fn line(n: u64, s: &str) -> Ev {
    Ev::Line(n, s.trim_end_matches(['\r', '\n']).to_string())
}

/// One wake-up: check the path and read until nothing more is ready.
fn drive(f: &mut impl Source) -> Vec<Ev> {
    let mut out = Vec::new();
    while f.step(&mut out) == Step::More {}
    flatten(out)
}

fn follower(path: &Path) -> FileFollower {
    FileFollower::new(path, Arc::new(SystemClock), &FollowOptions::default())
}

fn append(path: &Path, bytes: &str) {
    let mut f = OpenOptions::new().append(true).open(path).unwrap();
    f.write_all(bytes.as_bytes()).unwrap();
}

fn truncate_and_write(path: &Path, bytes: &str) {
    let mut f = OpenOptions::new()
        .write(true)
        .truncate(true)
        .open(path)
        .unwrap();
    f.write_all(bytes.as_bytes()).unwrap();
}

#[test]
fn appends_come_out_once_in_order() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(&p, "step temp\n1 300\n").unwrap();
    let mut f = follower(&p);
    assert_eq!(
        drive(&mut f),
        vec![line(1, "step temp\n"), line(2, "1 300\n")]
    );
    assert_eq!(drive(&mut f), vec![]);
    append(&p, "2 301\n3 302\n");
    assert_eq!(drive(&mut f), vec![line(3, "2 301\n"), line(4, "3 302\n")]);
    assert_eq!(drive(&mut f), vec![]);
    assert_eq!(f.offset(), 28);
}

#[test]
fn half_line_waits_for_its_end() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(&p, "1 300\n2 3").unwrap();
    let mut f = follower(&p);
    assert_eq!(drive(&mut f), vec![line(1, "1 300\n")]);
    append(&p, "0");
    assert_eq!(drive(&mut f), vec![]);
    append(&p, "1\n3 302");
    assert_eq!(drive(&mut f), vec![line(2, "2 301\n")]);
}

#[test]
fn crlf_line_is_complete_at_its_newline() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(&p, "a 1\r\nb 2\r").unwrap();
    let mut f = follower(&p);
    // A lone `\r` ends a line at once; the `\n` that completes its `\r\n` adds none.
    assert_eq!(drive(&mut f), vec![line(1, "a 1\r\n"), line(2, "b 2\r")]);
    append(&p, "\n");
    assert_eq!(drive(&mut f), vec![]);
    append(&p, "c 3\n");
    assert_eq!(drive(&mut f), vec![line(3, "c 3\n")]);
}

#[test]
fn truncation_restarts_at_line_one_and_reports_the_dropped_half_line() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(&p, "a\nb\nc\nzz").unwrap();
    let mut f = follower(&p);
    assert_eq!(drive(&mut f).len(), 3);
    truncate_and_write(&p, "n\n");
    assert_eq!(
        drive(&mut f),
        vec![
            Ev::Truncated(Some(Partial { line: 4, bytes: 2 })),
            line(1, "n\n")
        ]
    );
    append(&p, "o\n");
    assert_eq!(drive(&mut f), vec![line(2, "o\n")]);
}

#[test]
fn truncation_rewritten_past_the_offset_between_checks_is_noticed() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(&p, "old 1\nold 2\n").unwrap();
    let mut f = follower(&p);
    assert_eq!(drive(&mut f).len(), 2);
    // Longer than before: the length alone cannot tell; the bytes before the offset changed.
    truncate_and_write(&p, "new 1\nnew 2\nnew 3\n");
    assert_eq!(
        drive(&mut f),
        vec![
            Ev::Truncated(None),
            line(1, "new 1\n"),
            line(2, "new 2\n"),
            line(3, "new 3\n")
        ]
    );
}

#[test]
fn rename_and_recreate_drains_the_old_file_first() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(&p, "a\n").unwrap();
    let mut f = follower(&p);
    assert_eq!(drive(&mut f), vec![line(1, "a\n")]);
    append(&p, "b\nhalf");
    fs::rename(&p, dir.path().join("run.log.1")).unwrap();
    fs::write(&p, "c\n").unwrap();
    assert_eq!(
        drive(&mut f),
        vec![
            line(2, "b\n"),
            Ev::Rotated(Some(Partial { line: 3, bytes: 4 })),
            line(1, "c\n")
        ]
    );
    append(&p, "d\n");
    assert_eq!(drive(&mut f), vec![line(2, "d\n")]);
}

#[test]
fn delete_keeps_what_was_read_and_waits_for_the_file() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(&p, "a\n").unwrap();
    let mut f = follower(&p);
    assert_eq!(drive(&mut f), vec![line(1, "a\n")]);
    append(&p, "b\n");
    fs::remove_file(&p).unwrap();
    assert_eq!(drive(&mut f), vec![line(2, "b\n"), Ev::Deleted(None)]);
    assert_eq!(drive(&mut f), vec![]);
    fs::write(&p, "c\n").unwrap();
    assert_eq!(drive(&mut f), vec![Ev::Appeared, line(1, "c\n")]);
}

#[test]
fn file_created_after_the_follower_started_is_awaited() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("later.log");
    let mut f = follower(&p);
    assert_eq!(drive(&mut f), vec![Ev::Waiting]);
    assert_eq!(drive(&mut f), vec![]);
    fs::write(&p, "x 1\n").unwrap();
    assert_eq!(drive(&mut f), vec![Ev::Appeared, line(1, "x 1\n")]);
}

#[test]
fn folder_instead_of_a_file_is_an_error_reported_once() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::create_dir(&p).unwrap();
    let mut f = follower(&p);
    let mut out = Vec::new();
    f.poll(&mut out);
    assert!(
        matches!(out.as_slice(), [FollowEvent::Error { path, message }]
            if path == &p && message.contains("folder")),
        "{out:?}"
    );
    assert_eq!(drive(&mut f), vec![]);
    fs::remove_dir(&p).unwrap();
    fs::write(&p, "ok\n").unwrap();
    assert_eq!(drive(&mut f), vec![Ev::Appeared, line(1, "ok\n")]);
}

#[cfg(unix)]
#[test]
fn permission_denied_is_reported_with_the_path() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("secret.log");
    fs::write(&p, "a\n").unwrap();
    fs::set_permissions(&p, fs::Permissions::from_mode(0o000)).unwrap();
    if fs::File::open(&p).is_ok() {
        // Running as root (or with CAP_DAC_OVERRIDE): permissions are not enforced, so this
        // case cannot be produced here.
        eprintln!("skipped: permissions are not enforced for this user");
        return;
    }
    let mut f = follower(&p);
    let mut out = Vec::new();
    f.poll(&mut out);
    assert!(
        matches!(out.as_slice(), [FollowEvent::Error { path, message }]
            if path == &p && message.contains("ermission")),
        "{out:?}"
    );
    fs::set_permissions(&p, fs::Permissions::from_mode(0o644)).unwrap();
    assert_eq!(drive(&mut f), vec![Ev::Appeared, line(1, "a\n")]);
}

#[test]
fn bursts_are_read_in_bounded_batches_without_loss() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("burst.log");
    let text: String = (1..=5000).map(|i| format!("{i} {}\n", i * 7)).collect();
    fs::write(&p, &text).unwrap();
    let options = FollowOptions {
        max_read_bytes: 4096,
        ..FollowOptions::default()
    };
    let mut f = FileFollower::new(&p, Arc::new(SystemClock), &options);
    let mut steps = 0;
    let mut got = String::new();
    let mut next = 1;
    loop {
        let mut out = Vec::new();
        let step = f.step(&mut out);
        steps += 1;
        for e in out {
            if let FollowEvent::Data {
                bytes, first_line, ..
            } = e
            {
                // One read buffer plus at most one held-back line.
                assert!(bytes.len() <= 4096 + 64);
                assert_eq!(first_line, next);
                next += bytes.iter().filter(|b| **b == b'\n').count() as u64;
                got.push_str(std::str::from_utf8(&bytes).unwrap());
            }
        }
        if step != Step::More {
            break;
        }
    }
    assert_eq!(got, text);
    assert!(steps > text.len() / 4096, "read in one go: {steps} steps");
}

#[test]
fn overlong_line_is_skipped_and_following_goes_on() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(&p, format!("a\n{}", "x".repeat(100))).unwrap();
    let options = FollowOptions {
        max_line_bytes: 50,
        max_read_bytes: 16,
        ..FollowOptions::default()
    };
    let mut f = FileFollower::new(&p, Arc::new(SystemClock), &options);
    assert_eq!(drive(&mut f), vec![line(1, "a\n")]);
    append(&p, "xx\nb\n");
    assert_eq!(
        drive(&mut f),
        vec![
            Ev::Error("line 2 is too long; skipped".into()),
            line(3, "b\n")
        ]
    );
}

#[test]
fn arrival_time_comes_from_the_injected_clock() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(&p, "a\n").unwrap();
    let t0 = SystemTime::UNIX_EPOCH + Duration::from_secs(1_000_000);
    let clock = Arc::new(ManualClock::new(t0));
    let mut f = FileFollower::new(&p, clock.clone(), &FollowOptions::default());
    let mut out = Vec::new();
    f.poll(&mut out);
    clock.advance(Duration::from_secs(5));
    append(&p, "b\n");
    f.poll(&mut out);
    let arrivals: Vec<_> = out
        .iter()
        .filter_map(|e| match e {
            FollowEvent::Data { arrival, .. } => Some(*arrival),
            _ => None,
        })
        .collect();
    assert_eq!(arrivals, vec![t0, t0 + Duration::from_secs(5)]);
}

#[test]
fn followed_file_bytes_and_mtime_are_unchanged() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(&p, "a 1\nb 2\nhalf").unwrap();
    let before_bytes = fs::read(&p).unwrap();
    let before_meta = fs::metadata(&p).unwrap();
    let mut f = follower(&p);
    for _ in 0..5 {
        drive(&mut f);
    }
    drop(f);
    let after_meta = fs::metadata(&p).unwrap();
    assert_eq!(fs::read(&p).unwrap(), before_bytes);
    assert_eq!(
        after_meta.modified().unwrap(),
        before_meta.modified().unwrap()
    );
    assert_eq!(after_meta.len(), before_meta.len());
    assert_eq!(after_meta.permissions(), before_meta.permissions());
}

/// A reader that hands out its bytes a few at a time, like a slow pipe.
struct Trickle {
    data: Vec<u8>,
    pos: usize,
    step: usize,
}

impl Read for Trickle {
    fn read(&mut self, buf: &mut [u8]) -> std::io::Result<usize> {
        let n = self.step.min(buf.len()).min(self.data.len() - self.pos);
        buf[..n].copy_from_slice(&self.data[self.pos..self.pos + n]);
        self.pos += n;
        Ok(n)
    }
}

fn read_all(source: &mut impl Source) -> Vec<Ev> {
    let mut out = Vec::new();
    while source.step(&mut out) != Step::Finished {}
    assert_eq!(source.step(&mut out), Step::Finished);
    flatten(out)
}

#[test]
fn reader_source_gives_lines_then_end_with_the_ignored_half_line() {
    let options = FollowOptions::default();
    let text = b"t p\r\n1 2\n3 4\n5 ".to_vec();
    let expected = vec![
        line(1, "t p\r\n"),
        line(2, "1 2\n"),
        line(3, "3 4\n"),
        Ev::End(Some(Partial { line: 4, bytes: 2 })),
    ];
    let mut whole = ReaderSource::new(
        "-",
        Cursor::new(text.clone()),
        Arc::new(SystemClock),
        &options,
    );
    assert_eq!(read_all(&mut whole), expected);
    for step in [1, 2, 3, 7] {
        let trickle = Trickle {
            data: text.clone(),
            pos: 0,
            step,
        };
        let mut src = ReaderSource::new("-", trickle, Arc::new(SystemClock), &options);
        assert_eq!(read_all(&mut src), expected, "chunks of {step}");
    }
}

#[test]
fn reader_source_complete_input_ends_without_a_dropped_line() {
    let options = FollowOptions::default();
    let mut src = ReaderSource::new(
        "-",
        Cursor::new(b"a\n".to_vec()),
        Arc::new(SystemClock),
        &options,
    );
    assert_eq!(read_all(&mut src), vec![line(1, "a\n"), Ev::End(None)]);
    let mut empty = ReaderSource::new(
        "-",
        Cursor::new(Vec::new()),
        Arc::new(SystemClock),
        &options,
    );
    assert_eq!(read_all(&mut empty), vec![Ev::End(None)]);
}

#[cfg(unix)]
#[test]
fn named_pipe_is_refused_without_blocking() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("fifo.log");
    let made = std::process::Command::new("mkfifo").arg(&p).status();
    if !made.is_ok_and(|s| s.success()) {
        eprintln!("skipped: mkfifo not available");
        return;
    }
    let mut f = follower(&p);
    let mut out = Vec::new();
    // Opening a named pipe with no writer would block here forever.
    f.poll(&mut out);
    assert!(
        matches!(out.as_slice(), [FollowEvent::Error { path, message }]
            if path == &p && message.contains("not a regular file")),
        "{out:?}"
    );
}
