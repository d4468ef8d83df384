//! Following a chain of logs: several files, in the order given, as consecutive stages of
//! one system (`--chain`), read into one run as `report --chain` joins them
//! ([`crate::stages::chain`]).
//!
//! Every file of the chain is followed from the start; only one is *live* at a time: its
//! events go to the run as a single file's would. Events of later files are kept aside
//! (a later file that does not exist yet is waited for: the run has not reached that
//! stage). Following moves on to the next file once that file exists and the live one has
//! been read to its end (its size, looked up afresh, is reached; or nothing came from it
//! for [`QUIET_SECONDS`] while the next file exists: a last line never finished). The
//! parser then starts a segment of its own for the next file ([`LogParser::new_file`]),
//! and the events kept aside are handed over in order. Rows written to a file after
//! following moved past it are not read (a notice says so once).
//!
//! Time: a file whose first time is not after the previous file's last is shifted, as
//! `chain::join` does, so that its first row sits one of its own output intervals after
//! that last row. The shift is decided from the file's first two rows; the rows already
//! read are shifted in place, and a time column read from the file gets the shift as a
//! conversion offset so that later rows arrive shifted (a time derived from the step is
//! shifted after each read).

use std::collections::HashMap;
use std::path::PathBuf;

use crate::follow::FollowEvent;
use crate::mapping::Role;
use crate::parse::LogParser;
use crate::table::Segment;

use super::stages::ChainFiles;

/// Seconds without data from the live file, once the next file exists, after which the
/// live file counts as read to its end even if shorter than its size (an unfinished last
/// line is never read).
pub const QUIET_SECONDS: f64 = 2.0;

/// A chain being followed.
#[derive(Debug, Clone)]
pub struct ChainFollow {
    files: Vec<PathBuf>,
    /// The file being read.
    live: usize,
    /// The names (as given) and each reached file's first segment.
    pub(super) layout: ChainFiles,
    /// Events of files after the live one, kept aside in order, with when they came.
    pending: Vec<Vec<(FollowEvent, f64)>>,
    /// Whether each file was seen to exist.
    appeared: Vec<bool>,
    /// The live file's time shift, once decided.
    shift: Option<f64>,
    /// Per segment of the live file: the last line whose time was shifted (a derived
    /// time is shifted after each read; a read time column gets an offset once).
    shifted: HashMap<usize, u64>,
    /// Data written to a file after following moved past it was told about.
    late_told: Vec<bool>,
}

impl ChainFollow {
    /// A chain of `files`, in order; the first is live.
    pub fn new(files: Vec<PathBuf>) -> ChainFollow {
        let n = files.len();
        ChainFollow {
            layout: ChainFiles {
                names: files.iter().map(|f| f.display().to_string()).collect(),
                first_segment: vec![0],
            },
            files,
            live: 0,
            pending: vec![Vec::new(); n],
            appeared: vec![false; n],
            shift: None,
            shifted: HashMap::new(),
            late_told: vec![false; n],
        }
    }

    /// The files, in order.
    pub fn files(&self) -> &[PathBuf] {
        &self.files
    }

    /// Index of the file being read.
    pub fn live(&self) -> usize {
        self.live
    }

    /// The file being read.
    pub fn live_file(&self) -> Option<&PathBuf> {
        self.files.get(self.live)
    }

    /// The next file, while the follower has not seen it exist (the run has not reached
    /// that stage yet).
    pub fn awaited(&self) -> Option<&PathBuf> {
        let next = self.live + 1;
        (!self.appeared.get(next).copied().unwrap_or(true))
            .then(|| self.files.get(next))
            .flatten()
    }

    /// What to do with an event of file `index`.
    pub(super) fn route(&mut self, index: usize, event: FollowEvent, now: f64) -> Route {
        if let FollowEvent::Data { .. } | FollowEvent::Appeared = &event {
            if let Some(a) = self.appeared.get_mut(index) {
                *a = true;
            }
        }
        match index.cmp(&self.live) {
            std::cmp::Ordering::Equal => Route::Live(event),
            std::cmp::Ordering::Greater => {
                if let Some(p) = self.pending.get_mut(index) {
                    p.push((event, now));
                }
                Route::KeptAside
            }
            std::cmp::Ordering::Less => {
                let data = matches!(event, FollowEvent::Data { .. });
                match self.late_told.get_mut(index) {
                    Some(told) if data && !*told => {
                        *told = true;
                        Route::Late(self.layout.names.get(index).cloned().unwrap_or_default())
                    }
                    _ => Route::Ignored,
                }
            }
        }
    }

    /// Whether following should move on: the next file exists and the live one was read
    /// to its end (`bytes_read` of it; `quiet`: seconds since its last data).
    pub(super) fn ready_to_move(&self, bytes_read: u64, quiet: Option<f64>, force: bool) -> bool {
        let next = self.live + 1;
        if next >= self.files.len() {
            return false;
        }
        let next_exists = self.appeared.get(next).copied().unwrap_or(false)
            || self.files.get(next).is_some_and(|p| p.is_file());
        if !next_exists {
            return false;
        }
        if force {
            return true;
        }
        let size = self
            .live_file()
            .and_then(|p| std::fs::metadata(p).ok())
            .map(|m| m.len());
        match size {
            None => true,
            Some(s) if bytes_read >= s => true,
            _ => quiet.is_some_and(|q| q >= QUIET_SECONDS),
        }
    }

    /// Moves on to the next file: the parser starts it; returns the events kept aside for
    /// it, to be handed to the run in order.
    pub(super) fn move_on(&mut self, parser: &mut LogParser) -> Vec<(FollowEvent, f64)> {
        // A file whose time restarts and that holds a single row: decided now, as
        // `chain::join` does (no interval known).
        self.shift_times(parser, true);
        parser.new_file();
        self.live += 1;
        self.layout
            .first_segment
            .push(parser.table().segments.len());
        self.shift = None;
        self.shifted.clear();
        self.pending
            .get_mut(self.live)
            .map(std::mem::take)
            .unwrap_or_default()
    }

    /// Gives the live file's rows the chain's time (see the module docs). `settle`: decide
    /// the shift even from a single row.
    pub(super) fn shift_times(&mut self, parser: &mut LogParser, settle: bool) {
        if self.live == 0 {
            return;
        }
        let first = self
            .layout
            .first_segment
            .get(self.live)
            .copied()
            .unwrap_or(0);
        let table = parser.table_mut();
        if self.shift.is_none() {
            let (before, file) = table.segments.split_at(first.min(table.segments.len()));
            self.shift = decide_shift(before, file, settle);
        }
        let Some(shift) = self.shift else {
            return;
        };
        if shift == 0.0 {
            return;
        }
        for (si, seg) in table.segments.iter_mut().enumerate().skip(first) {
            let done = self.shifted.get(&si).copied();
            let from = done.map_or(0, |line| seg.lines.row_at_or_after(line + 1));
            for c in &mut seg.columns {
                if c.spec.role != Some(Role::Time) {
                    continue;
                }
                let read = c.spec.field.is_some();
                if done.is_some() && read {
                    continue; // the parser shifts it (offset set below)
                }
                for v in c.values.iter_mut().skip(from) {
                    *v += shift;
                }
                if read {
                    c.spec.offset += shift;
                }
            }
            self.shifted.insert(si, seg.lines.last().unwrap_or(0));
        }
    }
}

/// What [`ChainFollow::route`] decided.
pub(super) enum Route {
    /// The live file's event: handle it.
    Live(FollowEvent),
    /// A later file's event, kept for when following reaches it.
    KeptAside,
    /// Data written to an earlier file (named) after following moved past it: tell once.
    Late(String),
    Ignored,
}

fn times(seg: &Segment) -> Option<&[f64]> {
    seg.column(Role::Time).map(|c| c.values())
}

/// The shift of a file whose segments are `file`, after `before` (as `chain::join`'s
/// `shift_for`); `None` while it cannot be decided yet (one row, unless `settle`).
fn decide_shift(before: &[Segment], file: &[Segment], settle: bool) -> Option<f64> {
    let prev_end = before
        .iter()
        .rev()
        .find_map(|s| times(s).and_then(|t| t.iter().rev().find(|v| v.is_finite()).copied()));
    let Some(prev_end) = prev_end else {
        return Some(0.0);
    };
    let t = file
        .iter()
        .find_map(|s| times(s).filter(|t| !t.is_empty()))?;
    let &first = t.first()?;
    if first > prev_end {
        return Some(0.0);
    }
    match t {
        [a, b, ..] => Some(prev_end + if b > a { b - a } else { 0.0 } - first),
        _ if settle => Some(prev_end - first),
        _ => None,
    }
}
