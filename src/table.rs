//! Parsed rows of one run: segments, column-major values, source lines, restarts.
//!
//! A [`RunTable`] is what the parser ([`crate::parse::LogParser`]) builds and what the
//! statistics read. It grows by appending rows (the follower feeds chunks as they arrive);
//! a restart truncates the current segment from the restarted step on.
//!
//! * A [`Segment`] is a stretch of the log under one set of columns. A header with different
//!   columns starts a new segment; a repeated identical header does not.
//! * Each [`Column`] holds its values in canonical units in one `Vec<f64>`
//!   ([`Column::values`] is a cheap slice for the statistics). `row` (0-based) indexes the
//!   segment's series; [`Segment::lines`] gives each row's 1-based source line
//!   ([`LineNumbers`]: stored as runs of consecutive lines, a few bytes per run instead of
//!   eight per row).
//! * Non-finite values from `nan`/`inf` tokens are counted in [`Column::non_finite`];
//!   `****` fields are stored as NaN and counted in [`Column::overflow`].
//! * A field a row does not have (a `name=value` or JSON row that misses a name) is
//!   *absent*: stored as [`ABSENT`], a NaN with a payload of its own, and counted in
//!   [`Column::absent`], never in `non_finite`. The analysis skips absent values; only a
//!   `nan`/`inf` written in the log is a non-finite value.

use std::fmt;

use serde::Serialize;

use crate::mapping::{ColumnSpec, Role};
use crate::parse::layout::{Delimiter, HeaderName};

/// How many skipped lines are kept with their line number and reason.
pub const SKIPPED_KEPT: usize = 100;

/// The value stored for a field a row does not have: a quiet NaN with its own payload, so
/// that it stays apart from a `nan` written in the log (the same device as R's `NA`, a NaN
/// whose low word is 1954; R Internals, §1.6). Test with [`is_absent`]; arithmetic on it
/// gives a NaN that may lose the payload, so convert values with [`keep_absent`].
pub const ABSENT: f64 = f64::from_bits(0x7FF8_0000_0000_07A2);

/// True when `v` is [`ABSENT`] (no value), not a written number or `nan`.
#[inline]
pub fn is_absent(v: f64) -> bool {
    v.to_bits() == ABSENT.to_bits()
}

/// `converted` unless the source value `raw` is absent (then absent): unit conversion that
/// keeps an absent field absent.
#[inline]
pub fn keep_absent(raw: f64, converted: f64) -> f64 {
    if is_absent(raw) {
        ABSENT
    } else {
        converted
    }
}

/// One column: its description and its values (canonical units).
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Column {
    /// Name, role, units and conversion.
    pub spec: ColumnSpec,
    /// Values, one per row of the segment.
    pub values: Vec<f64>,
    /// Rows whose value was a `nan`/`inf` token.
    pub non_finite: u64,
    /// Rows whose value was a `****` overflow field (stored as NaN).
    pub overflow: u64,
    /// Rows that have no value in this column ([`ABSENT`]: a record row without the name).
    pub absent: u64,
    /// Row indices of the overflow fields (kept so restarts can recount).
    #[serde(skip)]
    overflow_rows: Vec<usize>,
}

impl Column {
    /// A column with no rows yet.
    pub fn new(spec: ColumnSpec) -> Column {
        Column {
            spec,
            values: Vec::new(),
            non_finite: 0,
            overflow: 0,
            absent: 0,
            overflow_rows: Vec::new(),
        }
    }

    /// The values (canonical units).
    pub fn values(&self) -> &[f64] {
        &self.values
    }

    /// Appends a value; `overflow` marks a `****` field.
    #[inline]
    pub fn push(&mut self, value: f64, overflow: bool) {
        if overflow {
            self.overflow += 1;
            self.overflow_rows.push(self.values.len());
            self.values.push(f64::NAN);
        } else {
            if is_absent(value) {
                self.absent += 1;
            } else if !value.is_finite() {
                self.non_finite += 1;
            }
            self.values.push(value);
        }
    }

    /// Appends values that are not `****` fields (a run of plain rows).
    #[inline]
    pub fn extend(&mut self, values: impl Iterator<Item = f64>) {
        let start = self.values.len();
        self.values.extend(values);
        let added = self.values.get(start..).unwrap_or_default();
        let bad = added.iter().filter(|v| !v.is_finite()).count() as u64;
        let absent = if bad > 0 {
            added.iter().filter(|v| is_absent(**v)).count() as u64
        } else {
            0
        };
        self.non_finite += bad - absent;
        self.absent += absent;
    }

    /// Rows `rows` of this column as a column of its own (overflow fields kept as such).
    pub fn sub_column(&self, rows: std::ops::Range<usize>) -> Column {
        let mut out = Column::new(self.spec.clone());
        let start = rows.start;
        for (i, &v) in self.values.get(rows).unwrap_or(&[]).iter().enumerate() {
            out.push(v, self.overflow_rows.binary_search(&(start + i)).is_ok());
        }
        out
    }

    /// Drops the first `rows` values (already consumed elsewhere); the counts of non-finite
    /// and overflow fields keep counting them.
    fn forget_front(&mut self, rows: usize) {
        let rows = rows.min(self.values.len());
        self.values.drain(..rows);
        self.overflow_rows.retain(|&r| r >= rows);
        for r in &mut self.overflow_rows {
            *r -= rows;
        }
    }

    fn truncate(&mut self, rows: usize) {
        let mut removed_overflow = 0u64;
        while self.overflow_rows.last().is_some_and(|&r| r >= rows) {
            self.overflow_rows.pop();
            removed_overflow += 1;
        }
        let removed = self.values.get(rows..).unwrap_or_default();
        let removed_absent = removed.iter().filter(|v| is_absent(**v)).count() as u64;
        let removed_nonfinite =
            removed.iter().filter(|v| !v.is_finite()).count() as u64 - removed_absent;
        self.absent -= removed_absent.min(self.absent);
        self.overflow -= removed_overflow.min(self.overflow);
        let nf = removed_nonfinite.saturating_sub(removed_overflow);
        self.non_finite -= nf.min(self.non_finite);
        self.values.truncate(rows);
    }
}

/// A restart: the order column (step, else time) went back; later rows replaced earlier ones.
#[derive(Debug, Clone, Copy, PartialEq, Serialize)]
pub struct Restart {
    /// Line of the first row after the restart.
    pub line: u64,
    /// The step (or time) it restarted from.
    pub step: f64,
    /// How many earlier rows it replaced.
    pub rows_replaced: u64,
}

/// Rows under one set of columns.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Segment {
    /// The header line (1-based), if the segment has a header.
    pub header_line: Option<u64>,
    /// Names as read from the header (or `colN`).
    pub names: Vec<HeaderName>,
    /// True when the header was behind a comment prefix.
    pub header_commented: bool,
    /// How fields are separated.
    pub delimiter: Delimiter,
    /// Number of fields in a row of the file.
    pub fields: usize,
    /// Columns (a derived time column last).
    pub columns: Vec<Column>,
    /// Source line of each row (1-based), as runs of consecutive lines.
    pub lines: LineNumbers,
    /// Restarts inside this segment.
    pub restarts: Vec<Restart>,
    /// Identical headers seen again after the first (a restart prints its header again).
    pub header_repeats: u64,
    /// Column (index into `columns`) that orders rows for restarts.
    pub order_column: Option<usize>,
    /// Step column and time step (ps) for a derived time column.
    pub derived_time: Option<(usize, f64)>,
}

impl Segment {
    /// Number of rows.
    pub fn rows(&self) -> usize {
        self.lines.len()
    }

    /// The first column with `role`.
    pub fn column(&self, role: Role) -> Option<&Column> {
        self.columns.iter().find(|c| c.spec.role == Some(role))
    }

    /// All columns with `role` (e.g. several temperature groups).
    pub fn columns_with(&self, role: Role) -> impl Iterator<Item = &Column> {
        self.columns
            .iter()
            .filter(move |c| c.spec.role == Some(role))
    }

    /// The first and last source line of the segment's rows.
    pub fn line_range(&self) -> Option<(u64, u64)> {
        Some((self.lines.first()?, self.lines.last()?))
    }

    /// Cuts the segment back to `rows` rows.
    pub fn truncate(&mut self, rows: usize) {
        for c in &mut self.columns {
            c.truncate(rows);
        }
        self.lines.truncate(rows);
    }

    /// Forgets all but the last `keep` rows, for a consumer that has already used them
    /// (`export --follow`), so that memory stays bounded on an endless run. A later restart
    /// to a step before the kept rows replaces all kept rows; the forgotten ones are not
    /// counted in its `rows_replaced`.
    pub fn forget_all_but_last(&mut self, keep: usize) {
        let drop = self.rows().saturating_sub(keep);
        if drop == 0 {
            return;
        }
        for c in &mut self.columns {
            c.forget_front(drop);
        }
        self.lines.forget_front(drop);
    }

    /// Reserves room for `rows` more rows in every column (a hint; memory that is never
    /// written is never touched, so an estimate on the high side costs no resident memory).
    /// When the room cannot be had, nothing is reserved and the columns grow as they fill.
    pub fn reserve(&mut self, rows: usize) {
        for c in &mut self.columns {
            if c.values.try_reserve_exact(rows).is_err() {
                break;
            }
        }
    }

    /// Gives back reserved room that was not used.
    pub fn shrink_to_fit(&mut self) {
        for c in &mut self.columns {
            c.values.shrink_to_fit();
        }
        self.lines.runs.shrink_to_fit();
    }
}

/// The source line of each row of a segment, kept as runs of consecutive lines.
///
/// Rows are in file order, so lines only increase; a table of rows without gaps is one run.
/// Runs are always maximal (a line that continues the last run extends it), so equal line
/// sequences have equal representations.
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct LineNumbers {
    runs: Vec<LineRun>,
    rows: usize,
}

/// Rows from `row` on (up to the next run) have lines `line`, `line + 1`, ...
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
struct LineRun {
    row: usize,
    line: u64,
}

impl LineNumbers {
    /// No rows.
    pub fn new() -> LineNumbers {
        LineNumbers::default()
    }

    /// Number of rows.
    pub fn len(&self) -> usize {
        self.rows
    }

    /// True when there are no rows.
    pub fn is_empty(&self) -> bool {
        self.rows == 0
    }

    /// Number of runs of consecutive lines.
    pub fn runs(&self) -> usize {
        self.runs.len()
    }

    /// The line of row `row`.
    pub fn get(&self, row: usize) -> Option<u64> {
        if row >= self.rows {
            return None;
        }
        let i = self.runs.partition_point(|r| r.row <= row).checked_sub(1)?;
        let run = self.runs.get(i)?;
        Some(run.line + (row - run.row) as u64)
    }

    /// The line of the first row.
    pub fn first(&self) -> Option<u64> {
        self.get(0)
    }

    /// The line of the last row.
    pub fn last(&self) -> Option<u64> {
        let run = self.runs.last()?;
        Some(run.line + (self.rows - 1 - run.row) as u64)
    }

    /// The first row whose line is at or after `line` (`len()` when there is none); equally,
    /// the number of rows before `line`.
    pub fn row_at_or_after(&self, line: u64) -> usize {
        let i = self.runs.partition_point(|r| r.line < line);
        // Runs before `i` start before `line`; the row may be inside run `i - 1`.
        let Some(prev) = i.checked_sub(1).and_then(|p| self.runs.get(p)) else {
            return 0;
        };
        let end = self.runs.get(i).map_or(self.rows, |r| r.row);
        let inside = usize::try_from(line - prev.line).unwrap_or(usize::MAX);
        prev.row.saturating_add(inside).min(end)
    }

    /// The lines, row by row.
    pub fn iter(&self) -> impl Iterator<Item = u64> + '_ {
        self.runs.iter().enumerate().flat_map(move |(i, r)| {
            let end = self.runs.get(i + 1).map_or(self.rows, |n| n.row);
            (0..(end - r.row) as u64).map(move |k| r.line + k)
        })
    }

    /// The lines as a vector (for tests and small tables).
    pub fn to_vec(&self) -> Vec<u64> {
        self.iter().collect()
    }

    /// Appends the line of a new row (greater than the last one).
    #[inline]
    pub fn push(&mut self, line: u64) {
        if self.last().map(|l| l + 1) != Some(line) {
            self.runs.push(LineRun {
                row: self.rows,
                line,
            });
        }
        self.rows += 1;
    }

    /// Keeps the first `rows` rows.
    pub fn truncate(&mut self, rows: usize) {
        if rows >= self.rows {
            return;
        }
        let keep = self.runs.partition_point(|r| r.row < rows);
        self.runs.truncate(keep);
        self.rows = rows;
    }

    /// Drops the first `rows` rows; later rows move to the front.
    pub fn forget_front(&mut self, rows: usize) {
        let rows = rows.min(self.rows);
        if rows == 0 {
            return;
        }
        // The run holding the new first row starts there.
        let first = self
            .runs
            .partition_point(|r| r.row <= rows)
            .saturating_sub(1);
        if let Some(run) = self.runs.get_mut(first) {
            if rows < self.rows {
                run.line += (rows - run.row) as u64;
                run.row = rows;
            }
        }
        self.runs.drain(..first);
        self.rows -= rows;
        if self.rows == 0 {
            self.runs.clear();
        }
        for r in &mut self.runs {
            r.row -= rows;
        }
    }
}

impl<const N: usize> PartialEq<[u64; N]> for LineNumbers {
    fn eq(&self, other: &[u64; N]) -> bool {
        self.rows == N && self.iter().eq(other.iter().copied())
    }
}

impl PartialEq<[u64]> for LineNumbers {
    fn eq(&self, other: &[u64]) -> bool {
        self.rows == other.len() && self.iter().eq(other.iter().copied())
    }
}

impl FromIterator<u64> for LineNumbers {
    fn from_iter<I: IntoIterator<Item = u64>>(iter: I) -> LineNumbers {
        let mut out = LineNumbers::new();
        for l in iter {
            out.push(l);
        }
        out
    }
}

/// Serialised as the list of lines, row by row.
impl Serialize for LineNumbers {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_seq(self.iter())
    }
}

/// Why a data-like line was skipped.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
#[serde(tag = "kind", rename_all = "kebab-case")]
pub enum SkipReason {
    /// The row has a different number of fields than its header/segment.
    FieldCount {
        /// Fields in a row of the segment.
        expected: usize,
        /// Fields on this line.
        found: usize,
    },
    /// A field is not a number.
    NotANumber {
        /// 1-based field position.
        field: usize,
        /// The field's text (cut to 32 bytes).
        text: String,
    },
    /// A tagged line whose fields are neither numbers nor a header.
    TaggedNotData,
}

impl SkipReason {
    /// The kind as a kebab-case word (`field-count`, `not-a-number`, `tagged-not-data`).
    pub fn kind(&self) -> &'static str {
        match self {
            SkipReason::FieldCount { .. } => "field-count",
            SkipReason::NotANumber { .. } => "not-a-number",
            SkipReason::TaggedNotData => "tagged-not-data",
        }
    }
}

impl fmt::Display for SkipReason {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            SkipReason::FieldCount { expected, found } => {
                write!(f, "expected {expected} fields, found {found}")
            }
            SkipReason::NotANumber { field, text } => {
                write!(f, "field {field} is not a number: '{text}'")
            }
            SkipReason::TaggedNotData => f.write_str("tagged line is neither numbers nor a header"),
        }
    }
}

/// A skipped line with its reason.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct SkippedLine {
    /// 1-based line number.
    pub line: u64,
    /// Why.
    pub reason: SkipReason,
}

/// The last line of the input that had no newline and was ignored.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
pub struct PartialLine {
    /// Its line number.
    pub line: u64,
    /// Its length in bytes.
    pub bytes: u64,
}

/// Preamble entries kept for display.
pub const METADATA_KEPT: usize = 100;

/// One `key = value` or `key: value` line of a preamble.
#[derive(Debug, Clone, PartialEq, Eq, serde::Serialize)]
pub struct Metadata {
    /// 1-based line.
    pub line: u64,
    /// The key as written.
    pub key: String,
    /// The value as written.
    pub value: String,
}

/// Every row of one run, with what was skipped and why.
#[derive(Debug, Clone, Default, PartialEq, Serialize)]
pub struct RunTable {
    /// Segments in file order.
    pub segments: Vec<Segment>,
    /// Number of skipped (data-like) lines.
    pub skipped_count: u64,
    /// The first [`SKIPPED_KEPT`] skipped lines.
    pub skipped: Vec<SkippedLine>,
    /// Free-text lines (warnings, banners, anything not data-like and not a comment).
    pub text_lines: u64,
    /// Lines behind a comment prefix (including commented headers).
    pub comment_lines: u64,
    /// Empty lines.
    pub blank_lines: u64,
    /// Header lines (first and repeated), units lines under them included.
    pub header_lines: u64,
    /// Decoration lines: rules made of `- = + * _ ~ |` or box-drawing characters.
    pub decoration_lines: u64,
    /// `key = value` / `key: value` lines before the first row (a preamble).
    pub metadata_lines: u64,
    /// The first [`METADATA_KEPT`] preamble entries.
    pub metadata: Vec<Metadata>,
    /// Complete lines read.
    pub lines: u64,
    /// A final line without newline, ignored at the end of input.
    pub partial_line: Option<PartialLine>,
    /// Mapping problems worth telling the user (each once).
    pub warnings: Vec<String>,
    /// Names with a number in self-named rows (JSON objects, `name=value` pairs) that are
    /// not columns: first seen after the layout was set from the log's start, with the line
    /// each was first seen on (at most [`LATER_NAMES_KEPT`]). A whole file is read again
    /// with them as columns (`commands::load`); a followed run says they are not read.
    pub later_names: Vec<LaterName>,
}

/// Names kept in [`RunTable::later_names`].
pub const LATER_NAMES_KEPT: usize = 32;

/// A name of a self-named row first seen after the layout was set.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct LaterName {
    pub name: String,
    /// Line (1-based) of the first row that has it.
    pub line: u64,
}

impl RunTable {
    /// Rows in all segments.
    pub fn rows(&self) -> usize {
        self.segments.iter().map(Segment::rows).sum()
    }

    /// A copy of everything but the segments, with `segments` instead.
    pub fn with_segments(&self, segments: Vec<Segment>) -> RunTable {
        RunTable {
            segments,
            skipped_count: self.skipped_count,
            skipped: self.skipped.clone(),
            text_lines: self.text_lines,
            comment_lines: self.comment_lines,
            blank_lines: self.blank_lines,
            header_lines: self.header_lines,
            decoration_lines: self.decoration_lines,
            metadata_lines: self.metadata_lines,
            metadata: self.metadata.clone(),
            lines: self.lines,
            partial_line: self.partial_line,
            warnings: self.warnings.clone(),
            later_names: self.later_names.clone(),
        }
    }

    /// The segment rows are currently appended to (the last one).
    pub fn last_segment(&self) -> Option<&Segment> {
        self.segments.last()
    }

    /// Rows replaced by restarts, in all segments.
    pub fn rows_replaced(&self) -> u64 {
        self.segments
            .iter()
            .flat_map(|s| &s.restarts)
            .map(|r| r.rows_replaced)
            .sum()
    }

    /// Notes `name`, first seen at `line` in a self-named row, that is not a column.
    pub fn note_later_name(&mut self, name: &str, line: u64) {
        if self.later_names.len() < LATER_NAMES_KEPT
            && !self.later_names.iter().any(|n| n.name == name)
        {
            self.later_names.push(LaterName {
                name: name.to_string(),
                line,
            });
        }
    }

    /// Records a skipped line (keeps the first [`SKIPPED_KEPT`]).
    pub fn skip(&mut self, line: u64, reason: impl FnOnce() -> SkipReason) {
        self.skipped_count += 1;
        if self.skipped.len() < SKIPPED_KEPT {
            self.skipped.push(SkippedLine {
                line,
                reason: reason(),
            });
        }
    }

    /// Notes a line too long to be read (`MAX_LINE`): counted as free text, and the first
    /// one named in a warning (a log with one such line usually has many).
    pub fn overlong(&mut self, line: u64) {
        const PREFIX: &str = "lines longer than 1 MiB are not read";
        if !self.warnings.iter().any(|w| w.starts_with(PREFIX)) {
            self.warn(format!(
                "{PREFIX} (counted as free text), the first at line {line}: \
                 is this a log of rows?"
            ));
        }
    }

    /// Adds a warning unless already present.
    pub fn warn(&mut self, message: String) {
        if !self.warnings.contains(&message) {
            self.warnings.push(message);
        }
    }
}

#[cfg(test)]
mod tests {
    use crate::parse::{parse_bytes, ParseOptions};

    #[test]
    fn forgetting_keeps_the_last_rows_and_their_lines() {
        let mut log = String::from("step temp\n");
        for i in 0..100 {
            let temp = if i == 95 {
                "****".to_string()
            } else {
                format!("{}", 300 + i)
            };
            log.push_str(&format!("{i} {temp}\n"));
        }
        let mut table = parse_bytes(log.as_bytes(), ParseOptions::default());
        let seg = &mut table.segments[0];
        seg.forget_all_but_last(10);
        assert_eq!(seg.rows(), 10);
        assert_eq!(seg.lines.first(), Some(92));
        assert_eq!(seg.columns[1].values()[0], 390.0);
        assert!(seg.columns[1].values()[5].is_nan());
        // The overflow row index moved with the values: truncating before it recounts.
        seg.truncate(5);
        assert_eq!(seg.columns[1].overflow, 0);
        assert_eq!(seg.rows(), 5);
        // Keeping more rows than there are changes nothing.
        seg.forget_all_but_last(50);
        assert_eq!(seg.rows(), 5);
    }

    /// Line numbers as runs answer every question as the plain list of lines would
    /// (the model), through pushes, truncations (restarts) and forgetting.
    mod line_numbers {
        use super::super::LineNumbers;
        use proptest::prelude::*;

        #[derive(Debug, Clone)]
        enum Op {
            Push(u64),
            Truncate(usize),
            Forget(usize),
        }

        fn op() -> impl Strategy<Value = Op> {
            prop_oneof![
                6 => (1u64..4).prop_map(Op::Push),
                1 => (0usize..40).prop_map(Op::Truncate),
                1 => (0usize..12).prop_map(Op::Forget),
            ]
        }

        fn check(runs: &LineNumbers, model: &[u64]) {
            assert_eq!(runs.len(), model.len());
            assert_eq!(runs.to_vec(), model);
            assert_eq!(runs.first(), model.first().copied());
            assert_eq!(runs.last(), model.last().copied());
            for row in 0..model.len() + 2 {
                assert_eq!(runs.get(row), model.get(row).copied(), "row {row}");
            }
            let top = model.last().copied().unwrap_or(0) + 3;
            for line in 0..top {
                let want = model.partition_point(|&l| l < line);
                assert_eq!(runs.row_at_or_after(line), want, "line {line}");
            }
            // Maximal runs: the representation depends only on the lines.
            let rebuilt: LineNumbers = model.iter().copied().collect();
            assert_eq!(runs, &rebuilt);
        }

        proptest! {
            #![proptest_config(ProptestConfig::with_cases(256))]
            #[test]
            fn runs_behave_as_a_list(ops in prop::collection::vec(op(), 0..60)) {
                let mut runs = LineNumbers::new();
                let mut model: Vec<u64> = Vec::new();
                for op in ops {
                    match op {
                        // Gaps of 1 continue a run; larger gaps (skipped or blank lines) start one.
                        Op::Push(gap) => {
                            let line = model.last().copied().unwrap_or(0) + gap;
                            runs.push(line);
                            model.push(line);
                        }
                        Op::Truncate(rows) => {
                            runs.truncate(rows);
                            model.truncate(rows);
                        }
                        Op::Forget(rows) => {
                            runs.forget_front(rows);
                            model.drain(..rows.min(model.len()));
                        }
                    }
                    check(&runs, &model);
                }
            }
        }

        #[test]
        fn consecutive_lines_are_one_run() {
            let lines: LineNumbers = (5..1005).collect();
            assert_eq!(lines.runs(), 1);
            assert_eq!(lines.get(999), Some(1004));
            assert_eq!(lines.row_at_or_after(1004), 999);
            assert_eq!(lines.row_at_or_after(2000), 1000);
            let gaps: LineNumbers = [2, 3, 4, 7, 8, 20].into_iter().collect();
            assert_eq!(gaps.runs(), 3);
            assert_eq!(gaps, [2, 3, 4, 7, 8, 20]);
            assert_eq!(gaps.row_at_or_after(5), 3);
            assert_eq!(gaps.row_at_or_after(9), 5);
        }
    }
}
