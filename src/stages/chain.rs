//! A chain of logs: several files, in the order given, as consecutive stages of one system
//! (pure: the tables are read by the caller).
//!
//! The tables are joined segment by segment, each file starting a segment of its own (so a
//! stage never spans two files). Simulated time either continues from one file to the
//! next, or restarts (each stage's log counting from zero): a file whose first time is not
//! after the previous file's last is shifted so that its first row sits one of its own
//! output intervals after that last row. Line numbers stay those of each row's own file.

use crate::mapping::Role;
use crate::table::{RunTable, Segment};

/// The joined table and, per file, the index of its first segment.
#[derive(Debug, Clone, Default)]
pub struct Chain {
    pub table: RunTable,
    /// Index of each file's first segment in `table.segments` (a file with no rows owns no
    /// segment; its entry equals the next file's).
    pub file_first_segment: Vec<usize>,
    /// The time shift applied to each file, ps (0 when its time continued).
    pub time_shift_ps: Vec<f64>,
}

impl Chain {
    /// The file a segment comes from (index into the files given).
    pub fn file_of(&self, segment: usize) -> Option<usize> {
        self.file_first_segment
            .iter()
            .rposition(|&first| first <= segment)
    }

    /// Segments that begin a file after the first.
    pub fn file_starts(&self) -> Vec<usize> {
        self.file_first_segment.iter().skip(1).copied().collect()
    }
}

/// Logged times of a segment (a time column read from the file or derived from the step).
fn times(seg: &Segment) -> Option<&[f64]> {
    seg.column(Role::Time).map(|c| c.values())
}

fn last_time(segments: &[Segment]) -> Option<f64> {
    segments
        .iter()
        .rev()
        .find_map(|s| times(s).and_then(|t| t.iter().rev().find(|v| v.is_finite()).copied()))
}

/// The shift for a file whose segments are `segs`, after a run that ended at `prev_end`.
fn shift_for(segs: &[Segment], prev_end: Option<f64>) -> f64 {
    let Some(prev_end) = prev_end else {
        return 0.0;
    };
    let Some(t) = segs.iter().find_map(|s| times(s).filter(|t| !t.is_empty())) else {
        return 0.0;
    };
    let Some(&first) = t.first() else {
        return 0.0;
    };
    if first > prev_end {
        return 0.0;
    }
    let dt = match t {
        [a, b, ..] if b > a => b - a,
        _ => 0.0,
    };
    prev_end + dt - first
}

/// Joins the tables of a chain, in order.
pub fn join(tables: Vec<RunTable>) -> Chain {
    let mut out = Chain::default();
    for (k, mut t) in tables.into_iter().enumerate() {
        out.file_first_segment.push(out.table.segments.len());
        let shift = if k == 0 {
            0.0
        } else {
            shift_for(&t.segments, last_time(&out.table.segments))
        };
        out.time_shift_ps.push(shift);
        if shift != 0.0 {
            for seg in &mut t.segments {
                for c in &mut seg.columns {
                    if c.spec.role == Some(Role::Time) {
                        for v in &mut c.values {
                            *v += shift;
                        }
                    }
                }
            }
        }
        let acc = &mut out.table;
        acc.segments
            .extend(t.segments.into_iter().filter(|s| s.rows() > 0));
        acc.skipped_count += t.skipped_count;
        let room = crate::table::SKIPPED_KEPT.saturating_sub(acc.skipped.len());
        acc.skipped.extend(t.skipped.into_iter().take(room));
        acc.text_lines += t.text_lines;
        acc.comment_lines += t.comment_lines;
        acc.blank_lines += t.blank_lines;
        acc.header_lines += t.header_lines;
        acc.decoration_lines += t.decoration_lines;
        acc.metadata_lines += t.metadata_lines;
        acc.metadata.extend(t.metadata);
        acc.lines += t.lines;
        acc.partial_line = t.partial_line.or(acc.partial_line.take());
        for w in t.warnings {
            if !acc.warnings.contains(&w) {
                acc.warnings.push(w);
            }
        }
    }
    out
}
