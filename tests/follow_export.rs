//! `plateau export` end to end, as a new user would run it: a finished file, standard input,
//! and `--follow` on a file another process writes, through truncation, rotation, deletion
//! and re-creation, with file events and with polling. Waits on output lines, never on time.
//!
//! Logs here are invented by hand. CSV quoting rules: RFC 4180; JSON: RFC 8259 (non-finite
//! numbers as strings per the product Contract).

// Test helpers may unwrap: a failure there is a test failure.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use std::fs::{self, OpenOptions};
use std::io::{BufRead, BufReader, Write};
use std::path::Path;
use std::process::{Child, Command, Stdio};
use std::sync::mpsc::{self, Receiver};
use std::thread;
use std::time::{Duration, Instant};

const PATIENCE: Duration = Duration::from_secs(20);

fn plateau() -> Command {
    Command::new(env!("CARGO_BIN_EXE_plateau"))
}

fn append(path: &Path, bytes: &str) {
    let mut f = OpenOptions::new().append(true).open(path).unwrap();
    f.write_all(bytes.as_bytes()).unwrap();
}

/// A running `plateau export --follow`, its output lines arriving on a channel.
struct Live {
    child: Child,
    lines: Receiver<String>,
    got: Vec<String>,
}

impl Live {
    fn start(args: &[&str]) -> Live {
        let mut child = plateau()
            .args(args)
            .stdout(Stdio::piped())
            .stderr(Stdio::null())
            .spawn()
            .unwrap();
        let stdout = child.stdout.take().unwrap();
        let (tx, lines) = mpsc::channel();
        thread::spawn(move || {
            for line in BufReader::new(stdout).lines() {
                let Ok(line) = line else { return };
                if tx.send(line).is_err() {
                    return;
                }
            }
        });
        Live {
            child,
            lines,
            got: Vec::new(),
        }
    }

    /// Waits until the output holds `expected` (all lines so far, in order).
    fn expect(&mut self, expected: &[&str]) {
        let deadline = Instant::now() + PATIENCE;
        while self.got.len() < expected.len() {
            let left = deadline.saturating_duration_since(Instant::now());
            match self.lines.recv_timeout(left) {
                Ok(l) => self.got.push(l),
                Err(e) => panic!("{e}: got {:#?}, expected {expected:#?}", self.got),
            }
        }
        assert_eq!(self.got, expected);
    }
}

impl Drop for Live {
    fn drop(&mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

const HEADER: &str = "segment,line,step,temp (K),press (bar)";

fn follow_through_everything(extra: &[&str]) {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("md.log");
    let ps = p.to_str().unwrap();
    let mut args = vec!["export", "--follow", ps];
    args.extend_from_slice(extra);
    // Started before the file exists: a queued job.
    let mut live = Live::start(&args);
    fs::write(&p, "step temp press\n0 300 1.0\n").unwrap();
    let mut want = vec![HEADER, "1,2,0,300,1"];
    live.expect(&want);
    // A half-written row, then its end.
    append(&p, "10 301 1.");
    append(&p, "5\n20 302 2.0\n");
    want.extend(["1,3,10,301,1.5", "1,4,20,302,2"]);
    live.expect(&want);
    // Truncated and rewritten: a new segment, lines from 1 again.
    fs::write(&p, "step temp press\n0 310 3.0\n").unwrap();
    want.extend([HEADER, "2,2,0,310,3"]);
    live.expect(&want);
    // Rotated: the old file keeps its last row, the new one is read from its start.
    append(&p, "10 311 3.5\n");
    fs::rename(&p, dir.path().join("md.log.1")).unwrap();
    fs::write(&p, "step temp press\n0 320 4.0\n").unwrap();
    want.extend(["2,3,10,311,3.5", HEADER, "3,2,0,320,4"]);
    live.expect(&want);
    // Deleted and re-created.
    fs::remove_file(&p).unwrap();
    fs::write(&p, "step temp press\n0 330 5.0\n").unwrap();
    want.extend([HEADER, "4,2,0,330,5"]);
    live.expect(&want);
}

#[test]
fn export_follow_with_file_events() {
    follow_through_everything(&[]);
}

#[test]
fn export_follow_with_polling() {
    follow_through_everything(&["--poll", "--poll-interval", "50ms"]);
}

#[test]
fn export_finished_file_as_csv_tsv_and_jsonl() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("run.log");
    fs::write(
        &p,
        "# invented NVT run\nstep temp(K) etot(kcal/mol)\n0 300 -10\n100 nan 1e-7\n200 301 ****\n300 302",
    )
    .unwrap();
    let run = |format: &str| {
        let out = plateau()
            .args(["export", "--format", format, p.to_str().unwrap()])
            .output()
            .unwrap();
        assert!(out.status.success(), "{out:?}");
        (
            String::from_utf8(out.stdout).unwrap(),
            String::from_utf8(out.stderr).unwrap(),
        )
    };
    // kcal/mol to kJ/mol: exactly 4.184 (thermochemical calorie, NIST SP 811 appendix B).
    let (csv, err) = run("csv");
    assert_eq!(
        csv,
        "segment,line,step,temp (K),etot (kJ/mol)\n\
         1,3,0,300,-41.84\n\
         1,4,100,nan,4.184e-7\n\
         1,5,200,301,nan\n"
    );
    assert!(err.contains("line 6 has no newline"), "{err}");
    let (tsv, _) = run("tsv");
    assert_eq!(tsv.lines().nth(1), Some("1\t3\t0\t300\t-41.84"));
    let (jsonl, _) = run("jsonl");
    let rows: Vec<serde_json::Value> = jsonl
        .lines()
        .map(|l| serde_json::from_str(l).unwrap())
        .collect();
    assert_eq!(rows.len(), 3);
    assert_eq!(rows[0]["line"], 3);
    assert_eq!(rows[0]["etot"], -41.84);
    assert_eq!(rows[1]["temp"], "nan");
}

#[test]
fn export_standard_input_until_it_ends() {
    standard_input(&["export", "-", "--format", "jsonl"]);
    // `ssh host tail -F run.log | plateau export --follow -` ends when the pipe closes.
    standard_input(&["export", "--follow", "-", "--format", "jsonl"]);
}

fn standard_input(args: &[&str]) {
    let mut child = plateau()
        .args(args)
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    let mut stdin = child.stdin.take().unwrap();
    stdin
        .write_all(b"step temp\r\n0 300\r\n10 301\r\n20 30")
        .unwrap();
    drop(stdin);
    let out = child.wait_with_output().unwrap();
    assert!(out.status.success());
    assert_eq!(
        String::from_utf8(out.stdout).unwrap(),
        "{\"segment\":1,\"line\":2,\"step\":0,\"temp\":300}\n\
         {\"segment\":1,\"line\":3,\"step\":10,\"temp\":301}\n"
    );
    let err = String::from_utf8(out.stderr).unwrap();
    assert!(err.contains("line 4 has no newline"), "{err}");
}

#[test]
fn export_of_a_missing_file_without_follow_fails_with_its_path() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("nope.log");
    let out = plateau()
        .args(["export", p.to_str().unwrap()])
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(2));
    assert!(String::from_utf8(out.stderr).unwrap().contains("nope.log"));
}

#[test]
fn export_follow_leaves_the_file_untouched() {
    let dir = tempfile::tempdir().unwrap();
    let p = dir.path().join("md.log");
    fs::write(&p, "step temp press\n0 300 1.0\n10 301").unwrap();
    let before = (
        fs::read(&p).unwrap(),
        fs::metadata(&p).unwrap().modified().unwrap(),
    );
    let mut live = Live::start(&["export", "--follow", p.to_str().unwrap()]);
    live.expect(&[HEADER, "1,2,0,300,1"]);
    drop(live);
    let after = (
        fs::read(&p).unwrap(),
        fs::metadata(&p).unwrap().modified().unwrap(),
    );
    assert_eq!(before, after);
}
