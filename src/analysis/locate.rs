//! Rows and times of a table: the locator alerts use, the time column, the row interval.

use crate::alert::RowLocator;
use crate::mapping::Role;
use crate::table::Segment;

/// Row locator over a table: rows numbered through the run.
#[derive(Debug, Clone, Copy)]
pub struct TableLocator<'a> {
    segment: &'a Segment,
    offset: usize,
    time: Option<&'a [f64]>,
}

impl<'a> TableLocator<'a> {
    /// A locator for `segment`, whose first row is row `offset` of the run.
    pub fn new(segment: &'a Segment, offset: usize) -> TableLocator<'a> {
        TableLocator {
            segment,
            offset,
            time: time_values(segment),
        }
    }
}

impl RowLocator for TableLocator<'_> {
    fn line(&self, row: usize) -> Option<u64> {
        self.segment.lines.get(row.checked_sub(self.offset)?)
    }
    fn time(&self, row: usize) -> Option<f64> {
        self.time?.get(row.checked_sub(self.offset)?).copied()
    }
}

/// The time column's values (canonical ps), if the segment has one.
pub fn time_values(segment: &Segment) -> Option<&[f64]> {
    segment.column(Role::Time).map(|c| c.values())
}

pub(super) fn row_interval_ps(seg: &Segment) -> Option<f64> {
    let t = time_values(seg)?;
    let n = t.len();
    if n < 2 {
        return None;
    }
    let dt = (t.last()? - t.first()?) / (n - 1) as f64;
    (dt.is_finite() && dt > 0.0).then_some(dt)
}
