//! Model-based test of the file follower: random sequences of write / partial write /
//! truncate / rotate / delete / re-create, checked against an in-memory model of the lines
//! that must come out — nothing lost, nothing twice, right line numbers.
//!
//! Approach after the model-based file-watcher tests of vectordotdev/vector
//! (`lib/file-source/src/file_watcher/tests/`), with our own semantics:
//! - a line comes out once its `\n` is written, numbered from 1 within its file generation;
//! - truncation, rotation and deletion end a generation; the unfinished line is given up and
//!   reported with the event; lines written again after truncation count as new;
//! - the follower is checked (one wake-up) after each destructive action, and also before a
//!   truncation (bytes truncated before anyone looked at them are gone for any reader);
//!   writes may pile up between checks, and a rotated or deleted file is drained afterwards.

// Test helpers may unwrap: a failure there is a test failure.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use std::fs::{self, OpenOptions};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::Arc;

use plateau::follow::{FileFollower, FollowEvent, FollowOptions, Partial, Step, SystemClock};
use proptest::prelude::*;

#[derive(Debug, Clone)]
enum Action {
    /// Append complete lines.
    Write(u8),
    /// Append bytes without a newline (the end of a line that may come later).
    PartialWrite(u8),
    Truncate,
    /// Rename the file away and create a new empty one under the name.
    Rotate,
    Delete,
    Recreate,
    /// A wake-up with nothing else.
    Check,
}

fn action() -> impl Strategy<Value = Action> {
    prop_oneof![
        5 => (1u8..5).prop_map(Action::Write),
        3 => (1u8..12).prop_map(Action::PartialWrite),
        1 => Just(Action::Truncate),
        1 => Just(Action::Rotate),
        1 => Just(Action::Delete),
        1 => Just(Action::Recreate),
        3 => Just(Action::Check),
    ]
}

#[derive(Debug, Clone, PartialEq)]
enum Ev {
    Line(u64, Vec<u8>),
    Truncated(Option<Partial>),
    Rotated(Option<Partial>),
    Deleted(Option<Partial>),
    Appeared,
    Waiting,
}

/// What the file holds and what the follower has been expected to hand out from it.
struct Model {
    /// Content of the file under the name, `None` if missing.
    content: Option<Vec<u8>>,
    /// Bytes of `content` already handed out as complete lines.
    emitted: usize,
    next_line: u64,
    counter: u32,
    expected: Vec<Ev>,
}

impl Model {
    /// What one wake-up must report: the complete lines written since the last one.
    fn check(&mut self) {
        let Some(content) = &self.content else {
            return;
        };
        let rest = &content[self.emitted..];
        let mut used = 0;
        for l in rest.split_inclusive(|b| *b == b'\n') {
            if l.last() != Some(&b'\n') {
                break;
            }
            self.expected.push(Ev::Line(self.next_line, l.to_vec()));
            self.next_line += 1;
            used += l.len();
        }
        self.emitted += used;
    }

    /// The unfinished line given up when a generation ends.
    fn dropped(&self) -> Option<Partial> {
        let content = self.content.as_ref()?;
        let bytes = content.len() - self.emitted;
        (bytes > 0).then_some(Partial {
            line: self.next_line,
            bytes,
        })
    }

    fn new_generation(&mut self, content: Option<Vec<u8>>) {
        self.content = content;
        self.emitted = 0;
        self.next_line = 1;
    }
}

fn drive(f: &mut FileFollower, got: &mut Vec<Ev>) {
    let mut out = Vec::new();
    while f.poll(&mut out) == Step::More {}
    for e in out {
        match e {
            FollowEvent::Data {
                bytes,
                first_line,
                lines,
                ..
            } => {
                let split: Vec<_> = bytes.split_inclusive(|b| *b == b'\n').collect();
                assert_eq!(split.len() as u64, lines);
                for (k, l) in split.into_iter().enumerate() {
                    got.push(Ev::Line(first_line + k as u64, l.to_vec()));
                }
            }
            FollowEvent::Truncated { dropped } => got.push(Ev::Truncated(dropped)),
            FollowEvent::Rotated { dropped } => got.push(Ev::Rotated(dropped)),
            FollowEvent::Deleted { dropped } => got.push(Ev::Deleted(dropped)),
            FollowEvent::Appeared => got.push(Ev::Appeared),
            FollowEvent::Waiting => got.push(Ev::Waiting),
            other => panic!("unexpected event {other:?}"),
        }
    }
}

fn append(path: &Path, bytes: &[u8]) {
    let mut f = OpenOptions::new().append(true).open(path).unwrap();
    f.write_all(bytes).unwrap();
}

fn run(actions: &[Action], max_read: usize) {
    let dir = tempfile::tempdir().unwrap();
    let path: PathBuf = dir.path().join("run.log");
    fs::write(&path, b"").unwrap();
    let options = FollowOptions {
        max_read_bytes: max_read,
        ..FollowOptions::default()
    };
    let mut f = FileFollower::new(&path, Arc::new(SystemClock), &options);
    let mut model = Model {
        content: Some(Vec::new()),
        emitted: 0,
        next_line: 1,
        counter: 0,
        expected: Vec::new(),
    };
    let mut got = Vec::new();
    drive(&mut f, &mut got);
    let mut rotated = 0;
    for a in actions {
        let exists = model.content.is_some();
        match a {
            Action::Write(n) if exists => {
                let mut bytes = Vec::new();
                for _ in 0..*n {
                    model.counter += 1;
                    bytes.extend_from_slice(format!("{} 1.5e2\n", model.counter).as_bytes());
                }
                append(&path, &bytes);
                model
                    .content
                    .get_or_insert_default()
                    .extend_from_slice(&bytes);
            }
            Action::PartialWrite(n) if exists => {
                model.counter += 1;
                let bytes = format!("{}{}", model.counter, "x".repeat(*n as usize)).into_bytes();
                append(&path, &bytes);
                model
                    .content
                    .get_or_insert_default()
                    .extend_from_slice(&bytes);
            }
            Action::Truncate if exists => {
                drive(&mut f, &mut got);
                model.check();
                OpenOptions::new()
                    .write(true)
                    .truncate(true)
                    .open(&path)
                    .unwrap();
                // An empty file truncated to empty shows no change.
                if model.content.as_ref().is_some_and(|c| !c.is_empty()) {
                    model.expected.push(Ev::Truncated(model.dropped()));
                }
                model.new_generation(Some(Vec::new()));
                drive(&mut f, &mut got);
            }
            Action::Rotate if exists => {
                // No check before: the follower still holds the old file and must drain it.
                model.check();
                rotated += 1;
                fs::rename(&path, dir.path().join(format!("run.log.{rotated}"))).unwrap();
                fs::write(&path, b"").unwrap();
                model.expected.push(Ev::Rotated(model.dropped()));
                model.new_generation(Some(Vec::new()));
                drive(&mut f, &mut got);
            }
            Action::Delete if exists => {
                // No check before: the follower still holds the old file and must drain it.
                model.check();
                fs::remove_file(&path).unwrap();
                model.expected.push(Ev::Deleted(model.dropped()));
                model.new_generation(None);
                drive(&mut f, &mut got);
            }
            Action::Recreate if !exists => {
                fs::write(&path, b"").unwrap();
                model.expected.push(Ev::Appeared);
                model.new_generation(Some(Vec::new()));
                drive(&mut f, &mut got);
            }
            Action::Check => {
                drive(&mut f, &mut got);
                model.check();
            }
            _ => {}
        }
    }
    drive(&mut f, &mut got);
    model.check();
    assert_eq!(got, model.expected, "actions: {actions:?}");
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(128))]

    #[test]
    fn follower_matches_the_model(
        actions in proptest::collection::vec(action(), 1..40),
        small_reads in any::<bool>(),
    ) {
        // Small reads exercise draining in many steps (bursts, draining a rotated file).
        run(&actions, if small_reads { 7 } else { 1 << 20 });
    }
}

#[test]
fn model_example_with_every_action() {
    use Action::*;
    run(
        &[
            Write(2),
            PartialWrite(3),
            Check,
            Write(1),
            Truncate,
            Write(1),
            PartialWrite(2),
            Rotate,
            Write(3),
            Delete,
            Recreate,
            PartialWrite(1),
            Write(1),
            Check,
        ],
        5,
    );
}
