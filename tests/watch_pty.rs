//! `plateau watch` in a pseudo-terminal, as a user runs it: the screen is read through a
//! terminal emulator (vt100), rows appended by another thread reach the screen, `q` quits,
//! and the terminal's modes are given back (raw mode off, alternate screen left, cursor
//! shown). SIGTERM and SIGHUP restore them too. Nothing asserts on timing: waits have a
//! generous limit and only a failing run reaches it.

#![cfg(unix)]
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::fs::OpenOptions;
use std::io::{Read, Write};
use std::path::Path;
use std::sync::mpsc::{self, Receiver};
use std::thread;
use std::time::{Duration, Instant};

use portable_pty::{native_pty_system, Child, CommandBuilder, MasterPty, PtySize};

use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

const PATIENCE: Duration = Duration::from_secs(60);

struct Session {
    master: Box<dyn MasterPty + Send>,
    child: Box<dyn Child + Send + Sync>,
    writer: Box<dyn Write + Send>,
    output: Receiver<Vec<u8>>,
    screen: vt100::Parser,
}

impl Session {
    fn start(args: &[&str], dir: &Path) -> Session {
        let pair = native_pty_system()
            .openpty(PtySize {
                rows: 24,
                cols: 80,
                pixel_width: 0,
                pixel_height: 0,
            })
            .unwrap();
        let mut cmd = CommandBuilder::new(env!("CARGO_BIN_EXE_plateau"));
        cmd.args(args);
        cmd.cwd(dir);
        cmd.env("TERM", "xterm-256color");
        cmd.env_remove("NO_COLOR");
        let child = pair.slave.spawn_command(cmd).unwrap();
        drop(pair.slave);
        let mut reader = pair.master.try_clone_reader().unwrap();
        let writer = pair.master.take_writer().unwrap();
        let (tx, output) = mpsc::channel();
        thread::spawn(move || {
            let mut buf = [0u8; 8192];
            while let Ok(n) = reader.read(&mut buf) {
                if n == 0 || tx.send(buf[..n].to_vec()).is_err() {
                    return;
                }
            }
        });
        Session {
            master: pair.master,
            child,
            writer,
            output,
            screen: vt100::Parser::new(24, 80, 0),
        }
    }

    /// Reads output until `done` holds for the screen.
    fn wait_for(&mut self, what: &str, done: impl Fn(&vt100::Screen) -> bool) {
        let deadline = Instant::now() + PATIENCE;
        while !done(self.screen.screen()) {
            let left = deadline.saturating_duration_since(Instant::now());
            match self.output.recv_timeout(left) {
                Ok(bytes) => self.screen.process(&bytes),
                Err(_) => panic!(
                    "{what}: not seen; screen:\n{}",
                    self.screen.screen().contents()
                ),
            }
        }
    }

    fn contents(&self) -> String {
        self.screen.screen().contents()
    }

    /// Local modes of the terminal (termios `c_lflag`).
    fn local_modes(&self) -> libc::tcflag_t {
        let fd = self.master.as_raw_fd().unwrap();
        let mut t: libc::termios = unsafe { std::mem::zeroed() };
        assert_eq!(unsafe { libc::tcgetattr(fd, &mut t) }, 0);
        t.c_lflag
    }

    fn cooked(&self) -> bool {
        let l = self.local_modes();
        l & libc::ICANON != 0 && l & libc::ECHO != 0
    }

    /// Waits for the process to end; returns its exit code.
    fn wait_exit(&mut self) -> u32 {
        let deadline = Instant::now() + PATIENCE;
        loop {
            // Keep reading so the process never blocks on a full terminal.
            while let Ok(bytes) = self.output.try_recv() {
                self.screen.process(&bytes);
            }
            if let Some(status) = self.child.try_wait().unwrap() {
                // The last bytes it wrote (the restore) may still be in the pipe.
                while let Ok(bytes) = self.output.recv_timeout(Duration::from_millis(300)) {
                    self.screen.process(&bytes);
                }
                return status.exit_code();
            }
            assert!(
                Instant::now() < deadline,
                "did not exit:\n{}",
                self.contents()
            );
            thread::sleep(Duration::from_millis(20));
        }
    }

    fn assert_restored(&self) {
        let s = self.screen.screen();
        assert!(
            !s.alternate_screen(),
            "alternate screen left:\n{}",
            s.contents()
        );
        assert!(!s.hide_cursor(), "cursor shown");
        assert!(
            self.cooked(),
            "raw mode off: lflag {:o}",
            self.local_modes()
        );
    }
}

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
    s.wait_for("300 rows on screen", |sc| rows_shown(sc) == Some(300));
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
    s.wait_for("700 rows on screen", |sc| rows_shown(sc) == Some(700));
    // The new rows moved the chart's time axis past its first end.
    assert!(s.contents().contains("onset") || s.contents().contains("not equilibrated"));

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
