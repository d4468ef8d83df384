//! The log reader: a pure, chunk-fed parser for any engine's tabular energy log.
//!
//! No I/O: feed bytes with [`LogParser::feed`] in chunks of any size, call
//! [`LogParser::finish`] at the end of input, read the [`RunTable`]. Feeding a file in
//! arbitrary chunks gives exactly the same table as feeding it whole.
//!
//! ```
//! use plateau::mapping::Role;
//! use plateau::parse::{LogParser, ParseOptions};
//!
//! let mut parser = LogParser::new(ParseOptions::default());
//! parser.feed(b"# step  temp (K)  press (atm)\n0 300.0 1.0\n10 30");
//! parser.feed(b"1.5 0.5\n20 302");          // the row of step 10 is complete now
//! assert_eq!(parser.table().rows(), 2);
//! parser.finish();                          // "20 302" has no newline: ignored, reported
//! let table = parser.into_table();
//! let segment = &table.segments[0];
//! let pressure = segment.column(Role::Pressure).unwrap();
//! assert_eq!(pressure.values(), [1.01325, 0.5 * 1.01325]); // canonical unit: bar
//! assert_eq!(segment.lines, [2, 3]);
//! assert_eq!(table.partial_line.map(|p| p.line), Some(4));
//! ```
//!
//! # Lines
//! * Lines end at `\n`; a `\r` before it is dropped (CRLF). A line without its newline is
//!   held back until the newline arrives, never parsed half; at `finish()` it is ignored and
//!   recorded as [`RunTable::partial_line`].
//! * A line whose first non-blank characters are a comment prefix is a comment (default
//!   prefixes [`DEFAULT_COMMENT_PREFIXES`]: `#`, `!`, `;`, `@`, `%`, `//`; replaced by
//!   `--comment`). A comment may hold a header (`# step temp press`).
//! * Without a row tag, a line whose first field reads as a number (or `****`) is a
//!   **data-like** line: it becomes a row, or is skipped with its line number and reason
//!   (a field that is not a number; a field count that does not match the header).
//!   Any other line is free text, counted and never an error. A field that starts with a
//!   comment prefix ends the row (`0 300.0 1.0  # heating done` is a row of three).
//! * With a row tag (`--row-tag TAG`), only lines whose first word is `TAG` (or `TAG:`)
//!   are data-like; the tag is dropped. The header may be tagged too (`TAG step temp`) or be
//!   an untagged line before the rows: both work, the nearest one wins.
//!
//! # Headers and segments
//! A header is a line whose fields are all names (see [`layout`]); in a whitespace table
//! whose names contain single spaces, the header is also tried split on runs of two or more
//! spaces (`Step   Potential Energy   Kinetic En.`). It takes effect at the
//! next row with the same number of fields: the latest header candidate since the previous
//! row with that many columns names the columns (so a warning between header and rows does
//! no harm; up to 8 candidates are kept, those that do not read as headers dropped first).
//! Then:
//! * no segment yet: the first segment, under that header;
//! * a different number of fields: a new segment if the line reads as a header (at least
//!   two names read as roles, see [`mapping::guess_role`]); otherwise the row is skipped
//!   for its field count (a warning with as many words as a broken row has fields must not
//!   swallow every later row);
//! * the same names as the current segment: a repeated header (e.g. after a restart), same
//!   segment;
//! * different names, same count: a new segment, but only when the header is the last
//!   non-blank line before the row and reads as a header.
//!
//! A row whose field count differs from its segment's, with no header for it, is skipped.
//! Rows before any header start a segment with names `col1..colN`.
//!
//! # Restarts
//! When the step column goes back or repeats (or, without a step column, the time column
//! goes back), the rows from that step on are replaced by the new ones; the number replaced
//! is recorded in [`Segment::restarts`](crate::table::Segment).
//!
//! # Numbers
//! See [`number`]: `nan`/`inf` (counted as non-finite), Fortran `D` exponents, `****`
//! (stored as NaN and counted as overflow).
//!
//! # Two stages, for two cores
//! [`block::parse_block`] parses complete lines independently of any state;
//! [`LogParser::apply_block`] merges a block's items in order. `feed` is just the two
//! applied to the complete lines of each chunk; [`crate::ingest`] reads a large file in
//! blocks cut at line boundaries, parses them on two threads and applies them in order.
//! Runs of plain rows of the current segment are appended in bulk, column by column (from
//! the block's by-field values when all its rows have one field count); anything that may
//! change the segment or restart it goes one row at a time, with the same result.

pub mod block;
pub mod endings;
pub mod layout;
pub mod number;
pub mod sniff;

use std::collections::VecDeque;

use crate::mapping::{self, MapRequest, SegmentMapping};
use crate::table::{keep_absent, Column, PartialLine, RunTable, Segment, SkipReason};

pub use block::{parse_block, parse_block_into, BlockResult};
use block::{BlockSkip, Item, MAX_LINE};
pub use layout::{Delimiter, DelimiterChoice, HeaderName};

/// Fewer rows than this in a finished segment tell nothing about counters.
const MIN_COUNTER_ROWS: usize = 5;

/// Comment prefixes used unless `--comment` is given.
pub const DEFAULT_COMMENT_PREFIXES: [&str; 6] = ["#", "!", ";", "@", "%", "//"];

/// How many header candidates are remembered between two rows. When more arrive, the
/// oldest one that does not look like a header (no name reads as a role) goes first.
const CANDIDATES_KEPT: usize = 8;

/// What the parser needs to know about the log.
#[derive(Debug, Clone, PartialEq)]
pub struct ParseOptions {
    /// Field separator.
    pub delimiter: DelimiterChoice,
    /// Comment prefixes (an empty list: no comments).
    pub comment_prefixes: Vec<String>,
    /// Only lines starting with this word are data.
    pub row_tag: Option<String>,
    /// `--map` requests.
    pub maps: Vec<MapRequest>,
    /// Time step in ps, to derive time from step.
    pub timestep_ps: Option<f64>,
    /// Rows that carry their own names (`name=value` pairs, one JSON object per line), when
    /// the start of the log showed them ([`sniff::sniff_layout`]).
    pub records: Option<Records>,
}

/// How rows that carry their own names are written.
#[derive(Debug, Clone, Copy, PartialEq, Eq, serde::Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum RecordKind {
    /// `step=100 temp=300.5 press=1.0` (pairs separated by spaces, commas, semicolons or `|`).
    Pairs,
    /// One JSON object per line (`{"step": 100, "temp": 300.5}`); an object inside the
    /// object gives names `outer.inner`.
    Json,
}

/// Rows that carry their own names: the kind and the columns (the names with a numeric
/// value at the start of the log, in order of first appearance). A name first seen later is
/// not a column; a row without a name has no value (NaN) there.
#[derive(Debug, Clone, PartialEq)]
pub struct Records {
    /// The kind.
    pub kind: RecordKind,
    /// The columns.
    pub names: Vec<String>,
}

impl Default for ParseOptions {
    fn default() -> ParseOptions {
        ParseOptions {
            delimiter: DelimiterChoice::Auto,
            comment_prefixes: DEFAULT_COMMENT_PREFIXES
                .iter()
                .map(|s| s.to_string())
                .collect(),
            row_tag: None,
            maps: Vec::new(),
            timestep_ps: None,
            records: None,
        }
    }
}

#[derive(Debug, Clone)]
struct Candidate {
    line: u64,
    text: Vec<u8>,
    /// At least one name reads as a role (worked out only when the list is full).
    headerish: Option<bool>,
    /// Columns (0: not a plain header).
    columns: usize,
    /// Columns when split on runs of two or more spaces (0: not such a header).
    wide_columns: usize,
    delim: Delimiter,
    commented: bool,
    /// A units line (`[K] [bar]`), applied to the names line above it.
    units: bool,
}

/// The chunk-fed parser. See the module docs.
#[derive(Debug, Clone)]
pub struct LogParser {
    options: ParseOptions,
    table: RunTable,
    pending: Vec<u8>,
    pending_overlong: bool,
    scratch: BlockResult,
    /// Complete lines consumed so far.
    lines_done: u64,
    current: Option<usize>,
    candidates: VecDeque<Candidate>,
    spare: Vec<Vec<u8>>,
    /// True when the last non-blank line was the newest candidate.
    adjacent: bool,
    /// The last complete line ended with `\r`: a `\n` first in the next chunk belongs to it.
    skip_lf: bool,
    /// Per segment: counters were looked for in its first rows (see
    /// [`mapping::counters_from_data`]).
    counters_done: Vec<bool>,
}

impl LogParser {
    /// A parser with no input yet.
    pub fn new(options: ParseOptions) -> LogParser {
        LogParser {
            options,
            table: RunTable::default(),
            pending: Vec::new(),
            pending_overlong: false,
            scratch: BlockResult::default(),
            lines_done: 0,
            current: None,
            candidates: VecDeque::new(),
            spare: Vec::new(),
            adjacent: false,
            skip_lf: false,
            counters_done: Vec::new(),
        }
    }

    /// The options.
    pub fn options(&self) -> &ParseOptions {
        &self.options
    }

    /// The table so far.
    pub fn table(&self) -> &RunTable {
        &self.table
    }

    /// The table, consuming the parser.
    pub fn into_table(self) -> RunTable {
        self.table
    }

    /// Bytes of a line held back until its newline arrives.
    pub fn pending_bytes(&self) -> usize {
        self.pending.len()
    }

    /// Complete lines consumed so far.
    pub fn lines(&self) -> u64 {
        self.lines_done
    }

    /// Forgets all but the last `keep` rows of every segment (see
    /// [`Segment::forget_all_but_last`]): for consumers that stream rows out as they come.
    pub fn forget_all_but_last(&mut self, keep: usize) {
        for seg in &mut self.table.segments {
            seg.forget_all_but_last(keep);
        }
    }

    /// Reserves room for about `rows` rows in the current segment (a hint from the size of
    /// the input; see [`crate::table::Segment::reserve`]).
    pub fn reserve_rows(&mut self, rows: usize) {
        if let Some(seg) = self.current.and_then(|i| self.table.segments.get_mut(i)) {
            seg.reserve(rows.saturating_sub(seg.rows()));
        }
    }

    /// The table, to change in place (a chain being followed shifts the times of a file
    /// whose time restarts; see `live::chain`).
    pub fn table_mut(&mut self) -> &mut RunTable {
        &mut self.table
    }

    /// Ends the current file and goes on with the next file of a chain (consecutive
    /// stages of one system, each file a log of its own): the input so far is finished as
    /// [`finish`](Self::finish) does, and the next file's rows start a segment of their
    /// own (its header is looked for afresh) with line numbers counted from 1 again, as
    /// when each file is read on its own and the tables joined (`stages::chain::join`).
    pub fn new_file(&mut self) {
        self.finish();
        self.current = None;
        self.clear_candidates();
        self.skip_lf = false;
        self.lines_done = 0;
    }

    /// Starts over with an empty table and the same options (a truncated or re-created
    /// file is read again from its start).
    pub fn reset(&mut self) {
        *self = LogParser::new(self.options.clone());
    }

    /// Feeds the next bytes of the input (any chunking).
    pub fn feed(&mut self, mut chunk: &[u8]) {
        if chunk.is_empty() {
            return;
        }
        if self.skip_lf {
            // The `\n` of a `\r\n` whose `\r` ended the last chunk.
            self.skip_lf = false;
            chunk = chunk.strip_prefix(b"\n").unwrap_or(chunk);
        }
        if !self.pending.is_empty() || self.pending_overlong {
            match endings::first_end(chunk) {
                None => {
                    self.hold(chunk);
                    return;
                }
                Some(i) => {
                    let (head, rest) = chunk.split_at(i);
                    chunk = rest;
                    self.skip_lf = rest.is_empty() && head.last() == Some(&b'\r');
                    if self.pending_overlong {
                        self.pending_overlong = false;
                        self.pending.clear();
                        self.table.overlong(self.lines_done + 1);
                        self.table.text_lines += 1;
                        self.table.lines += 1;
                        self.lines_done += 1;
                        self.adjacent = false;
                    } else {
                        let mut line = std::mem::take(&mut self.pending);
                        line.extend_from_slice(head);
                        self.parse_and_apply(&line);
                        line.clear();
                        self.pending = line;
                    }
                }
            }
        }
        match endings::complete_len(chunk) {
            0 => self.hold(chunk),
            i => {
                let (complete, rest) = chunk.split_at(i);
                self.skip_lf = rest.is_empty() && complete.last() == Some(&b'\r');
                self.parse_and_apply(complete);
                self.hold(rest);
            }
        }
    }

    fn hold(&mut self, bytes: &[u8]) {
        if self.pending_overlong {
            return;
        }
        if self.pending.len() + bytes.len() > MAX_LINE {
            self.pending.clear();
            self.pending_overlong = !bytes.is_empty();
            return;
        }
        self.pending.extend_from_slice(bytes);
    }

    fn parse_and_apply(&mut self, complete: &[u8]) {
        let mut scratch = std::mem::take(&mut self.scratch);
        parse_block_into(complete, &self.options, &mut scratch);
        self.apply_block(&scratch);
        self.scratch = scratch;
    }

    /// Ends the input: a held-back partial line is ignored and recorded; segments too short
    /// to have had their counters looked for (fewer than [`mapping::COUNTER_ROWS`] rows, at
    /// least five) are looked at now.
    pub fn finish(&mut self) {
        for (i, seg) in self.table.segments.iter_mut().enumerate() {
            if let Some(done) = self.counters_done.get_mut(i) {
                if !*done && seg.rows() >= MIN_COUNTER_ROWS {
                    *done = true;
                    find_counters(seg);
                }
            }
        }
        if !self.pending.is_empty() || self.pending_overlong {
            self.table.partial_line = Some(PartialLine {
                line: self.lines_done + 1,
                bytes: self.pending.len() as u64,
            });
            self.pending.clear();
            self.pending_overlong = false;
        }
    }

    /// Applies a block parsed by [`parse_block`] from the bytes that follow everything fed so
    /// far (the block must start at a line boundary: use it only while
    /// [`pending_bytes`](Self::pending_bytes) is 0, as [`crate::ingest`] does).
    pub fn apply_block(&mut self, block: &BlockResult) {
        let base = self.lines_done;
        for (name, line) in &block.later_names {
            self.table.note_later_name(name, base + line + 1);
        }
        let mut vpos = 0usize;
        let mut opos = 0usize;
        let mut at = 0usize;
        while let Some(item) = block.items.get(at) {
            at += 1;
            match *item {
                Item::Row {
                    line,
                    fields,
                    delim,
                    overflows,
                } => {
                    let n = fields as usize;
                    if overflows == 0 {
                        if let Some(rows) = self.row_run(block, at - 1, fields) {
                            // A run of plain rows of the current segment: appended in bulk.
                            let end = vpos + rows * n;
                            let run = RowRun {
                                values: block.values.get(vpos..end).unwrap_or_default(),
                                n,
                                by_field: (block.uniform == fields).then(|| (block, vpos / n)),
                                items: block.items.get(at - 1..at - 1 + rows).unwrap_or_default(),
                            };
                            self.on_rows(base, run);
                            vpos = end;
                            at += rows - 1;
                            continue;
                        }
                    }
                    let values = block.values.get(vpos..vpos + n).unwrap_or_default();
                    let ov = block
                        .overflow_fields
                        .get(opos..opos + overflows as usize)
                        .unwrap_or_default();
                    vpos += n;
                    opos += overflows as usize;
                    self.on_row(base + line + 1, delim, values, ov, block);
                }
                Item::Candidate {
                    line,
                    start,
                    len,
                    columns,
                    wide_columns,
                    delim,
                    commented,
                    units,
                } => {
                    let text = block.text.get(start..start + len).unwrap_or_default();
                    if commented {
                        self.table.comment_lines += 1;
                    } else {
                        self.table.text_lines += 1;
                    }
                    self.push_candidate(
                        base + line + 1,
                        text,
                        (columns as usize, wide_columns as usize),
                        delim,
                        (commented, units),
                    );
                }
                Item::Meta {
                    line,
                    start,
                    key,
                    len,
                } => {
                    self.adjacent = false;
                    if self.table.segments.is_empty() {
                        self.table.metadata_lines += 1;
                        if self.table.metadata.len() < crate::table::METADATA_KEPT {
                            let text = |a: usize, b: usize| {
                                layout::decode_text(block.text.get(a..b).unwrap_or_default())
                                    .into_owned()
                            };
                            self.table.metadata.push(crate::table::Metadata {
                                line: base + line + 1,
                                key: text(start, start + key),
                                value: text(start + key, start + len),
                            });
                        }
                    } else {
                        self.table.text_lines += 1;
                    }
                }
                Item::Rule { .. } => self.table.decoration_lines += 1,
                Item::Skipped { line, why } => {
                    let reason = || match why {
                        BlockSkip::NotANumber { field, start, len } => SkipReason::NotANumber {
                            field: field as usize + 1,
                            text: String::from_utf8_lossy(
                                block.text.get(start..start + len).unwrap_or_default(),
                            )
                            .into_owned(),
                        },
                        BlockSkip::TaggedNotData => SkipReason::TaggedNotData,
                    };
                    self.table.skip(base + line + 1, reason);
                }
                Item::Overlong { line } => {
                    self.table.overlong(base + line + 1);
                    self.table.text_lines += 1;
                    self.adjacent = false;
                }
                Item::Text { .. } => {
                    self.table.text_lines += 1;
                    self.adjacent = false;
                }
                Item::Comment { .. } => {
                    self.table.comment_lines += 1;
                    self.adjacent = false;
                }
                Item::Blank { .. } => self.table.blank_lines += 1,
            }
        }
        self.lines_done += block.lines;
        self.table.lines += block.lines;
    }

    fn push_candidate(
        &mut self,
        line: u64,
        text: &[u8],
        (columns, wide_columns): (usize, usize),
        delim: Delimiter,
        (commented, units): (bool, bool),
    ) {
        let mut buf = if self.candidates.len() >= CANDIDATES_KEPT {
            // Decided lazily (and once per candidate): only a full list needs it.
            let mut victim = 0;
            for (i, c) in self.candidates.iter_mut().enumerate() {
                let headerish = *c.headerish.get_or_insert_with(|| {
                    candidate_names(&c.text, c.columns, c.delim)
                        .iter()
                        .any(|n| mapping::guess_role(&n.name).is_some())
                });
                if !headerish {
                    victim = i;
                    break;
                }
            }
            self.candidates
                .remove(victim)
                .map(|c| c.text)
                .unwrap_or_default()
        } else {
            self.spare.pop().unwrap_or_default()
        };
        buf.clear();
        buf.extend_from_slice(text);
        self.candidates.push_back(Candidate {
            line,
            text: buf,
            columns,
            wide_columns,
            delim,
            commented,
            units,
            headerish: None,
        });
        self.adjacent = true;
    }

    fn clear_candidates(&mut self) {
        while let Some(c) = self.candidates.pop_front() {
            self.spare.push(c.text);
        }
        self.adjacent = false;
    }

    /// The header (if any) that applies to a row of `fields` fields: Some(new segment names).
    /// A units line after the names line (with as many cells) gives the names their units.
    fn header_for(&mut self, fields: usize) -> Option<(Vec<HeaderName>, u64, Delimiter, bool)> {
        let ci = self
            .candidates
            .iter()
            .rposition(|c| !c.units && (c.columns == fields || c.wide_columns == fields))?;
        let ui = self
            .candidates
            .iter()
            .enumerate()
            .skip(ci + 1)
            .find(|(_, c)| c.units && layout::units_fit(&c.text, c.delim, fields).is_some())
            .map(|(i, _)| i);
        let last = self.candidates.len().saturating_sub(1);
        let newest = (ci == last || ui == Some(last)) && self.adjacent;
        let cand = self.candidates.get(ci)?;
        let mut names = if cand.columns == fields {
            layout::header_names(&cand.text, cand.delim)
        } else {
            layout::wide_header_names(&cand.text)
        };
        let (line, delim, commented) = (cand.line, cand.delim, cand.commented);
        let units = ui.and_then(|i| self.candidates.get(i)).and_then(|u| {
            layout::units_fit(&u.text, u.delim, fields).map(|cells| (cells, u.commented))
        });
        if let Some((cells, _)) = &units {
            for (name, unit) in names.iter_mut().zip(cells) {
                if let Some(u) = unit {
                    name.unit = Some(u.clone());
                }
            }
        }
        let units_commented = units.map(|(_, c)| c);
        let current = self.current.and_then(|i| self.table.segments.get(i));
        match current {
            Some(seg) if seg.fields == fields => {
                if seg.names == names {
                    self.count_header(commented, units_commented);
                    if let Some(seg) = self.current.and_then(|i| self.table.segments.get_mut(i)) {
                        seg.header_repeats += 1;
                    }
                    None
                } else if newest && looks_like_header(&names) {
                    self.count_header(commented, units_commented);
                    Some((names, line, delim, commented))
                } else {
                    None
                }
            }
            // A different width after a first segment: only a line that reads as a header
            // starts a new segment (else a warning with as many words as a broken row has
            // fields would swallow every later row).
            Some(_) if !looks_like_header(&names) => None,
            _ => {
                self.count_header(commented, units_commented);
                Some((names, line, delim, commented))
            }
        }
    }

    /// A candidate (and its units line, if any) became a header: count it as a header
    /// instead of text or comment.
    fn count_header(&mut self, commented: bool, units_commented: Option<bool>) {
        for c in std::iter::once(commented).chain(units_commented) {
            if c {
                self.table.comment_lines = self.table.comment_lines.saturating_sub(1);
            } else {
                self.table.text_lines = self.table.text_lines.saturating_sub(1);
            }
            self.table.header_lines += 1;
        }
    }

    fn start_segment(
        &mut self,
        names: Vec<HeaderName>,
        header_line: Option<u64>,
        delim: Delimiter,
        commented: bool,
    ) {
        let SegmentMapping {
            columns,
            order_column,
            derived_time,
            warnings,
        } = mapping::resolve(&names, &self.options.maps, self.options.timestep_ps);
        for w in warnings {
            self.table.warn(w);
        }
        let fields = names.len();
        self.counters_done.push(false);
        self.table.segments.push(Segment {
            header_line,
            names,
            header_commented: commented,
            delimiter: delim,
            fields,
            columns: columns.into_iter().map(Column::new).collect(),
            lines: crate::table::LineNumbers::new(),
            restarts: Vec::new(),
            header_repeats: 0,
            order_column,
            derived_time,
        });
        self.current = Some(self.table.segments.len() - 1);
    }

    /// How many rows from `items[at]` on (at least 2) can be appended in bulk: consecutive
    /// rows of `fields` fields without `****`, when no header candidate is pending and the
    /// current segment has that many fields (so nothing but restarts can happen).
    fn row_run(&self, block: &BlockResult, at: usize, fields: u32) -> Option<usize> {
        if !self.candidates.is_empty() {
            return None;
        }
        let seg = self.current.and_then(|i| self.table.segments.get(i))?;
        if seg.fields != fields as usize {
            return None;
        }
        let rest = block.items.get(at..)?;
        let rows = rest
            .iter()
            .take_while(|i| matches!(i, Item::Row { fields: f, overflows: 0, .. } if *f == fields))
            .count();
        (rows >= 2).then_some(rows)
    }

    /// Appends a run of rows to the current segment; see [`Self::row_run`].
    fn on_rows(&mut self, base: u64, run: RowRun<'_>) {
        self.adjacent = false;
        let Some(si) = self.current else {
            return;
        };
        let Some(seg) = self.table.segments.get_mut(si) else {
            return;
        };
        let mut undecided = self.counters_done.get_mut(si);
        let rows = run.len();
        let mut start = 0usize;
        while start < rows {
            // Rows up to the next restart go in bulk; the restarting row goes alone. While
            // the counters are not known, no further than the row that decides them.
            let limit = match &undecided {
                Some(done) if !**done => {
                    (start + mapping::COUNTER_ROWS.saturating_sub(seg.rows()).max(1)).min(rows)
                }
                _ => rows,
            };
            let rest = run.part(start, limit);
            let end = start + first_restart(seg, &rest);
            push_rows(seg, base, &run.part(start, end));
            if end < limit {
                if let (Some(Item::Row { line, .. }), Some(row)) = (
                    run.items.get(end),
                    run.values.get(end * run.n..(end + 1) * run.n),
                ) {
                    push_row(seg, base + line + 1, row, &[]);
                }
                start = end + 1;
            } else {
                start = end;
            }
            if let Some(done) = undecided.as_deref_mut() {
                if !*done && seg.rows() >= mapping::COUNTER_ROWS {
                    *done = true;
                    find_counters(seg);
                }
            }
        }
    }

    fn on_row(
        &mut self,
        line: u64,
        delim: Delimiter,
        values: &[f64],
        overflows: &[u32],
        _block: &BlockResult,
    ) {
        let fields = values.len();
        if !self.candidates.is_empty() {
            if let Some((names, hline, hdelim, commented)) = self.header_for(fields) {
                self.start_segment(names, Some(hline), hdelim, commented);
            }
        }
        let seg_fields = self
            .current
            .and_then(|i| self.table.segments.get(i))
            .map(|s| s.fields);
        match seg_fields {
            Some(n) if n == fields => {}
            Some(n) => {
                self.table.skip(line, || SkipReason::FieldCount {
                    expected: n,
                    found: fields,
                });
                return;
            }
            None if self.options.records.is_some() => {
                let names = self
                    .options
                    .records
                    .as_ref()
                    .map(|r| r.names.iter().map(|n| HeaderName::from_token(n)).collect())
                    .unwrap_or_default();
                self.start_segment(names, None, delim, false);
            }
            None => {
                let data_delim = if delim == Delimiter::Whitespace
                    && self.options.delimiter == DelimiterChoice::Tab
                {
                    Delimiter::Tab
                } else {
                    delim
                };
                self.start_segment(mapping::generic_names(fields), None, data_delim, false);
            }
        }
        self.clear_candidates();
        let Some(si) = self.current else {
            return;
        };
        let Some(seg) = self.table.segments.get_mut(si) else {
            return;
        };
        push_row(seg, line, values, overflows);
        if let Some(done) = self.counters_done.get_mut(si) {
            if !*done && seg.rows() >= mapping::COUNTER_ROWS {
                *done = true;
                find_counters(seg);
            }
        }
    }
}

/// The names of a candidate line (plain split when it has plain columns, else wide).
fn candidate_names(text: &[u8], columns: usize, delim: Delimiter) -> Vec<HeaderName> {
    if columns > 0 {
        layout::header_names(text, delim)
    } else {
        layout::wide_header_names(text)
    }
}

/// After the first segment, a candidate starts a new one only if it reads as a header: at
/// least two names read as roles (one for a header of one or two names). "step temp volume"
/// does; "Note: list rebuilt now" and "WARNING: step too large" do not.
fn looks_like_header(names: &[HeaderName]) -> bool {
    let roles = names
        .iter()
        .filter(|n| mapping::guess_role(&n.name).is_some())
        .count();
    roles >= 2 || (roles == 1 && names.len() <= 2)
}

/// Gives the counters found in the first rows of a segment their role
/// ([`mapping::counters_from_data`]); the step (else time) column found orders the rows for
/// restarts when no named one does.
fn find_counters(seg: &mut Segment) {
    let rows = seg.rows().min(mapping::COUNTER_ROWS);
    let found = {
        let view: Vec<(Option<mapping::Role>, &[f64])> = seg
            .columns
            .iter()
            .map(|c| {
                let role = c
                    .spec
                    .role
                    .or(c.spec.field.is_none().then_some(mapping::Role::Time));
                (role, c.values.get(..rows).unwrap_or_default())
            })
            .collect();
        mapping::counters_from_data(&view)
    };
    for &(i, role) in &found {
        if let Some(col) = seg.columns.get_mut(i) {
            col.spec.role = Some(role);
            col.spec.role_source = Some(mapping::RoleSource::FromData);
            if role == mapping::Role::Time {
                col.spec.source_unit = Some(crate::units::Unit::Picosecond);
                col.spec.unit = Some(crate::units::Unit::Picosecond);
                col.spec.assumed = true;
            }
        }
    }
    let named_step = seg
        .order_column
        .and_then(|o| seg.columns.get(o))
        .is_some_and(|c| c.spec.role == Some(mapping::Role::Step));
    if !named_step {
        let step = found
            .iter()
            .find(|(_, r)| *r == mapping::Role::Step)
            .map(|(i, _)| *i);
        let time = found
            .iter()
            .find(|(_, r)| *r == mapping::Role::Time)
            .map(|(i, _)| *i);
        if let Some(o) = step.or(seg.order_column.is_none().then_some(time).flatten()) {
            seg.order_column = Some(o);
        }
    }
}

/// Appends one row (source values) to a segment, converting to canonical units and applying
/// a restart when the order column goes back.
fn push_row(seg: &mut Segment, line: u64, values: &[f64], overflows: &[u32]) {
    if let Some(oc) = seg.order_column {
        if let Some(col) = seg.columns.get(oc) {
            let v = source_value(col, values, seg.derived_time);
            let is_step = col.spec.role == Some(mapping::Role::Step);
            if let Some(&last) = col.values.last() {
                let back = if is_step { v <= last } else { v < last };
                if v.is_finite() && last.is_finite() && back {
                    let cut = col.values.partition_point(|&x| x < v);
                    let replaced = seg.rows().saturating_sub(cut);
                    seg.truncate(cut);
                    seg.restarts.push(crate::table::Restart {
                        line,
                        step: v,
                        rows_replaced: replaced as u64,
                    });
                }
            }
        }
    }
    let derived = seg.derived_time;
    for col in &mut seg.columns {
        match col.spec.field {
            Some(f) => {
                let raw = values.get(f).copied().unwrap_or(f64::NAN);
                let overflow = !overflows.is_empty() && overflows.contains(&(f as u32));
                let v = keep_absent(raw, raw * col.spec.scale + col.spec.offset);
                col.push(v, overflow);
            }
            None => {
                let step = derived
                    .and_then(|(s, _)| values.get(s).copied())
                    .unwrap_or(f64::NAN);
                col.push(step * col.spec.scale, false);
            }
        }
    }
    seg.lines.push(line);
}

/// Consecutive rows of one block, all of `n` fields without `****`.
#[derive(Clone, Copy)]
struct RowRun<'a> {
    /// Values row-major, `n` per row.
    values: &'a [f64],
    n: usize,
    /// The block's values by field and the block row of the first row, when it has them.
    by_field: Option<(&'a BlockResult, usize)>,
    /// The rows' items (for their lines).
    items: &'a [Item],
}

impl<'a> RowRun<'a> {
    fn len(&self) -> usize {
        self.items.len()
    }

    /// Rows `start..end` of the run.
    fn part(&self, start: usize, end: usize) -> RowRun<'a> {
        let end = end.min(self.len());
        let start = start.min(end);
        RowRun {
            values: self
                .values
                .get(start * self.n..end * self.n)
                .unwrap_or_default(),
            n: self.n,
            by_field: self.by_field.map(|(b, first)| (b, first + start)),
            items: self.items.get(start..end).unwrap_or_default(),
        }
    }

    /// Appends field `field` of every row, as `v * scale + offset` (or `v * scale` without
    /// an offset: derived time), to `col`.
    fn extend(&self, col: &mut Column, field: Option<usize>, scale: f64, offset: Option<f64>) {
        let Some(f) = field.filter(|&f| f < self.n) else {
            let o = offset.unwrap_or(0.0);
            match offset {
                Some(_) => col.extend(self.items.iter().map(|_| f64::NAN * scale + o)),
                None => col.extend(self.items.iter().map(|_| f64::NAN * scale)),
            }
            return;
        };
        match (self.by_field, offset) {
            (Some((block, first)), Some(o)) => {
                let src = block.field_slice(f, first, self.len());
                col.extend(src.iter().map(|&v| keep_absent(v, v * scale + o)));
            }
            (Some((block, first)), None) => {
                let src = block.field_slice(f, first, self.len());
                col.extend(src.iter().map(|&v| keep_absent(v, v * scale)));
            }
            (None, Some(o)) => {
                let rows = self.values.chunks_exact(self.n.max(1));
                col.extend(rows.map(|r| {
                    let v = r.get(f).copied().unwrap_or(f64::NAN);
                    keep_absent(v, v * scale + o)
                }));
            }
            (None, None) => {
                let rows = self.values.chunks_exact(self.n.max(1));
                col.extend(rows.map(|r| {
                    let v = r.get(f).copied().unwrap_or(f64::NAN);
                    keep_absent(v, v * scale)
                }));
            }
        }
    }

    /// The canonical value `col` would store for each row.
    fn canonical(&self, col: &Column, derived: Option<(usize, f64)>) -> Vec<f64> {
        let mut out = Column::new(col.spec.clone());
        let (field, offset) = match col.spec.field {
            Some(f) => (Some(f), Some(col.spec.offset)),
            None => (derived.map(|(s, _)| s), None),
        };
        self.extend(&mut out, field, col.spec.scale, offset);
        out.values
    }
}

/// How many rows of `run` go in before the first one that restarts the segment (the order
/// column goes back, as in [`push_row`]).
fn first_restart(seg: &Segment, run: &RowRun<'_>) -> usize {
    let rows = run.len();
    let Some(col) = seg.order_column.and_then(|oc| seg.columns.get(oc)) else {
        return rows;
    };
    let is_step = col.spec.role == Some(mapping::Role::Step);
    let order = run.canonical(col, seg.derived_time);
    let mut last = col.values.last().copied();
    for (i, &v) in order.iter().enumerate() {
        if let Some(last) = last {
            let back = if is_step { v <= last } else { v < last };
            if v.is_finite() && last.is_finite() && back {
                return i;
            }
        }
        last = Some(v);
    }
    rows
}

/// Appends rows that restart nothing and hold no `****`, column by column: the same values
/// as [`push_row`] one row at a time.
fn push_rows(seg: &mut Segment, base: u64, run: &RowRun<'_>) {
    let derived = seg.derived_time;
    for col in &mut seg.columns {
        let scale = col.spec.scale;
        match col.spec.field {
            Some(f) => run.extend(col, Some(f), scale, Some(col.spec.offset)),
            None => run.extend(col, derived.map(|(s, _)| s), scale, None),
        }
    }
    for item in run.items {
        if let Item::Row { line, .. } = *item {
            seg.lines.push(base + line + 1);
        }
    }
}

/// The canonical value a row would store in `col`.
fn source_value(col: &Column, values: &[f64], derived: Option<(usize, f64)>) -> f64 {
    match col.spec.field {
        Some(f) => {
            let v = values.get(f).copied().unwrap_or(f64::NAN);
            keep_absent(v, v * col.spec.scale + col.spec.offset)
        }
        None => {
            derived
                .and_then(|(s, _)| values.get(s).copied())
                .unwrap_or(f64::NAN)
                * col.spec.scale
        }
    }
}

/// Parses a whole input held in memory after reading its layout from its start (the first
/// 256 KiB, as the commands do for a file: [`sniff::sniff_layout`]); the guess is returned.
pub fn parse_bytes_guessing(
    bytes: &[u8],
    mut options: ParseOptions,
) -> (RunTable, sniff::LayoutGuess) {
    let start = bytes
        .get(..bytes.len().min(sniff::SNIFF_BYTES))
        .unwrap_or_default();
    let guess = sniff::sniff_layout(start, &options);
    guess.apply(&mut options);
    (parse_bytes(bytes, options), guess)
}

/// Parses a whole input held in memory (convenience for tests and small inputs).
pub fn parse_bytes(bytes: &[u8], options: ParseOptions) -> RunTable {
    let mut p = LogParser::new(options);
    p.feed(bytes);
    p.finish();
    p.into_table()
}
