//! Following one path by name, like `tail -F`.

use std::fs::{self, File, Metadata};
use std::io::{self, Read, Seek, SeekFrom};
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::SystemTime;

use super::lines::{keep_last, LineSplitter, Piece};
use super::{Clock, FollowEvent, FollowOptions, Source, Step};

/// How many bytes just before the read offset are remembered, to notice a file that was
/// truncated and rewritten past the offset between two checks.
const FINGERPRINT: usize = 32;

/// Identity of a file: device and inode.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct FileId {
    dev: u64,
    ino: u64,
}

#[cfg(unix)]
fn file_id(meta: &Metadata) -> FileId {
    use std::os::unix::fs::MetadataExt;
    FileId {
        dev: meta.dev(),
        ino: meta.ino(),
    }
}

#[cfg(not(unix))]
fn file_id(_meta: &Metadata) -> FileId {
    // No portable identity: rotation is then seen only through truncation.
    FileId { dev: 0, ino: 0 }
}

/// Reads `buf.len()` bytes at `pos` without moving the cursor; `None` if not possible.
#[cfg(unix)]
fn read_at(file: &File, buf: &mut [u8], pos: u64) -> Option<()> {
    use std::os::unix::fs::FileExt;
    file.read_exact_at(buf, pos).ok()
}

#[cfg(not(unix))]
fn read_at(_file: &File, _buf: &mut [u8], _pos: u64) -> Option<()> {
    None
}

#[derive(Debug)]
struct OpenFile {
    file: File,
    id: FileId,
    /// Bytes consumed from this file (including the held-back unfinished line).
    offset: u64,
    /// The last bytes consumed (at most `FINGERPRINT`), ending at `offset`.
    tail: Vec<u8>,
    /// Length and modification time seen at the last check.
    seen: Option<(u64, Option<SystemTime>)>,
}

#[derive(Debug, Clone, PartialEq, Eq)]
enum State {
    /// Not looked at yet.
    Fresh,
    /// A file is open and being read.
    Reading,
    /// The file did not exist; `Waiting` was reported.
    Waiting,
    /// The file was deleted; `Deleted` was reported.
    Deleted,
    /// The path could not be followed; the message was reported.
    Failed(String),
}

/// Follows one path by name: keeps the file's identity (device, inode), the byte offset and
/// the unfinished last line; handles truncation, rotation, deletion and a missing file.
///
/// Semantics and limits:
/// - a line is handed out once its `\n` has been read; lines are numbered from 1 in each
///   generation of the file (a new generation starts after truncation, rotation, deletion
///   and re-creation);
/// - truncation is seen when the length drops below the offset, or when the 32 bytes just
///   before the offset changed (truncated and rewritten past the offset between two
///   checks); a file rewritten with the very same bytes up to the offset is taken as grown;
/// - a rotated or deleted file is read to its end through the open handle before letting
///   go; a rename and re-creation seen between the two steps shows as `Deleted` then
///   `Appeared` rather than `Rotated` (no line is lost either way); a file replaced twice
///   between two checks loses the middle one (as `tail -F` does);
/// - named pipes and devices are refused (they would block): use standard input.
///
/// It does nothing by itself: each [`Source::step`] (or [`FileFollower::poll`]) checks the
/// path once (one `stat`) and reads at most one buffer of new bytes. A [`super::FollowSet`]
/// calls it on wake-ups; tests call it by hand.
#[derive(Debug)]
pub struct FileFollower {
    path: PathBuf,
    label: String,
    clock: Arc<dyn Clock>,
    buf: Vec<u8>,
    splitter: LineSplitter,
    open: Option<OpenFile>,
    state: State,
    /// Last read error reported (not repeated while it persists).
    read_error: Option<String>,
    pieces: Vec<Piece>,
}

impl FileFollower {
    /// A follower of `path`. Nothing is opened until the first step.
    pub fn new(path: impl Into<PathBuf>, clock: Arc<dyn Clock>, options: &FollowOptions) -> Self {
        let path = path.into();
        Self {
            label: path.display().to_string(),
            path,
            clock,
            buf: vec![0; options.max_read_bytes.max(1)],
            splitter: LineSplitter::new(options.max_line_bytes),
            open: None,
            state: State::Fresh,
            read_error: None,
            pieces: Vec::new(),
        }
    }

    /// The followed path.
    pub fn path(&self) -> &Path {
        &self.path
    }

    /// Byte offset read so far in the current file (0 when none is open).
    pub fn offset(&self) -> u64 {
        self.open.as_ref().map_or(0, |o| o.offset)
    }

    /// Checks the path once and reads at most one buffer of new bytes.
    pub fn poll(&mut self, out: &mut Vec<FollowEvent>) -> Step {
        match fs::metadata(&self.path) {
            Err(e) if e.kind() == io::ErrorKind::NotFound => self.on_missing(out),
            Err(e) => {
                // The path cannot be looked at (e.g. a folder on the way lost its permission):
                // finish what is open, then report.
                if self.open.is_some() && self.read_batch(out) > 0 {
                    return Step::More;
                }
                self.fail(format!("cannot look at the file: {e}"), out);
                Step::Idle
            }
            Ok(meta) if meta.is_dir() => {
                if self.open.is_some() {
                    if self.read_batch(out) > 0 {
                        return Step::More;
                    }
                    self.close(|dropped| FollowEvent::Deleted { dropped }, out);
                }
                self.fail("is a folder, not a file".to_string(), out);
                Step::Idle
            }
            Ok(meta) if !meta.is_file() => {
                // Opening a named pipe would block every file on this thread.
                self.fail(
                    "not a regular file (a pipe or a device); read it as standard input `-`"
                        .to_string(),
                    out,
                );
                Step::Idle
            }
            Ok(meta) => self.on_present(&meta, out),
        }
    }

    fn on_missing(&mut self, out: &mut Vec<FollowEvent>) -> Step {
        if self.open.is_some() {
            // Read what was written before the deletion, then let go.
            if self.read_batch(out) > 0 {
                return Step::More;
            }
            self.close(|dropped| FollowEvent::Deleted { dropped }, out);
            self.state = State::Deleted;
        } else if matches!(self.state, State::Fresh | State::Failed(_)) {
            out.push(FollowEvent::Waiting);
            self.state = State::Waiting;
        }
        Step::Idle
    }

    fn on_present(&mut self, meta: &Metadata, out: &mut Vec<FollowEvent>) -> Step {
        let id = file_id(meta);
        let Some(open) = self.open.as_mut() else {
            return self.open_new(out);
        };
        if open.id != id {
            // Rotation or replacement: drain the old file, then read the new one from 0.
            if self.read_batch(out) > 0 {
                return Step::More;
            }
            self.close(|dropped| FollowEvent::Rotated { dropped }, out);
            return self.open_new(out);
        }
        if matches!(self.state, State::Failed(_)) {
            self.state = State::Reading;
        }
        let len = meta.len();
        let mtime = meta.modified().ok();
        let changed = open.seen != Some((len, mtime));
        open.seen = Some((len, mtime));
        if changed && (len < open.offset || rewritten(open)) {
            let dropped = self.splitter.reset();
            if let Some(open) = self.open.as_mut() {
                open.offset = 0;
                open.tail.clear();
                if let Err(e) = open.file.seek(SeekFrom::Start(0)) {
                    let message = format!("cannot go back to the start after truncation: {e}");
                    self.report_read_error(message, out);
                    self.open = None;
                    return Step::Idle;
                }
            }
            out.push(FollowEvent::Truncated { dropped });
        }
        if self.offset() < len {
            self.read_more(out)
        } else {
            Step::Idle
        }
    }

    fn open_new(&mut self, out: &mut Vec<FollowEvent>) -> Step {
        let file = match File::open(&self.path) {
            Ok(f) => f,
            Err(e) => {
                self.fail(format!("cannot open: {e}"), out);
                return Step::Idle;
            }
        };
        let meta = match file.metadata() {
            Ok(m) => m,
            Err(e) => {
                self.fail(format!("cannot look at the open file: {e}"), out);
                return Step::Idle;
            }
        };
        if meta.is_dir() {
            self.fail("is a folder, not a file".to_string(), out);
            return Step::Idle;
        }
        if !matches!(self.state, State::Fresh | State::Reading) {
            out.push(FollowEvent::Appeared);
        }
        self.splitter.reset();
        self.open = Some(OpenFile {
            file,
            id: file_id(&meta),
            offset: 0,
            tail: Vec::with_capacity(FINGERPRINT),
            seen: None,
        });
        self.state = State::Reading;
        self.read_error = None;
        self.read_more(out)
    }

    fn read_more(&mut self, out: &mut Vec<FollowEvent>) -> Step {
        if self.read_batch(out) >= self.buf.len() {
            Step::More
        } else {
            Step::Idle
        }
    }

    /// Reads up to one buffer from the open file and reports the complete lines.
    /// Returns the number of bytes read.
    fn read_batch(&mut self, out: &mut Vec<FollowEvent>) -> usize {
        let Some(open) = self.open.as_mut() else {
            return 0;
        };
        let mut filled = 0;
        let mut error = None;
        while filled < self.buf.len() {
            let Some(space) = self.buf.get_mut(filled..) else {
                break;
            };
            match open.file.read(space) {
                Ok(0) => break,
                Ok(n) => filled += n,
                Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
                Err(e) => {
                    error = Some(format!("read error at byte {}: {e}", open.offset));
                    break;
                }
            }
        }
        let data = self.buf.get(..filled).unwrap_or_default();
        open.offset += filled as u64;
        keep_last(&mut open.tail, data, FINGERPRINT);
        if filled > 0 {
            self.read_error = None;
            let arrival = self.clock.now();
            self.splitter.push(data, &mut self.pieces);
            for piece in self.pieces.drain(..) {
                out.push(piece.into_event(arrival, &self.path));
            }
        }
        if let Some(message) = error {
            self.report_read_error(message, out);
        }
        filled
    }

    fn report_read_error(&mut self, message: String, out: &mut Vec<FollowEvent>) {
        if self.read_error.as_deref() != Some(message.as_str()) {
            out.push(FollowEvent::Error {
                path: self.path.clone(),
                message: message.clone(),
            });
            self.read_error = Some(message);
        }
    }

    /// Lets go of the open file, reporting `event` with the unfinished line given up.
    fn close(
        &mut self,
        event: impl FnOnce(Option<super::Partial>) -> FollowEvent,
        out: &mut Vec<FollowEvent>,
    ) {
        self.open = None;
        out.push(event(self.splitter.reset()));
    }

    fn fail(&mut self, message: String, out: &mut Vec<FollowEvent>) {
        if self.state != State::Failed(message.clone()) {
            out.push(FollowEvent::Error {
                path: self.path.clone(),
                message: message.clone(),
            });
            self.state = State::Failed(message);
        }
    }
}

/// `true` if the bytes just before the offset are no longer what was read there: the file
/// was truncated and written again past the offset between two checks.
fn rewritten(open: &OpenFile) -> bool {
    if open.tail.is_empty() {
        return false;
    }
    let start = open.offset.saturating_sub(open.tail.len() as u64);
    let mut now = [0u8; FINGERPRINT];
    let Some(now) = now.get_mut(..open.tail.len()) else {
        return false;
    };
    match read_at(&open.file, now, start) {
        Some(()) => now != open.tail.as_slice(),
        // Shorter than the offset: the length check sees it.
        None => false,
    }
}

impl Source for FileFollower {
    fn label(&self) -> &str {
        &self.label
    }

    fn watch_target(&self) -> Option<&Path> {
        Some(&self.path)
    }

    fn blocks(&self) -> bool {
        false
    }

    fn unfinished(&self) -> Option<super::Partial> {
        self.splitter.partial()
    }

    fn step(&mut self, out: &mut Vec<FollowEvent>) -> Step {
        self.poll(out)
    }
}
