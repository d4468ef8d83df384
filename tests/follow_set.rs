//! The threaded follower: file events (inotify) as wake-ups, forced polling driven by hand,
//! many files on one channel, a pipe as standard input. Tests wait on conditions with a
//! generous timeout; nothing asserts on timing.

// Test helpers may unwrap: a failure there is a test failure.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use std::fs::{self, OpenOptions};
use std::io::Write;
use std::path::Path;
use std::sync::Arc;
use std::time::{Duration, Instant};

use plateau::follow::{
    FollowEvent, FollowOptions, FollowReceiver, FollowSet, ReaderSource, SourceId, SystemClock,
    WatchMode,
};

/// Long enough never to be reached in a passing run; only a failing run waits this long.
const PATIENCE: Duration = Duration::from_secs(20);
/// A stat-check period so long that only file events or `poll_now` can wake the follower.
const NEVER: Duration = Duration::from_secs(3600);

fn append(path: &Path, bytes: &str) {
    let mut f = OpenOptions::new().append(true).open(path).unwrap();
    f.write_all(bytes.as_bytes()).unwrap();
}

/// Receives until `done` holds for everything received so far.
fn wait_until(
    rx: &FollowReceiver,
    got: &mut Vec<(SourceId, FollowEvent)>,
    done: impl Fn(&[(SourceId, FollowEvent)]) -> bool,
) {
    let deadline = Instant::now() + PATIENCE;
    while !done(got) {
        let left = deadline.saturating_duration_since(Instant::now());
        match rx.recv_timeout(left) {
            Ok(item) => got.push(item),
            Err(e) => panic!("condition not met ({e}); received: {got:#?}"),
        }
    }
}

/// All complete lines received for `id`, in order.
fn text_of(got: &[(SourceId, FollowEvent)], id: SourceId) -> String {
    got.iter()
        .filter(|(s, _)| *s == id)
        .filter_map(|(_, e)| match e {
            FollowEvent::Data { bytes, .. } => Some(String::from_utf8_lossy(bytes).into_owned()),
            _ => None,
        })
        .collect()
}

fn has(got: &[(SourceId, FollowEvent)], id: SourceId, f: impl Fn(&FollowEvent) -> bool) -> bool {
    got.iter().any(|(s, e)| *s == id && f(e))
}

#[test]
fn file_events_wake_the_follower() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(&p, "a\n").unwrap();
    let options = FollowOptions {
        heartbeat: NEVER,
        ..FollowOptions::default()
    };
    let (mut set, rx) = FollowSet::start(options, Arc::new(SystemClock)).unwrap();
    let id = set.add_path(&p).unwrap();
    let mut got = Vec::new();
    wait_until(&rx, &mut got, |g| text_of(g, id) == "a\n");
    let mode = got.iter().find_map(|(_, e)| match e {
        FollowEvent::Mode(m) => Some(m.clone()),
        _ => None,
    });
    match mode {
        Some(WatchMode::Events { .. }) => {}
        // Where inotify is unavailable the fallback must say why; polling still delivers.
        Some(WatchMode::PollingFallback { reason, .. }) => eprintln!("no file events: {reason}"),
        other => panic!("unexpected mode {other:?}"),
    }
    append(&p, "b 1\nc");
    wait_until(&rx, &mut got, |g| text_of(g, id) == "a\nb 1\n");
    append(&p, " 2\n");
    wait_until(&rx, &mut got, |g| text_of(g, id) == "a\nb 1\nc 2\n");
    // Rotation seen through events on the folder.
    fs::rename(&p, dir.path().join("run.log.1")).unwrap();
    fs::write(&p, "new\n").unwrap();
    wait_until(&rx, &mut got, |g| text_of(g, id).ends_with("c 2\nnew\n"));
    // Depending on when the follower looks (between the rename and the new file, or after),
    // this is one rotation or a deletion followed by a re-creation; no line is lost either way.
    assert!(
        has(&got, id, |e| matches!(e, FollowEvent::Rotated { .. }))
            || (has(&got, id, |e| matches!(e, FollowEvent::Deleted { .. }))
                && has(&got, id, |e| matches!(e, FollowEvent::Appeared))),
        "{got:#?}"
    );
    set.stop();
}

#[test]
fn forced_polling_works_without_file_events() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    let options = FollowOptions {
        force_poll: true,
        poll_interval: NEVER,
        ..FollowOptions::default()
    };
    let (mut set, rx) = FollowSet::start(options, Arc::new(SystemClock)).unwrap();
    let id = set.add_path(&p).unwrap();
    let mut got = Vec::new();
    wait_until(&rx, &mut got, |g| {
        has(g, id, |e| matches!(e, FollowEvent::Waiting))
    });
    assert!(has(&got, id, |e| *e
        == FollowEvent::Mode(WatchMode::Polling { interval: NEVER })));
    fs::write(&p, "x 1\n").unwrap();
    set.poll_now();
    wait_until(&rx, &mut got, |g| text_of(g, id) == "x 1\n");
    assert!(has(&got, id, |e| matches!(e, FollowEvent::Appeared)));
    // Truncate and rewrite, then one manual poll.
    fs::write(&p, "y\n").unwrap();
    set.poll_now();
    wait_until(&rx, &mut got, |g| text_of(g, id) == "x 1\ny\n");
    assert!(has(&got, id, |e| matches!(
        e,
        FollowEvent::Truncated { .. }
    )));
    fs::remove_file(&p).unwrap();
    set.poll_now();
    wait_until(&rx, &mut got, |g| {
        has(g, id, |e| matches!(e, FollowEvent::Deleted { .. }))
    });
    set.stop();
}

#[test]
fn many_files_share_one_channel_and_errors_do_not_stop_the_others() {
    let dirs = [tempfile::tempdir().unwrap(), tempfile::tempdir().unwrap()];
    let (mut set, rx) = FollowSet::start(FollowOptions::default(), Arc::new(SystemClock)).unwrap();
    let mut ids = Vec::new();
    for i in 0..30 {
        let p = dirs[i % 2].path().join(format!("run{i}.log"));
        fs::write(&p, format!("first {i}\n")).unwrap();
        ids.push((set.add_path(&p).unwrap(), p));
    }
    let folder = dirs[0].path().join("a-folder");
    fs::create_dir(&folder).unwrap();
    let bad = set.add_path(&folder).unwrap();
    for (_, p) in &ids {
        append(p, "second\n");
    }
    set.poll_now();
    let mut got = Vec::new();
    wait_until(&rx, &mut got, |g| {
        ids.iter()
            .enumerate()
            .all(|(i, (id, _))| text_of(g, *id) == format!("first {i}\nsecond\n"))
    });
    wait_until(&rx, &mut got, |g| {
        has(
            g,
            bad,
            |e| matches!(e, FollowEvent::Error { path, .. } if path == &folder),
        )
    });
    set.stop();
}

#[test]
fn missing_folder_is_polled_until_it_appears() {
    let dir = tempfile::tempdir().unwrap();
    let sub = dir.path().join("queued-job");
    let p = sub.join("run.log");
    let (mut set, rx) = FollowSet::start(FollowOptions::default(), Arc::new(SystemClock)).unwrap();
    let id = set.add_path(&p).unwrap();
    let mut got = Vec::new();
    wait_until(&rx, &mut got, |g| {
        has(g, id, |e| matches!(e, FollowEvent::Waiting))
            && has(g, id, |e| matches!(e, FollowEvent::Mode(_)))
    });
    assert!(
        has(
            &got,
            id,
            |e| matches!(e, FollowEvent::Mode(WatchMode::PollingFallback { reason, .. }) if reason.contains("folder"))
        ),
        "{got:#?}"
    );
    fs::create_dir(&sub).unwrap();
    fs::write(&p, "row 1\n").unwrap();
    set.poll_now();
    wait_until(&rx, &mut got, |g| text_of(g, id) == "row 1\n");
    set.stop();
}

#[test]
fn pipe_source_delivers_rows_and_end_of_input() {
    let (reader, mut writer) = std::io::pipe().unwrap();
    let options = FollowOptions::default();
    let (mut set, rx) = FollowSet::start(options.clone(), Arc::new(SystemClock)).unwrap();
    let id = set
        .add_source(Box::new(ReaderSource::new(
            "-",
            reader,
            Arc::new(SystemClock),
            &options,
        )))
        .unwrap();
    let mut got = Vec::new();
    writer.write_all(b"1 2\n3").unwrap();
    wait_until(&rx, &mut got, |g| text_of(g, id) == "1 2\n");
    writer.write_all(b" 4\n5 6").unwrap();
    drop(writer);
    wait_until(&rx, &mut got, |g| {
        has(g, id, |e| matches!(e, FollowEvent::EndOfInput { .. }))
    });
    assert_eq!(text_of(&got, id), "1 2\n3 4\n");
    assert!(has(&got, id, |e| *e
        == FollowEvent::EndOfInput {
            dropped: Some(plateau::follow::Partial { line: 3, bytes: 3 })
        }));
    set.stop();
}

#[test]
fn following_leaves_the_file_untouched() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(&p, "a 1\nb 2\nhalf").unwrap();
    let before = (
        fs::read(&p).unwrap(),
        fs::metadata(&p).unwrap().modified().unwrap(),
    );
    let (mut set, rx) = FollowSet::start(FollowOptions::default(), Arc::new(SystemClock)).unwrap();
    let id = set.add_path(&p).unwrap();
    let mut got = Vec::new();
    wait_until(&rx, &mut got, |g| text_of(g, id) == "a 1\nb 2\n");
    set.poll_now();
    set.stop();
    let after = (
        fs::read(&p).unwrap(),
        fs::metadata(&p).unwrap().modified().unwrap(),
    );
    assert_eq!(before, after);
}

#[test]
fn removed_folder_is_polled_then_watched_again() {
    let dir = tempfile::tempdir().unwrap();
    let sub = dir.path().join("job");
    fs::create_dir(&sub).unwrap();
    let p = sub.join("run.log");
    fs::write(&p, "a\n").unwrap();
    let (mut set, rx) = FollowSet::start(FollowOptions::default(), Arc::new(SystemClock)).unwrap();
    let id = set.add_path(&p).unwrap();
    let mut got = Vec::new();
    wait_until(&rx, &mut got, |g| text_of(g, id) == "a\n");
    if !has(&got, id, |e| {
        matches!(e, FollowEvent::Mode(WatchMode::Events { .. }))
    }) {
        eprintln!("skipped: no file events here");
        return;
    }
    fs::remove_dir_all(&sub).unwrap();
    wait_until(&rx, &mut got, |g| {
        has(g, id, |e| matches!(e, FollowEvent::Deleted { .. }))
            && has(
                g,
                id,
                |e| matches!(e, FollowEvent::Mode(WatchMode::PollingFallback { reason, .. }) if reason.contains("removed")),
            )
    });
    fs::create_dir(&sub).unwrap();
    fs::write(&p, "b\n").unwrap();
    set.poll_now();
    wait_until(&rx, &mut got, |g| text_of(g, id) == "a\nb\n");
    // The next stat check watches the folder again.
    let events_again = |g: &[(SourceId, FollowEvent)]| {
        g.iter()
            .rev()
            .find_map(|(s, e)| match e {
                FollowEvent::Mode(m) if *s == id => Some(matches!(m, WatchMode::Events { .. })),
                _ => None,
            })
            .unwrap_or(false)
    };
    wait_until(&rx, &mut got, events_again);
    set.stop();
}

#[cfg(unix)]
#[test]
fn symbolic_link_is_woken_by_events_in_the_target_folder() {
    let link_dir = tempfile::tempdir().unwrap();
    let real_dir = tempfile::tempdir().unwrap();
    let real = real_dir.path().join("run.log");
    fs::write(&real, "a\n").unwrap();
    let link = link_dir.path().join("current.log");
    std::os::unix::fs::symlink(&real, &link).unwrap();
    let options = FollowOptions {
        heartbeat: NEVER,
        ..FollowOptions::default()
    };
    let (mut set, rx) = FollowSet::start(options, Arc::new(SystemClock)).unwrap();
    let id = set.add_path(&link).unwrap();
    let mut got = Vec::new();
    wait_until(&rx, &mut got, |g| text_of(g, id) == "a\n");
    if !has(&got, id, |e| {
        matches!(e, FollowEvent::Mode(WatchMode::Events { .. }))
    }) {
        eprintln!("skipped: no file events here");
        return;
    }
    append(&real, "b\n");
    wait_until(&rx, &mut got, |g| text_of(g, id) == "a\nb\n");
    set.stop();
}

#[test]
fn a_burst_from_another_writer_arrives_complete_in_bounded_batches() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("burst.log");
    fs::write(&p, "").unwrap();
    let options = FollowOptions {
        max_read_bytes: 8192,
        channel_capacity: 4,
        ..FollowOptions::default()
    };
    let (mut set, rx) = FollowSet::start(options, Arc::new(SystemClock)).unwrap();
    let id = set.add_path(&p).unwrap();
    let expected: String = (0..20_000)
        .map(|i| format!("{i} {}.5\n", i % 977))
        .collect();
    let writer = {
        let p = p.clone();
        let text = expected.clone();
        std::thread::spawn(move || {
            let mut f = OpenOptions::new().append(true).open(&p).unwrap();
            // Odd-sized writes so lines are often cut between two writes.
            for chunk in text.as_bytes().chunks(777) {
                f.write_all(chunk).unwrap();
            }
        })
    };
    let mut text = String::new();
    let mut next_line = 1;
    let deadline = Instant::now() + PATIENCE;
    while text.len() < expected.len() {
        let left = deadline.saturating_duration_since(Instant::now());
        let (s, e) = rx.recv_timeout(left).expect("burst did not arrive");
        if let (
            true,
            FollowEvent::Data {
                bytes,
                first_line,
                lines,
                ..
            },
        ) = (s == id, e)
        {
            assert!(bytes.len() <= 8192 + 64, "batch of {} bytes", bytes.len());
            assert_eq!(first_line, next_line);
            next_line += lines;
            text.push_str(std::str::from_utf8(&bytes).unwrap());
        }
    }
    writer.join().unwrap();
    assert_eq!(text, expected);
    set.stop();
}
