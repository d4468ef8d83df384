//! Following live logs: growing, truncated, rotated, deleted, not yet created, or stdin.
//!
//! A follower turns a source (a path, standard input, a command's output) into a
//! stream of [`FollowEvent`]s. It works on bytes and lines only and knows nothing about the
//! log's columns: [`FollowEvent::Data`] carries bytes that end at a newline, ready for the
//! parser's `feed`.
//!
//! Pieces:
//! - [`LineSplitter`] (`lines.rs`): holds the unfinished last line, hands out complete lines
//!   and counts line numbers per file generation.
//! - [`FileFollower`] (`file.rs`): follows one path by name, like `tail -F`: identity
//!   (device, inode), byte offset, unfinished line; truncation, rotation, deletion, a file
//!   that does not exist yet. Driven by [`Source::step`]; tests call it by hand.
//! - [`ReaderSource`] (`stream.rs`): any `Read` (standard input, a pipe).
//! - [`CommandSource`] (`command.rs`): a command's standard output (a scheduler step
//!   attached to a job, `ssh NODE tail -F ...`), restarted with back-off when it exits
//!   while a [`RestartPolicy`] says so, resuming at a byte offset without losing or
//!   repeating a line; [`CommandControl`] ends it from another thread.
//! - [`Endable`] (`ending.rs`): a file source that ends when told (its job ended).
//! - [`FollowSet`] (`set.rs`): one thread multiplexing all file sources, woken by file
//!   events on the parent folders (a hint) and by its own stat check (the truth), with a
//!   polling fallback; blocking sources get a thread each. Everything arrives as
//!   `(SourceId, FollowEvent)` on one `std::sync::mpsc` channel.
//! - [`Clock`] (`clock.rs`): where arrival times come from (injectable for tests).
//!
//! The follower never opens a watched file for writing and never locks, truncates or
//! renames it: files are opened with `File::open` (read-only) only.

mod clock;
mod command;
mod ending;
mod file;
mod lines;
mod set;
mod source;
mod stream;

use std::path::PathBuf;
use std::time::{Duration, SystemTime};

pub use clock::{Clock, ManualClock, SystemClock};
pub(crate) use command::detach;
pub use command::{
    AlwaysRestart, Backoff, CommandControl, CommandSource, CommandSpec, Restart, RestartPolicy,
    OVERLAP, START_BYTE,
};
pub use ending::{EndSignal, Endable};
pub use file::FileFollower;
pub use lines::{LineSplitter, Piece};
pub use set::{FollowError, FollowReceiver, FollowSet};
pub use source::{Source, Step};
pub use stream::ReaderSource;

/// Identifies one source inside a [`FollowSet`]; given out in the order sources are added.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct SourceId(pub u32);

/// An unfinished last line that was given up (its file was truncated, replaced or deleted,
/// or the input ended before its newline). It was never handed out as data.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Partial {
    /// 1-based line number the line would have had.
    pub line: u64,
    /// How many bytes of it had arrived.
    pub bytes: usize,
}

/// How a source is being watched, so the user can see it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum WatchMode {
    /// File events (inotify) wake the follower; a stat check every `heartbeat` backs them up.
    Events { heartbeat: Duration },
    /// Polling asked for (`--poll`): a stat check every `interval`.
    Polling { interval: Duration },
    /// Polling because file events are unavailable; `reason` says why.
    PollingFallback { interval: Duration, reason: String },
    /// The output of a command, started again `restarts` times so far; `note` says what
    /// just happened to it (how it exited, when it starts again).
    Command { restarts: u32, note: Option<String> },
}

impl WatchMode {
    /// A short description for the user: "file events", "polling every 1 s", "command".
    pub fn describe(&self) -> String {
        match self {
            WatchMode::Events { .. } => "file events".into(),
            WatchMode::Polling { interval } => format!("polling every {}", secs(*interval)),
            WatchMode::PollingFallback { interval, reason } => {
                format!("polling every {} ({reason})", secs(*interval))
            }
            WatchMode::Command { restarts: 0, .. } => "command".into(),
            WatchMode::Command { restarts: 1, .. } => "command, started again once".into(),
            WatchMode::Command { restarts, .. } => {
                format!("command, started again {restarts} times")
            }
        }
    }
}

fn secs(d: Duration) -> String {
    format!("{} s", d.as_secs_f64())
}

/// What a follower reports.
#[derive(Debug, Clone, PartialEq)]
pub enum FollowEvent {
    /// One or more complete lines; `bytes` ends with `\n` (a CRLF line keeps its `\r`).
    Data {
        bytes: Vec<u8>,
        /// 1-based line number of the first line in `bytes`, counted per file generation
        /// (it starts again at 1 after truncation, rotation or re-creation).
        first_line: u64,
        /// Number of lines in `bytes` (the number of `\n`).
        lines: u64,
        /// Wall-clock time at which these bytes were read.
        arrival: SystemTime,
    },
    /// The file became shorter than what was read: reading restarts at its beginning as a
    /// new generation.
    Truncated { dropped: Option<Partial> },
    /// The path now names another file: the old one was read to its end first, the new one
    /// is read from its start as a new generation.
    Rotated { dropped: Option<Partial> },
    /// The file was deleted: what was read is kept; the follower waits for it to come back.
    Deleted { dropped: Option<Partial> },
    /// The file does not exist (yet); the follower waits for it.
    Waiting,
    /// The file exists again (or for the first time) after waiting, deletion or an error;
    /// it is read from its start as a new generation.
    Appeared,
    /// The input is finished (standard input closed, a command's output ended).
    EndOfInput { dropped: Option<Partial> },
    /// Something is wrong with this source (permission denied, a folder instead of a file,
    /// a read error, an over-long line). Following goes on.
    Error { path: PathBuf, message: String },
    /// Which watching mode is in use for this source (sent at start and on every change).
    Mode(WatchMode),
}

/// Settings of a follower.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct FollowOptions {
    /// `true` forces polling (`--poll`); otherwise file events are used when available.
    pub force_poll: bool,
    /// Period of the stat check when polling (`--poll-interval`, default 1 s).
    pub poll_interval: Duration,
    /// Period of the stat check that backs up file events (default 1 s).
    pub heartbeat: Duration,
    /// At most this many bytes are read from one source per step (default 1 MiB).
    pub max_read_bytes: usize,
    /// An unfinished line longer than this is skipped and reported (default 4 MiB).
    pub max_line_bytes: usize,
    /// Capacity of the event channel: when the consumer lags, the follower waits and the
    /// data stays in the file (default 16 events, so at most 16 × `max_read_bytes` = 16 MiB
    /// waits in memory when a finished file is replayed faster than it is analysed).
    pub channel_capacity: usize,
}

impl Default for FollowOptions {
    fn default() -> Self {
        Self {
            force_poll: false,
            poll_interval: Duration::from_secs(1),
            heartbeat: Duration::from_secs(1),
            max_read_bytes: 1 << 20,
            max_line_bytes: 4 << 20,
            channel_capacity: 16,
        }
    }
}

impl Piece {
    /// The event for a piece of input that arrived at `arrival` from `path`.
    pub(crate) fn into_event(self, arrival: SystemTime, path: &std::path::Path) -> FollowEvent {
        match self {
            Piece::Lines {
                bytes,
                first_line,
                lines,
            } => FollowEvent::Data {
                bytes,
                first_line,
                lines,
                arrival,
            },
            Piece::Overlong { line } => FollowEvent::Error {
                path: path.to_path_buf(),
                message: format!("line {line} is too long; skipped"),
            },
        }
    }
}
