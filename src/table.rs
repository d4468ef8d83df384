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
//!   segment's series; [`Segment::lines`] gives each row's 1-based source line.
//! * Non-finite values from `nan`/`inf` tokens are counted in [`Column::non_finite`];
//!   `****` fields are stored as NaN and counted in [`Column::overflow`].

use std::fmt;

use serde::Serialize;

use crate::mapping::{ColumnSpec, Role};
use crate::parse::layout::{Delimiter, HeaderName};

/// How many skipped lines are kept with their line number and reason.
pub const SKIPPED_KEPT: usize = 100;

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
            if !value.is_finite() {
                self.non_finite += 1;
            }
            self.values.push(value);
        }
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
        let removed_nonfinite = self
            .values
            .get(rows..)
            .map_or(0, |s| s.iter().filter(|v| !v.is_finite()).count() as u64);
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
    /// Source line of each row (1-based).
    pub lines: Vec<u64>,
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
        Some((*self.lines.first()?, *self.lines.last()?))
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
        self.lines.drain(..drop);
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
    /// Header lines (first and repeated).
    pub header_lines: u64,
    /// Complete lines read.
    pub lines: u64,
    /// A final line without newline, ignored at the end of input.
    pub partial_line: Option<PartialLine>,
    /// Mapping problems worth telling the user (each once).
    pub warnings: Vec<String>,
}

impl RunTable {
    /// Rows in all segments.
    pub fn rows(&self) -> usize {
        self.segments.iter().map(Segment::rows).sum()
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
        assert_eq!(seg.lines.first(), Some(&92));
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
}
