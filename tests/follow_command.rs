//! Command sources: a command's standard output followed, restarted when it exits, resumed
//! at a byte offset without losing or repeating a line. The commands are small POSIX shell
//! lines (`sh`, `tail`, `head`, `printf`), so these tests need a Unix system.
#![cfg(unix)]
// Test helpers may unwrap: a failure there is a test failure.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use std::sync::atomic::{AtomicU32, Ordering};
use std::sync::Arc;
use std::time::{Duration, Instant};

use plateau::follow::{
    AlwaysRestart, Backoff, CommandSource, CommandSpec, FollowEvent, FollowOptions, FollowSet,
    Partial, Restart, RestartPolicy, Source, Step, SystemClock, WatchMode, START_BYTE,
};

const PATIENCE: Duration = Duration::from_secs(30);

/// Restarts at once, so that the tests do not wait.
fn quick() -> Backoff {
    Backoff {
        first: Duration::from_millis(1),
        max: Duration::from_millis(1),
        settled: Duration::from_secs(30),
    }
}

fn sh(script: &str, args: &[&str]) -> CommandSpec {
    let mut words = vec!["sh", "-c", script, "sh"];
    words.extend_from_slice(args);
    CommandSpec::from_words(&words).unwrap()
}

fn source(spec: CommandSpec, policy: Box<dyn RestartPolicy>) -> CommandSource {
    let (source, _control) = CommandSource::new(
        "test",
        spec,
        policy,
        quick(),
        Arc::new(SystemClock),
        &FollowOptions::default(),
    );
    source
}

/// Steps `source` by hand until it finishes; returns every event.
fn run_to_end(source: &mut CommandSource) -> Vec<FollowEvent> {
    let deadline = Instant::now() + PATIENCE;
    let mut events = Vec::new();
    while source.step(&mut events) != Step::Finished {
        assert!(Instant::now() < deadline, "never finished: {events:?}");
    }
    events
}

/// Restarts `n` times, then lets the source end.
fn restart_times(n: u32) -> Box<dyn RestartPolicy> {
    let left = AtomicU32::new(n);
    Box::new(move || {
        if left.load(Ordering::Relaxed) == 0 {
            Restart::No
        } else {
            left.fetch_sub(1, Ordering::Relaxed);
            Restart::Yes
        }
    })
}

/// The lines handed out, each with its line number, checking that numbers follow on.
fn numbered_lines(events: &[FollowEvent]) -> Vec<(u64, String)> {
    let mut out = Vec::new();
    for e in events {
        if let FollowEvent::Data {
            bytes,
            first_line,
            lines,
            ..
        } = e
        {
            let text = String::from_utf8(bytes.clone()).unwrap();
            let got: Vec<&str> = text.split_inclusive('\n').collect();
            assert_eq!(got.len() as u64, *lines);
            for (k, l) in got.into_iter().enumerate() {
                out.push((first_line + k as u64, l.to_string()));
            }
        }
    }
    out
}

fn invented_log(rows: usize) -> String {
    let mut s = String::from("# step temperature potential\n");
    for i in 0..rows {
        s.push_str(&format!(
            "{} {:.3} {:.4}\n",
            i * 10,
            300.0 + (i % 7) as f64,
            -1000.0 - (i % 13) as f64
        ));
    }
    s
}

#[test]
fn lines_then_end_of_input_with_the_unfinished_line() {
    let mut s = source(sh("printf 'a 1\\nb 2\\nc'", &[]), restart_times(0));
    let events = run_to_end(&mut s);
    assert_eq!(
        numbered_lines(&events),
        vec![(1, "a 1\n".to_string()), (2, "b 2\n".to_string())]
    );
    assert_eq!(
        events.last(),
        Some(&FollowEvent::EndOfInput {
            dropped: Some(Partial { line: 3, bytes: 1 })
        })
    );
    assert!(events.contains(&FollowEvent::Mode(WatchMode::Command {
        restarts: 0,
        note: None
    })));
}

/// A command cut off at arbitrary byte counts (mid-line, mid-number) and restarted many
/// times at the offset it is given: the lines handed out are the file's, each once, in
/// order, numbered on without a gap.
#[test]
fn resumed_command_loses_and_repeats_no_line() {
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("run.log");
    let mut text = invented_log(300);
    text.push_str("3000 300.1"); // an unfinished last line
    std::fs::write(&log, &text).unwrap();
    let counter = dir.path().join("count");
    std::fs::write(&counter, "0").unwrap();
    // Each run gives between 1 and 300 bytes from the offset asked for, then exits.
    let script = r#"n=$(cat "$3"); echo $((n + 1)) > "$3"
tail -c +"$1" "$2" | head -c $(( (n * 7919) % 300 + 1 ))"#;
    let spec = sh(
        script,
        &[START_BYTE, log.to_str().unwrap(), counter.to_str().unwrap()],
    );
    assert!(spec.resumes());
    let mut s = source(spec, restart_times(150));
    let events = run_to_end(&mut s);
    let got = numbered_lines(&events);
    let want: Vec<(u64, String)> = text
        .split_inclusive('\n')
        .filter(|l| l.ends_with('\n'))
        .enumerate()
        .map(|(i, l)| (i as u64 + 1, l.to_string()))
        .collect();
    assert_eq!(got, want);
    assert!(!events
        .iter()
        .any(|e| matches!(e, FollowEvent::Truncated { .. })));
    assert_eq!(
        events.last(),
        Some(&FollowEvent::EndOfInput {
            dropped: Some(Partial {
                line: 302,
                bytes: 10
            })
        })
    );
    assert!(s.restarts() > 10, "the test must really restart");
}

/// The file is replaced while no command reads it: the bytes before the offset no longer
/// match, so reading starts again from byte 1 as a new generation.
#[test]
fn file_replaced_between_runs_starts_a_new_generation() {
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("run.log");
    std::fs::write(&log, "0 1.0\n10 1.5\n20 2.0\n").unwrap();
    let spec = sh(
        r#"tail -c +"$1" "$2""#,
        &[START_BYTE, log.to_str().unwrap()],
    );
    let path = log.clone();
    let runs = AtomicU32::new(0);
    let policy = Box::new(move || match runs.fetch_add(1, Ordering::Relaxed) {
        0 => {
            // Rewritten from the start with other rows, longer than before.
            std::fs::write(&path, "0 9.0\n10 9.5\n20 9.9\n30 8.0\n").unwrap();
            Restart::Yes
        }
        _ => Restart::No,
    });
    let mut s = source(spec, policy);
    let events = run_to_end(&mut s);
    let truncated = events
        .iter()
        .position(|e| matches!(e, FollowEvent::Truncated { .. }))
        .expect("a new generation");
    assert_eq!(
        numbered_lines(&events[..truncated]),
        vec![
            (1, "0 1.0\n".to_string()),
            (2, "10 1.5\n".to_string()),
            (3, "20 2.0\n".to_string())
        ]
    );
    assert_eq!(
        numbered_lines(&events[truncated..]),
        vec![
            (1, "0 9.0\n".to_string()),
            (2, "10 9.5\n".to_string()),
            (3, "20 9.9\n".to_string()),
            (4, "30 8.0\n".to_string())
        ]
    );
}

/// Without the offset placeholder a restarted command starts over: each run is a new
/// generation, numbered from 1, and the restarts are reported.
#[test]
fn command_without_offset_starts_over() {
    let mut s = source(sh("printf 'x\\ny\\n'", &[]), restart_times(2));
    let events = run_to_end(&mut s);
    let truncations = events
        .iter()
        .filter(|e| matches!(e, FollowEvent::Truncated { .. }))
        .count();
    assert_eq!(truncations, 2);
    let lines = numbered_lines(&events);
    assert_eq!(lines.len(), 6);
    assert!(lines.chunks(2).all(|c| c[0].0 == 1 && c[1].0 == 2));
    let restarts: Vec<u32> = events
        .iter()
        .filter_map(|e| match e {
            FollowEvent::Mode(WatchMode::Command {
                restarts,
                note: Some(_),
            }) => Some(*restarts),
            _ => None,
        })
        .collect();
    assert_eq!(restarts, vec![1, 2]);
}

/// How the command exited and what it said on standard error reach the user.
#[test]
fn exit_status_and_standard_error_are_reported() {
    let mut s = source(sh("echo 'no such job' >&2; exit 3", &[]), restart_times(1));
    let events = run_to_end(&mut s);
    let note = events
        .iter()
        .find_map(|e| match e {
            FollowEvent::Mode(WatchMode::Command { note: Some(n), .. }) => Some(n.clone()),
            _ => None,
        })
        .unwrap();
    assert!(note.contains("status 3"), "{note}");
    assert!(note.contains("no such job"), "{note}");
    assert!(note.contains("starting it again"), "{note}");
}

/// "Cannot tell" from the policy waits and asks again; it never restarts meanwhile.
#[test]
fn policy_that_cannot_tell_is_asked_again() {
    let asked = Arc::new(AtomicU32::new(0));
    let count = asked.clone();
    let policy = Box::new(move || match count.fetch_add(1, Ordering::Relaxed) {
        0 | 1 => Restart::AskAgain("the scheduler did not answer".into()),
        _ => Restart::No,
    });
    let mut s = source(sh("printf 'a\\n'", &[]), policy);
    let events = run_to_end(&mut s);
    assert_eq!(asked.load(Ordering::Relaxed), 3);
    assert_eq!(numbered_lines(&events).len(), 1, "started once only");
    assert!(
        events.iter().any(|e| matches!(e,
        FollowEvent::Mode(WatchMode::Command { note: Some(n), .. }) if n.contains("asking again")))
    );
}

#[test]
fn missing_program_is_an_error_and_ends_the_source() {
    let spec = CommandSpec::from_words(&["/nonexistent/plateau-no-such-program"]).unwrap();
    let mut s = source(spec, Box::new(AlwaysRestart));
    let events = run_to_end(&mut s);
    assert!(
        matches!(&events[0], FollowEvent::Error { message, .. } if message.contains("cannot run"))
    );
    assert!(matches!(
        events.last(),
        Some(FollowEvent::EndOfInput { .. })
    ));
}

/// In a follow set: the command gets its own thread; `stop` ends a command that would run
/// for ever, and the source reports the end of its input.
#[test]
fn stop_ends_a_command_that_never_exits() {
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("run.log");
    std::fs::write(&log, "1 2\n").unwrap();
    let (mut set, rx) = FollowSet::start(FollowOptions::default(), Arc::new(SystemClock)).unwrap();
    let spec = sh(
        r#"tail -c +"$1" "$2"; exec sleep 1000"#,
        &[START_BYTE, log.to_str().unwrap()],
    );
    let (id, control) = set
        .add_command("run.log on node", spec, Box::new(AlwaysRestart), quick())
        .unwrap();
    let deadline = Instant::now() + PATIENCE;
    let mut stopped = false;
    loop {
        let (from, event) = rx
            .recv_timeout(deadline.saturating_duration_since(Instant::now()))
            .expect("events");
        assert_eq!(from, id);
        match event {
            FollowEvent::Data { bytes, .. } => {
                assert_eq!(bytes, b"1 2\n");
                control.stop();
                stopped = true;
            }
            FollowEvent::EndOfInput { dropped } => {
                assert!(stopped);
                assert_eq!(dropped, None);
                break;
            }
            FollowEvent::Mode(WatchMode::Command { note: None, .. }) => {}
            other => panic!("unexpected {other:?}"),
        }
    }
    assert!(control.is_finished());
    set.stop();
}

/// `finish_within`: no restart, and a command still running after the grace is ended.
#[test]
fn finish_within_ends_a_lingering_command() {
    let (mut s, control) = CommandSource::new(
        "test",
        sh("printf 'a\\n'; exec sleep 1000", &[]),
        Box::new(AlwaysRestart),
        quick(),
        Arc::new(SystemClock),
        &FollowOptions::default(),
    );
    let mut events = Vec::new();
    // Started, and its first line read.
    while numbered_lines(&events).is_empty() {
        s.step(&mut events);
    }
    control.finish_within(Duration::from_millis(50));
    let rest = run_to_end(&mut s);
    assert!(matches!(
        rest.last(),
        Some(FollowEvent::EndOfInput { dropped: None })
    ));
}

#[test]
fn words_and_display() {
    assert!(CommandSpec::from_words::<&str>(&[]).is_none());
    let spec =
        CommandSpec::from_words(&["tail", "-c", "+{start-byte}", "-F", "my run.log"]).unwrap();
    assert_eq!(spec.display(), "tail -c +{start-byte} -F 'my run.log'");
    assert_eq!(
        spec.args_from(42)
            .iter()
            .map(|a| a.to_str().unwrap())
            .collect::<Vec<_>>(),
        vec!["-c", "+42", "-F", "my run.log"]
    );
    assert!(!CommandSpec::from_words(&["cat", "x"]).unwrap().resumes());
}
