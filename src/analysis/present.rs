//! Absent values: a column whose rows miss some values (a `name=value` or JSON row without
//! the name) is analysed as the series of its present values, and rows found on that
//! series are mapped back to the segment's rows. A column without absent values is
//! borrowed as it is (no copy, no scan).

use std::borrow::Cow;

use crate::table::{is_absent, Column};

/// A column's present values and, when some are absent, the segment row of each.
#[derive(Debug, Clone)]
pub(super) struct Present<'a> {
    values: Cow<'a, [f64]>,
    /// Segment row of each present value (`None`: every row is present).
    rows: Option<Vec<usize>>,
    /// Rows of the segment.
    len: usize,
}

impl<'a> Present<'a> {
    /// The present values of `col` (borrowed when the column has never had an absent
    /// value).
    pub(super) fn of(col: &'a Column) -> Present<'a> {
        let v = col.values();
        if col.absent == 0 {
            return Present::all(v);
        }
        Present::of_values(v)
    }

    /// The present values of `v` (scans for absent values).
    pub(super) fn of_values(v: &'a [f64]) -> Present<'a> {
        if !v.iter().any(|x| is_absent(*x)) {
            return Present::all(v);
        }
        let rows: Vec<usize> = (0..v.len())
            .filter(|&i| v.get(i).is_some_and(|x| !is_absent(*x)))
            .collect();
        let values: Vec<f64> = rows.iter().filter_map(|&i| v.get(i).copied()).collect();
        Present {
            values: Cow::Owned(values),
            rows: Some(rows),
            len: v.len(),
        }
    }

    fn all(v: &'a [f64]) -> Present<'a> {
        Present {
            values: Cow::Borrowed(v),
            rows: None,
            len: v.len(),
        }
    }

    /// The present values, in row order.
    pub(super) fn values(&self) -> &[f64] {
        &self.values
    }

    /// True when some rows are absent.
    pub(super) fn has_absent(&self) -> bool {
        self.rows.is_some()
    }

    /// The segment row of present value `i` (`i` = the count of present values: the
    /// segment's end).
    pub(super) fn row(&self, i: usize) -> usize {
        match &self.rows {
            None => i,
            Some(r) => r.get(i).copied().unwrap_or(self.len),
        }
    }

    /// How many present values lie before segment row `row` (the index of the first
    /// present value at or after it).
    pub(super) fn index(&self, row: usize) -> usize {
        match &self.rows {
            None => row.min(self.len),
            Some(r) => r.partition_point(|&x| x < row),
        }
    }

    /// `other`'s values at the present rows (`other` row-aligned with the column).
    pub(super) fn gather<'b>(&self, other: &'b [f64]) -> Cow<'b, [f64]> {
        match &self.rows {
            None => Cow::Borrowed(other),
            Some(r) => Cow::Owned(
                r.iter()
                    .map(|&i| other.get(i).copied().unwrap_or(f64::NAN))
                    .collect(),
            ),
        }
    }
}

/// The first row of `v` holding a non-finite value written in the log (absent values are
/// not non-finite), or `v.len()`.
pub(super) fn first_written_nonfinite(v: &[f64]) -> usize {
    v.iter()
        .position(|x| !x.is_finite() && !is_absent(*x))
        .unwrap_or(v.len())
}

/// Rows where every one of `columns` (row-aligned) has a value: the columns' values at
/// those rows, or the columns as they are when none has an absent value.
pub(super) fn rows_all_present<'b>(columns: &[&'b [f64]]) -> Vec<Cow<'b, [f64]>> {
    let n = columns.iter().map(|c| c.len()).min().unwrap_or(0);
    let any_absent = columns.iter().any(|c| c.iter().any(|x| is_absent(*x)));
    if !any_absent {
        return columns.iter().map(|c| Cow::Borrowed(*c)).collect();
    }
    let keep: Vec<usize> = (0..n)
        .filter(|&i| {
            columns
                .iter()
                .all(|c| c.get(i).is_some_and(|x| !is_absent(*x)))
        })
        .collect();
    columns
        .iter()
        .map(|c| Cow::Owned(keep.iter().filter_map(|&i| c.get(i).copied()).collect()))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::table::ABSENT;

    #[test]
    fn present_values_map_back_to_rows() {
        let v = [1.0, ABSENT, 3.0, f64::NAN, ABSENT, 6.0];
        let p = Present::of_values(&v);
        assert!(p.has_absent());
        assert_eq!(p.values().len(), 4);
        assert_eq!(p.values()[0], 1.0);
        assert_eq!(p.values()[1], 3.0);
        assert!(p.values()[2].is_nan() && !is_absent(p.values()[2]));
        assert_eq!(
            (p.row(0), p.row(1), p.row(2), p.row(3), p.row(4)),
            (0, 2, 3, 5, 6)
        );
        assert_eq!(
            (p.index(0), p.index(1), p.index(2), p.index(5), p.index(6)),
            (0, 1, 1, 3, 4)
        );
        let t = [0.0, 1.0, 2.0, 3.0, 4.0, 5.0];
        assert_eq!(p.gather(&t).as_ref(), &[0.0, 2.0, 3.0, 5.0]);
        assert_eq!(first_written_nonfinite(&v), 3);
        assert_eq!(first_written_nonfinite(&[ABSENT, 1.0]), 2);
    }

    #[test]
    fn a_column_without_absent_values_is_borrowed() {
        let v = [1.0, f64::NAN, 3.0];
        let p = Present::of_values(&v);
        assert!(!p.has_absent());
        assert!(matches!(p.values, Cow::Borrowed(_)));
        assert_eq!((p.row(2), p.index(2)), (2, 2));
    }

    #[test]
    fn rows_where_all_are_present() {
        let a = [1.0, ABSENT, 3.0, 4.0];
        let b = [5.0, 6.0, ABSENT, 8.0];
        let out = rows_all_present(&[&a, &b]);
        assert_eq!(out[0].as_ref(), &[1.0, 4.0]);
        assert_eq!(out[1].as_ref(), &[5.0, 8.0]);
    }
}
