//! A source reading a command's standard output, started and restarted by plateau.
//!
//! The command is an argument list, run without a shell (a user who wants one writes
//! `sh -c ...` themselves). When it exits, a [`RestartPolicy`] decides: start it again
//! (with a back-off that doubles from `first_delay` to `max_delay`), ask again later (the
//! scheduler could not tell whether the job still runs), or end the source (the job ended).
//!
//! **No row twice, none lost, across a restart.** A command whose arguments contain
//! [`START_BYTE`] is *resumable*: the placeholder is replaced by the 1-based position of the
//! first byte wanted, as `tail -c +N -F PATH` expects. plateau keeps the position of the
//! start of the unfinished line (what was read minus the held-back part) and restarts the
//! command a little before it: the first [`OVERLAP`] bytes it gives again must be the last
//! bytes already read. When they are, reading goes on where it stopped, with the same line
//! numbers; the unfinished line comes again whole. When they are not, the file was
//! truncated or replaced while no command was reading it: plateau reports
//! [`FollowEvent::Truncated`] and starts the command again from byte 1, a new generation
//! (the Contract's restart rule then replaces the rows given again). Byte offsets were
//! chosen over line numbers (`tail -n +LINE`) because `tail -c +N` seeks (a line number
//! makes the node read the whole file again at each reconnect) and because the bytes just
//! before the offset can be checked.
//!
//! A command without the placeholder starts again from its own beginning: every restart is
//! a new generation ([`FollowEvent::Truncated`]) and the Contract's restart rule replaces
//! the rows it gives again.
//!
//! The command runs in its own process group (a Ctrl-C at the terminal is plateau's, not
//! the command's) with standard input closed; on Linux it is also sent SIGTERM if the
//! thread that started it ends (plateau killed), so no reader is left behind on a node.
//! Its standard error is kept (the last lines) and shown when it exits.

use std::collections::VecDeque;
use std::ffi::{OsStr, OsString};
use std::io::{self, BufRead, BufReader, Read};
use std::path::PathBuf;
use std::process::{Child, ChildStdout, Command, ExitStatus, Stdio};
use std::sync::mpsc;
use std::sync::{Arc, Condvar, Mutex, MutexGuard};
use std::thread;
use std::time::{Duration, Instant};

use super::lines::{keep_last, LineSplitter, Piece};
use super::{Clock, FollowEvent, FollowOptions, Partial, Source, Step, WatchMode};

/// Placeholder in a command's arguments for the 1-based position of the first byte wanted.
pub const START_BYTE: &str = "{start-byte}";

/// How many bytes before the resume position a restarted command must give again, and
/// match, before its output is taken as the continuation.
pub const OVERLAP: usize = 64;

/// Standard error lines kept from one run of the command.
const STDERR_LINES: usize = 3;
/// Longest standard error line kept (characters).
const STDERR_LINE_CHARS: usize = 200;
/// How long a command may run on after closing its standard output before it is ended.
const EXIT_GRACE: Duration = Duration::from_secs(1);
/// How long to wait for the rest of standard error once the command has exited.
const STDERR_WAIT: Duration = Duration::from_millis(200);

/// A command as an argument list: the program and its arguments, no shell.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CommandSpec {
    program: OsString,
    args: Vec<OsString>,
}

impl CommandSpec {
    /// `program` with `args`.
    pub fn new<A: Into<OsString>>(
        program: impl Into<OsString>,
        args: impl IntoIterator<Item = A>,
    ) -> Self {
        Self {
            program: program.into(),
            args: args.into_iter().map(Into::into).collect(),
        }
    }

    /// The first word is the program, the others its arguments; `None` for an empty list.
    pub fn from_words<S: AsRef<OsStr>>(words: &[S]) -> Option<Self> {
        let (program, args) = words.split_first()?;
        if program.as_ref().is_empty() {
            return None;
        }
        Some(Self::new(
            program.as_ref(),
            args.iter().map(|a| a.as_ref().to_os_string()),
        ))
    }

    /// The program run.
    pub fn program(&self) -> &OsStr {
        &self.program
    }

    /// Its arguments, placeholders not yet replaced.
    pub fn args(&self) -> &[OsString] {
        &self.args
    }

    /// `true` if an argument holds [`START_BYTE`]: the command can resume at an offset.
    pub fn resumes(&self) -> bool {
        self.args
            .iter()
            .any(|a| a.to_str().is_some_and(|s| s.contains(START_BYTE)))
    }

    /// The arguments with [`START_BYTE`] replaced by `start_byte`.
    pub fn args_from(&self, start_byte: u64) -> Vec<OsString> {
        let n = start_byte.to_string();
        self.args
            .iter()
            .map(|a| match a.to_str() {
                Some(s) if s.contains(START_BYTE) => OsString::from(s.replace(START_BYTE, &n)),
                _ => a.clone(),
            })
            .collect()
    }

    /// The command as one line for messages, each word quoted when it needs it.
    pub fn display(&self) -> String {
        std::iter::once(&self.program)
            .chain(&self.args)
            .map(|w| quote_word(&w.to_string_lossy()))
            .collect::<Vec<_>>()
            .join(" ")
    }
}

/// A word as a POSIX shell would need it to read it back (for showing only).
fn quote_word(word: &str) -> String {
    let plain = !word.is_empty()
        && word
            .chars()
            .all(|c| c.is_ascii_alphanumeric() || "-_./:=+,@%{}".contains(c));
    if plain {
        word.to_string()
    } else {
        format!("'{}'", word.replace('\'', r"'\''"))
    }
}

/// What to do once the command has exited.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Restart {
    /// Start it again (after the back-off delay).
    Yes,
    /// Cannot tell now (`reason`): ask again after the back-off delay.
    AskAgain(String),
    /// The source is finished (its job ended).
    No,
}

/// Decides whether a command that exited is started again.
pub trait RestartPolicy: Send {
    /// Asked each time the command has exited on its own.
    fn after_exit(&mut self) -> Restart;
}

impl<F: FnMut() -> Restart + Send> RestartPolicy for F {
    fn after_exit(&mut self) -> Restart {
        self()
    }
}

/// Restarts the command whenever it exits (a command not tied to a job).
#[derive(Debug, Clone, Copy, Default)]
pub struct AlwaysRestart;

impl RestartPolicy for AlwaysRestart {
    fn after_exit(&mut self) -> Restart {
        Restart::Yes
    }
}

/// Delays between restarts: `first`, doubled after each quick failure, at most `max`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Backoff {
    /// Delay before the first restart (default 1 s).
    pub first: Duration,
    /// Longest delay (default 30 s).
    pub max: Duration,
    /// A run that delivered data or lasted this long starts the delays again at `first`
    /// (default 30 s).
    pub settled: Duration,
}

impl Default for Backoff {
    fn default() -> Self {
        Self {
            first: Duration::from_secs(1),
            max: Duration::from_secs(30),
            settled: Duration::from_secs(30),
        }
    }
}

/// Shared between a [`CommandSource`] and its [`CommandControl`]s.
#[derive(Debug, Default)]
struct Shared {
    state: Mutex<Control>,
    wake: Condvar,
}

#[derive(Debug, Default)]
struct Control {
    /// The running command, while one runs.
    child: Option<Child>,
    /// No more restarts: the source ends when the command exits.
    finishing: bool,
    /// The source has ended.
    finished: bool,
}

impl Shared {
    fn lock(&self) -> MutexGuard<'_, Control> {
        match self.state.lock() {
            Ok(g) => g,
            Err(poisoned) => poisoned.into_inner(),
        }
    }
}

/// Ends a [`CommandSource`] from another thread (its job ended, plateau is quitting).
#[derive(Debug, Clone)]
pub struct CommandControl {
    shared: Arc<Shared>,
}

impl CommandControl {
    /// No more restarts: the source ends (with [`FollowEvent::EndOfInput`]) once the running
    /// command exits by itself, after everything it printed was read.
    pub fn finish(&self) {
        self.shared.lock().finishing = true;
        self.shared.wake.notify_all();
    }

    /// No more restarts, and the running command is ended now.
    pub fn stop(&self) {
        let mut state = self.shared.lock();
        state.finishing = true;
        if let Some(child) = state.child.as_mut() {
            // It may have exited already; nothing else to do then.
            let _ = child.kill();
        }
        drop(state);
        self.shared.wake.notify_all();
    }

    /// [`finish`](Self::finish) now, and [`stop`](Self::stop) if the command still runs
    /// after `grace` (a step that outlives its job, a reader that never exits).
    pub fn finish_within(&self, grace: Duration) {
        self.finish();
        let control = self.clone();
        let spawned = thread::Builder::new()
            .name("plateau-command-grace".into())
            .spawn(move || {
                let deadline = Instant::now() + grace;
                let mut state = control.shared.lock();
                while !state.finished {
                    let left = deadline.saturating_duration_since(Instant::now());
                    if left.is_zero() {
                        break;
                    }
                    state = match control.shared.wake.wait_timeout(state, left) {
                        Ok((g, _)) => g,
                        Err(poisoned) => poisoned.into_inner().0,
                    };
                }
                let finished = state.finished;
                drop(state);
                if !finished {
                    control.stop();
                }
            });
        if spawned.is_err() {
            // No thread for the grace period: end it now rather than leave it running.
            self.stop();
        }
    }

    /// `true` once the source has ended.
    pub fn is_finished(&self) -> bool {
        self.shared.lock().finished
    }
}

/// The last lines a command wrote on standard error, collected by a thread.
struct StderrTail {
    lines: Arc<Mutex<VecDeque<String>>>,
    done: mpsc::Receiver<()>,
}

impl StderrTail {
    fn start(stderr: Option<std::process::ChildStderr>) -> Self {
        let lines = Arc::new(Mutex::new(VecDeque::new()));
        let (tx, done) = mpsc::channel();
        if let Some(stderr) = stderr {
            let keep = lines.clone();
            let spawned = thread::Builder::new()
                .name("plateau-command-stderr".into())
                .spawn(move || {
                    let mut reader = BufReader::new(stderr);
                    let mut line = Vec::new();
                    loop {
                        line.clear();
                        match reader.read_until(b'\n', &mut line) {
                            Ok(0) | Err(_) => break,
                            Ok(_) => {
                                let text = String::from_utf8_lossy(&line);
                                let text: String =
                                    text.trim_end().chars().take(STDERR_LINE_CHARS).collect();
                                if text.is_empty() {
                                    continue;
                                }
                                if let Ok(mut kept) = keep.lock() {
                                    kept.push_back(text);
                                    while kept.len() > STDERR_LINES {
                                        kept.pop_front();
                                    }
                                }
                            }
                        }
                    }
                    let _ = tx.send(());
                });
            // Without the thread standard error is simply not shown.
            drop(spawned);
        }
        Self { lines, done }
    }

    /// What was kept, once the command's standard error closed (or after a short wait).
    fn take(self) -> Vec<String> {
        let _ = self.done.recv_timeout(STDERR_WAIT);
        match self.lines.lock() {
            Ok(mut l) => l.drain(..).collect(),
            Err(_) => Vec::new(),
        }
    }
}

/// One running instance of the command.
struct Running {
    stdout: ChildStdout,
    stderr: StderrTail,
    started: Instant,
    delivered: bool,
    /// Bytes the command must give first (the end of what was already read).
    expect: Vec<u8>,
}

enum Phase {
    /// Start the command, not before the given time.
    Start(Option<Instant>),
    /// Ask the restart policy again at the given time.
    Ask(Instant),
    Reading(Box<Running>),
    Finished,
}

/// Follows a command's standard output; see the module documentation.
pub struct CommandSource {
    label: String,
    spec: CommandSpec,
    resumes: bool,
    policy: Box<dyn RestartPolicy>,
    backoff: Backoff,
    delay: Duration,
    clock: Arc<dyn Clock>,
    shared: Arc<Shared>,
    splitter: LineSplitter,
    buf: Vec<u8>,
    pieces: Vec<Piece>,
    phase: Phase,
    /// Position, in the followed file, just after the last byte taken in.
    position: u64,
    /// The last bytes of complete lines (at most [`OVERLAP`]), ending at the resume point.
    fingerprint: Vec<u8>,
    restarts: u32,
    /// The watching mode was reported.
    announced: bool,
}

impl std::fmt::Debug for CommandSource {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("CommandSource")
            .field("label", &self.label)
            .field("spec", &self.spec)
            .field("position", &self.position)
            .field("restarts", &self.restarts)
            .finish_non_exhaustive()
    }
}

impl CommandSource {
    /// A source running `spec`, shown to the user as `label`; the command starts at the
    /// first step. The returned control ends it from elsewhere.
    pub fn new(
        label: impl Into<String>,
        spec: CommandSpec,
        policy: Box<dyn RestartPolicy>,
        backoff: Backoff,
        clock: Arc<dyn Clock>,
        options: &FollowOptions,
    ) -> (Self, CommandControl) {
        let shared = Arc::new(Shared::default());
        let control = CommandControl {
            shared: shared.clone(),
        };
        // A pipe hands over at most its buffer (64 KiB on Linux) per read.
        let size = options.max_read_bytes.clamp(1, 1 << 20);
        let source = Self {
            label: label.into(),
            resumes: spec.resumes(),
            spec,
            policy,
            backoff,
            delay: backoff.first,
            clock,
            shared,
            splitter: LineSplitter::new(options.max_line_bytes),
            buf: vec![0; size],
            pieces: Vec::new(),
            phase: Phase::Start(None),
            position: 0,
            fingerprint: Vec::with_capacity(OVERLAP),
            restarts: 0,
            announced: false,
        };
        (source, control)
    }

    /// How many times the command was started again.
    pub fn restarts(&self) -> u32 {
        self.restarts
    }

    /// Position of the start of the unfinished line in the followed output: where a
    /// restarted command resumes.
    fn resume_point(&self) -> u64 {
        self.position
            .saturating_sub(self.splitter.unfinished_bytes())
    }

    /// Waits until `at` or until the source is told to finish; `true` if told to finish.
    fn wait_until(&self, at: Instant) -> bool {
        let mut state = self.shared.lock();
        loop {
            if state.finishing {
                return true;
            }
            let left = at.saturating_duration_since(Instant::now());
            if left.is_zero() {
                return false;
            }
            state = match self.shared.wake.wait_timeout(state, left) {
                Ok((g, _)) => g,
                Err(poisoned) => poisoned.into_inner().0,
            };
        }
    }

    fn finishing(&self) -> bool {
        self.shared.lock().finishing
    }

    fn next_delay(&mut self) -> Duration {
        let delay = self.delay;
        self.delay = (self.delay * 2)
            .min(self.backoff.max)
            .max(self.backoff.first);
        delay
    }

    fn finish(&mut self, out: &mut Vec<FollowEvent>) -> Step {
        self.phase = Phase::Finished;
        out.push(FollowEvent::EndOfInput {
            dropped: self.splitter.partial(),
        });
        self.shared.lock().finished = true;
        self.shared.wake.notify_all();
        Step::Finished
    }

    /// Forgets what was read: the next start is a new generation from byte 1.
    fn new_generation(&mut self, out: &mut Vec<FollowEvent>) {
        out.push(FollowEvent::Truncated {
            dropped: self.splitter.reset(),
        });
        self.position = 0;
        self.fingerprint.clear();
    }

    fn start(&mut self, out: &mut Vec<FollowEvent>) -> Step {
        let resume = self.resume_point();
        let expect = if self.resumes {
            self.fingerprint.clone()
        } else {
            Vec::new()
        };
        let start_byte = resume.saturating_sub(expect.len() as u64) + 1;
        let mut command = Command::new(&self.spec.program);
        command
            .args(self.spec.args_from(start_byte))
            .stdin(Stdio::null())
            .stdout(Stdio::piped())
            .stderr(Stdio::piped());
        detach(&mut command);
        match command.spawn() {
            Ok(mut child) => {
                let Some(stdout) = child.stdout.take() else {
                    let _ = child.kill();
                    let _ = child.wait();
                    return self.cannot_start("no standard output pipe".into(), out);
                };
                let stderr = StderrTail::start(child.stderr.take());
                let mut state = self.shared.lock();
                if state.finishing {
                    let _ = child.kill();
                }
                state.child = Some(child);
                drop(state);
                if !self.announced {
                    self.announced = true;
                    out.push(FollowEvent::Mode(WatchMode::Command {
                        restarts: 0,
                        note: None,
                    }));
                }
                self.splitter.forget_unfinished();
                self.position = resume;
                self.phase = Phase::Reading(Box::new(Running {
                    stdout,
                    stderr,
                    started: Instant::now(),
                    delivered: false,
                    expect,
                }));
                Step::More
            }
            Err(e)
                if matches!(
                    e.kind(),
                    io::ErrorKind::NotFound | io::ErrorKind::PermissionDenied
                ) =>
            {
                out.push(FollowEvent::Error {
                    path: PathBuf::from(&self.spec.program),
                    message: format!("cannot run the command `{}`: {e}", self.spec.display()),
                });
                self.finish(out)
            }
            Err(e) => self.cannot_start(e.to_string(), out),
        }
    }

    fn cannot_start(&mut self, why: String, out: &mut Vec<FollowEvent>) -> Step {
        let delay = self.next_delay();
        out.push(FollowEvent::Mode(WatchMode::Command {
            restarts: self.restarts,
            note: Some(format!(
                "cannot start the command: {why}; trying again in {}",
                seconds(delay)
            )),
        }));
        self.phase = Phase::Start(Some(Instant::now() + delay));
        Step::More
    }

    fn read(&mut self, out: &mut Vec<FollowEvent>) -> Step {
        let Phase::Reading(running) = &mut self.phase else {
            return Step::More;
        };
        let n = match running.stdout.read(&mut self.buf) {
            Ok(0) => return self.exited(None, out),
            Ok(n) => n,
            Err(e) if e.kind() == io::ErrorKind::Interrupted => return Step::More,
            Err(e) => return self.exited(Some(format!("read error: {e}")), out),
        };
        let mut data = self.buf.get(..n).unwrap_or_default();
        if !running.expect.is_empty() {
            let k = data.len().min(running.expect.len());
            let (given, rest) = data.split_at(k);
            if running.expect.get(..k) != Some(given) {
                return self.replaced(out);
            }
            running.expect.drain(..k);
            data = rest;
        }
        if data.is_empty() {
            return Step::More;
        }
        running.delivered = true;
        self.position += data.len() as u64;
        let arrival = self.clock.now();
        self.splitter.push(data, &mut self.pieces);
        let path = PathBuf::from(&self.label);
        for piece in self.pieces.drain(..) {
            match &piece {
                Piece::Lines { bytes, .. } => keep_last(&mut self.fingerprint, bytes, OVERLAP),
                Piece::Overlong { .. } => self.fingerprint.clear(),
            }
            out.push(piece.into_event(arrival, &path));
        }
        Step::More
    }

    /// The restarted command did not give the bytes already read: the file changed while
    /// nothing read it. Start over from byte 1 as a new generation.
    fn replaced(&mut self, out: &mut Vec<FollowEvent>) -> Step {
        self.end_child();
        self.phase = Phase::Start(Some(Instant::now()));
        self.new_generation(out);
        Step::More
    }

    /// Kills and reaps the running command, if any.
    fn end_child(&mut self) -> Option<ExitStatus> {
        let child = self.shared.lock().child.take();
        child.and_then(|mut c| {
            let _ = c.kill();
            c.wait().ok()
        })
    }

    fn exited(&mut self, read_error: Option<String>, out: &mut Vec<FollowEvent>) -> Step {
        let child = self.shared.lock().child.take();
        let status = child.and_then(|c| reap(c, read_error.is_some()));
        let phase = std::mem::replace(&mut self.phase, Phase::Start(None));
        let mut how = match status {
            Some(s) => describe_exit(s),
            None => "the command ended".to_string(),
        };
        if let Some(e) = read_error {
            how = format!("{how} ({e})");
        }
        if let Phase::Reading(running) = phase {
            if running.delivered || running.started.elapsed() >= self.backoff.settled {
                self.delay = self.backoff.first;
            }
            let said = running.stderr.take();
            if !said.is_empty() {
                how = format!("{how}: {}", said.join(" | "));
            }
        }
        if self.finishing() {
            return self.finish(out);
        }
        self.decide(how, out)
    }

    fn decide(&mut self, how: String, out: &mut Vec<FollowEvent>) -> Step {
        match self.policy.after_exit() {
            Restart::No => self.finish(out),
            Restart::Yes => {
                let delay = self.next_delay();
                if !self.resumes {
                    self.new_generation(out);
                }
                self.restarts += 1;
                out.push(FollowEvent::Mode(WatchMode::Command {
                    restarts: self.restarts,
                    note: Some(format!("{how}; starting it again in {}", seconds(delay))),
                }));
                self.phase = Phase::Start(Some(Instant::now() + delay));
                Step::More
            }
            Restart::AskAgain(reason) => {
                let delay = self.next_delay();
                out.push(FollowEvent::Mode(WatchMode::Command {
                    restarts: self.restarts,
                    note: Some(format!(
                        "{how}; {reason}; asking again in {}",
                        seconds(delay)
                    )),
                }));
                self.phase = Phase::Ask(Instant::now() + delay);
                Step::More
            }
        }
    }
}

impl Drop for CommandSource {
    fn drop(&mut self) {
        self.end_child();
    }
}

impl Source for CommandSource {
    fn label(&self) -> &str {
        &self.label
    }

    fn blocks(&self) -> bool {
        true
    }

    fn unfinished(&self) -> Option<Partial> {
        self.splitter.partial()
    }

    fn step(&mut self, out: &mut Vec<FollowEvent>) -> Step {
        match &self.phase {
            Phase::Finished => Step::Finished,
            Phase::Start(at) => {
                if self.wait_until(at.unwrap_or_else(Instant::now)) {
                    return self.finish(out);
                }
                self.start(out)
            }
            Phase::Ask(at) => {
                if self.wait_until(*at) {
                    return self.finish(out);
                }
                self.decide("the command had ended".into(), out)
            }
            Phase::Reading(_) => self.read(out),
        }
    }
}

/// Waits for a command whose output has ended; one that keeps running without it for
/// [`EXIT_GRACE`] (or at once, with `kill`) is ended.
fn reap(mut child: Child, kill: bool) -> Option<ExitStatus> {
    if !kill {
        let deadline = Instant::now() + EXIT_GRACE;
        let mut pause = Duration::from_millis(1);
        while Instant::now() < deadline {
            match child.try_wait() {
                Ok(Some(status)) => return Some(status),
                Ok(None) => {
                    thread::sleep(pause);
                    pause = (pause * 2).min(Duration::from_millis(50));
                }
                Err(_) => break,
            }
        }
    }
    let _ = child.kill();
    child.wait().ok()
}

fn describe_exit(status: ExitStatus) -> String {
    if let Some(code) = status.code() {
        return format!("the command exited with status {code}");
    }
    #[cfg(unix)]
    {
        use std::os::unix::process::ExitStatusExt;
        if let Some(signal) = status.signal() {
            return format!("the command was ended by signal {signal}");
        }
    }
    "the command ended".to_string()
}

fn seconds(d: Duration) -> String {
    let s = d.as_secs_f64();
    if s < 10.0 {
        format!("{s:.1} s")
    } else {
        format!("{s:.0} s")
    }
}

/// Runs the command in its own process group and, on Linux, has it sent SIGTERM when the
/// thread that started it ends, so that no reader outlives plateau.
pub(crate) fn detach(command: &mut Command) {
    #[cfg(unix)]
    {
        use std::os::unix::process::CommandExt;
        command.process_group(0);
    }
    #[cfg(target_os = "linux")]
    {
        use std::os::unix::process::CommandExt;
        let parent = std::process::id();
        // SAFETY: the closure runs in the child between fork and exec and calls only
        // async-signal-safe functions (prctl, getppid); it allocates nothing.
        unsafe {
            command.pre_exec(move || {
                if libc::prctl(libc::PR_SET_PDEATHSIG, libc::SIGTERM) != 0 {
                    return Err(io::Error::last_os_error());
                }
                // plateau ended before the request above took effect.
                if u32::try_from(libc::getppid()).ok() != Some(parent) {
                    return Err(io::Error::from_raw_os_error(libc::ESRCH));
                }
                Ok(())
            });
        }
    }
}
