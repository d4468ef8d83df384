//! `plateau watch` under signals and hostile text, in a pseudo-terminal read through a
//! terminal emulator (vt100), with the helpers of `tests/watch_pty.rs`:
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
    /// Every byte plateau wrote to the terminal.
    raw: Vec<u8>,
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
            raw: Vec::new(),
        }
    }

    /// Reads output until `done` holds for the screen.
    fn wait_for(&mut self, what: &str, done: impl Fn(&vt100::Screen) -> bool) {
        let deadline = Instant::now() + PATIENCE;
        while !done(self.screen.screen()) {
            let left = deadline.saturating_duration_since(Instant::now());
            match self.output.recv_timeout(left) {
                Ok(bytes) => {
                    self.screen.process(&bytes);
                    self.raw.extend_from_slice(&bytes);
                }
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
                self.raw.extend_from_slice(&bytes);
            }
            if let Some(status) = self.child.try_wait().unwrap() {
                // The last bytes it wrote (the restore) may still be in the pipe.
                while let Ok(bytes) = self.output.recv_timeout(Duration::from_millis(300)) {
                    self.screen.process(&bytes);
                    self.raw.extend_from_slice(&bytes);
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
    while let Ok(bytes) = s.output.recv_timeout(Duration::from_millis(300)) {
        s.screen.process(&bytes);
    }
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
