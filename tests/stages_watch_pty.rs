//! `plateau watch --chain` in a pseudo-terminal, as a user runs it on a preparation whose
//! later stage files are not written yet: the invented five-stage chain
//! (src/scenario/stages.rs), the first two files there at the start, the other three
//! written by another thread later. The run's screen lists the stages, says which file is
//! read and which is awaited, and moves on as the files appear. Nothing asserts on
//! timing: waits have a generous limit and only a failing run reaches it.

#![cfg(unix)]
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::io::Write;
use std::thread;
use std::time::Duration;

#[path = "support/pty.rs"]
mod pty;

use pty::Session;

use plateau::scenario::stages::{five_stage_logs, StagePlan};

const NAMES: [&str; 5] = ["min.log", "heat.log", "nvt.log", "npt.log", "prod.log"];

#[test]
fn watch_chain_lists_the_stages_and_moves_on_as_files_appear() {
    let logs = five_stage_logs(&StagePlan::default());
    let dir = tempfile::tempdir().unwrap();
    for (name, text) in NAMES.iter().zip(&logs.chain).take(2) {
        std::fs::write(dir.path().join(name), text).unwrap();
    }
    let mut args = vec!["watch", "--chain"];
    args.extend(NAMES);
    let mut s = Session::start_with(&args, dir.path(), (30, 100), &[]);
    // One run (its screen at once): two stages so far, the second file read, the third
    // awaited.
    s.wait_for("two stages, nvt.log awaited", |sc| {
        let t = sc.contents();
        t.contains("stages · 2")
            && t.contains("file        2/5 heat.log")
            && t.contains("next        nvt.log (awaited)")
            && t.contains("min.log (chain of 5)")
            && t.contains("minimization")
            && t.contains("heating")
    });
    let first = s.contents();
    assert!(first.contains("min.log (chain of 5)"), "{first}");
    assert!(first.contains("minimization"), "{first}");
    assert!(first.contains("heating"), "{first}");

    // The simulation goes on: the next three stage files, one after another.
    let rest: Vec<(String, String)> = NAMES
        .iter()
        .zip(&logs.chain)
        .skip(2)
        .map(|(n, t)| (n.to_string(), t.clone()))
        .collect();
    let folder = dir.path().to_path_buf();
    let writer = thread::spawn(move || {
        for (name, text) in rest {
            let mut f = std::fs::File::create(folder.join(name)).unwrap();
            let lines: Vec<&str> = text.split_inclusive('\n').collect();
            for piece in lines.chunks(100) {
                f.write_all(piece.concat().as_bytes()).unwrap();
                f.flush().unwrap();
                thread::sleep(Duration::from_millis(30));
            }
            thread::sleep(Duration::from_millis(200));
        }
    });
    writer.join().unwrap();
    s.wait_for("five stages, the last file read", |sc| {
        let t = sc.contents();
        t.contains("stages · 5") && t.contains("5/5 prod.log") && t.contains("production")
    });
    let last = s.contents();
    assert!(last.contains("constant pressure"), "{last}");
    s.writer.write_all(b"q").unwrap();
    assert_eq!(s.wait_exit(), 0);
    s.assert_restored();
}
