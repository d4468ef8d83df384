//! A pseudo-terminal session for the end-to-end tests of the full-screen commands
//! (`watch`, `demo`): plateau runs on the slave side, its output is read on a thread and
//! fed to a terminal emulator (vt100), and the raw bytes are kept too. Nothing asserts on
//! timing: waits have a generous limit ([`PATIENCE`]) that only a failing run reaches.

#![allow(dead_code)] // each test binary uses a part of it

use std::io::{Read, Write};
use std::path::Path;
use std::sync::mpsc::{self, Receiver};
use std::thread;
use std::time::{Duration, Instant};

use portable_pty::{native_pty_system, Child, CommandBuilder, MasterPty, PtySize};

/// How long any wait may last before the test fails.
pub const PATIENCE: Duration = Duration::from_secs(90);

pub struct Session {
    pub master: Box<dyn MasterPty + Send>,
    pub child: Box<dyn Child + Send + Sync>,
    pub writer: Box<dyn Write + Send>,
    output: Receiver<Vec<u8>>,
    pub screen: vt100::Parser,
    /// Every byte plateau wrote to the terminal.
    pub raw: Vec<u8>,
}

impl Session {
    /// Starts plateau with `args` in `dir` on an 80×24 terminal.
    pub fn start(args: &[&str], dir: &Path) -> Session {
        Session::start_with(args, dir, (24, 80), &[])
    }

    /// Starts plateau with `args` in `dir` on a `rows`×`cols` terminal, with `env` set on
    /// top of `TERM=xterm-256color` (and `NO_COLOR` removed).
    pub fn start_with(
        args: &[&str],
        dir: &Path,
        (rows, cols): (u16, u16),
        env: &[(&str, &std::ffi::OsStr)],
    ) -> Session {
        let pair = native_pty_system()
            .openpty(PtySize {
                rows,
                cols,
                pixel_width: 0,
                pixel_height: 0,
            })
            .unwrap();
        let mut cmd = CommandBuilder::new(env!("CARGO_BIN_EXE_plateau"));
        cmd.args(args);
        cmd.cwd(dir);
        cmd.env("TERM", "xterm-256color");
        cmd.env_remove("NO_COLOR");
        for (k, v) in env {
            cmd.env(k, v);
        }
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
            screen: vt100::Parser::new(rows, cols, 0),
            raw: Vec::new(),
        }
    }

    fn take(&mut self, bytes: &[u8]) {
        self.screen.process(bytes);
        self.raw.extend_from_slice(bytes);
    }

    /// Reads output until `done` holds for the screen.
    pub fn wait_for(&mut self, what: &str, done: impl Fn(&vt100::Screen) -> bool) {
        let deadline = Instant::now() + PATIENCE;
        while !done(self.screen.screen()) {
            let left = deadline.saturating_duration_since(Instant::now());
            match self.output.recv_timeout(left) {
                Ok(bytes) => self.take(&bytes),
                Err(_) => panic!(
                    "{what}: not seen; screen:\n{}",
                    self.screen.screen().contents()
                ),
            }
        }
    }

    /// Reads what arrives until the output is quiet for `quiet`.
    pub fn drain(&mut self, quiet: Duration) {
        while let Ok(bytes) = self.output.recv_timeout(quiet) {
            self.take(&bytes);
        }
    }

    pub fn contents(&self) -> String {
        self.screen.screen().contents()
    }

    /// Local modes of the terminal (termios `c_lflag`).
    pub fn local_modes(&self) -> libc::tcflag_t {
        let fd = self.master.as_raw_fd().unwrap();
        // SAFETY: a zeroed termios filled in by tcgetattr on our own descriptor.
        let mut t: libc::termios = unsafe { std::mem::zeroed() };
        assert_eq!(unsafe { libc::tcgetattr(fd, &mut t) }, 0);
        t.c_lflag
    }

    /// Canonical mode and echo on: the terminal as a shell expects it.
    pub fn cooked(&self) -> bool {
        let l = self.local_modes();
        l & libc::ICANON != 0 && l & libc::ECHO != 0
    }

    /// Waits for the process to end; returns its exit code.
    pub fn wait_exit(&mut self) -> u32 {
        let deadline = Instant::now() + PATIENCE;
        loop {
            // Keep reading so the process never blocks on a full terminal.
            while let Ok(bytes) = self.output.try_recv() {
                self.take(&bytes);
            }
            if let Some(status) = self.child.try_wait().unwrap() {
                // The last bytes it wrote (the restore) may still be in the pipe.
                self.drain(Duration::from_millis(300));
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

    /// The terminal is given back: main screen, cursor shown, cooked mode.
    pub fn assert_restored(&self) {
        let s = self.screen.screen();
        assert!(
            !s.alternate_screen(),
            "alternate screen left:\n{}",
            s.contents()
        );
        assert!(!s.hide_cursor(), "cursor hidden");
        assert!(
            self.cooked(),
            "raw mode left on: lflag {:o}",
            self.local_modes()
        );
    }
}
