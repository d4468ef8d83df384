//! What a chart needs of a followed run's older rows once they are forgotten.
//!
//! A followed run keeps only its last rows at full resolution (bounded memory, see
//! [`super::bound_memory`]). To still draw "all rows", the values of every forgotten row of
//! the analysed segment are folded here into buckets of `2^k` consecutive rows holding
//! min, max and sum (non-finite values counted apart); when there are more than
//! `max_buckets`, neighbouring pairs merge and the bucket length doubles. A column's whole
//! series is then these buckets followed by the rows still in the table: a
//! [`SeriesView`], which [`SeriesView::resample`] turns into as many buckets as a chart
//! has columns.

/// Min, max and sum of consecutive rows; non-finite values are counted, not summed.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Bucket {
    /// Rows in the bucket (finite or not).
    pub rows: u64,
    /// Finite values among them.
    pub finite: u64,
    pub min: f64,
    pub max: f64,
    pub sum: f64,
}

impl Default for Bucket {
    fn default() -> Self {
        Bucket {
            rows: 0,
            finite: 0,
            min: f64::INFINITY,
            max: f64::NEG_INFINITY,
            sum: 0.0,
        }
    }
}

impl Bucket {
    /// Adds one row's value.
    pub fn push(&mut self, v: f64) {
        self.rows += 1;
        if v.is_finite() {
            self.finite += 1;
            self.min = self.min.min(v);
            self.max = self.max.max(v);
            self.sum += v;
        }
    }

    /// Adds the rows of another bucket.
    pub fn merge(&mut self, other: &Bucket) {
        self.rows += other.rows;
        self.finite += other.finite;
        self.min = self.min.min(other.min);
        self.max = self.max.max(other.max);
        self.sum += other.sum;
    }

    /// Mean of the finite values, if any.
    pub fn mean(&self) -> Option<f64> {
        (self.finite > 0).then(|| self.sum / self.finite as f64)
    }

    /// Min and max of the finite values, if any.
    pub fn range(&self) -> Option<(f64, f64)> {
        (self.finite > 0).then_some((self.min, self.max))
    }

    /// Rows whose value was NaN or infinite.
    pub fn nonfinite(&self) -> u64 {
        self.rows - self.finite
    }
}

/// Consecutive rows folded into equal buckets (the last one possibly partial), aligned at
/// row 0, at most `max_buckets` whole buckets.
#[derive(Debug, Clone, PartialEq)]
pub struct Envelope {
    bucket_rows: u64,
    buckets: Vec<Bucket>,
    partial: Bucket,
    max_buckets: usize,
}

impl Envelope {
    /// An empty envelope holding at most `max_buckets` (at least 2) whole buckets.
    pub fn new(max_buckets: usize) -> Envelope {
        Envelope {
            bucket_rows: 1,
            buckets: Vec::new(),
            partial: Bucket::default(),
            max_buckets: max_buckets.max(2),
        }
    }

    /// Rows folded so far.
    pub fn rows(&self) -> u64 {
        self.buckets.len() as u64 * self.bucket_rows + self.partial.rows
    }

    /// Rows per whole bucket.
    pub fn bucket_rows(&self) -> u64 {
        self.bucket_rows
    }

    /// Appends the values of the next rows. Amortised O(1) a value.
    pub fn extend(&mut self, values: &[f64]) {
        for &v in values {
            self.partial.push(v);
            if self.partial.rows == self.bucket_rows {
                self.buckets.push(std::mem::take(&mut self.partial));
                if self.buckets.len() > self.max_buckets {
                    self.halve();
                }
            }
        }
    }

    /// Merges neighbouring pairs; an odd last bucket becomes the partial one.
    fn halve(&mut self) {
        if !self.buckets.len().is_multiple_of(2) {
            if let Some(mut last) = self.buckets.pop() {
                last.merge(&self.partial);
                self.partial = last;
            }
        }
        self.buckets = self
            .buckets
            .chunks_exact(2)
            .map(|pair| {
                let mut merged = Bucket::default();
                for b in pair {
                    merged.merge(b);
                }
                merged
            })
            .collect();
        self.bucket_rows *= 2;
    }

    /// Each bucket with its first row, oldest first (the partial one last, if not empty).
    pub fn buckets(&self) -> impl Iterator<Item = (u64, &Bucket)> + '_ {
        let n = self.bucket_rows;
        self.buckets
            .iter()
            .chain(std::iter::once(&self.partial).filter(|p| p.rows > 0))
            .enumerate()
            .map(move |(i, b)| (i as u64 * n, b))
    }
}

/// Buckets of forgotten rows per column of the analysed segment.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct History {
    /// The segment whose rows are folded here.
    segment: Option<usize>,
    columns: Vec<Envelope>,
}

/// Whole buckets kept per column: a chart is at most a few hundred columns wide, so
/// 512 buckets draw any width at full detail (24 KiB a column).
pub const HISTORY_BUCKETS: usize = 512;

impl History {
    /// Folds the first `rows` rows of `columns` (segment `segment`), about to be forgotten.
    /// A new segment starts the history again (charts show the analysed, last segment).
    pub fn fold(&mut self, segment: usize, columns: &[&[f64]], rows: usize) {
        if self.segment != Some(segment) || self.columns.len() != columns.len() {
            self.segment = Some(segment);
            self.columns = columns
                .iter()
                .map(|_| Envelope::new(HISTORY_BUCKETS))
                .collect();
        }
        for (env, values) in self.columns.iter_mut().zip(columns) {
            env.extend(values.get(..rows).unwrap_or(values));
        }
    }

    /// The folded rows of column `column` when segment `segment` is the one folded here.
    pub fn column(&self, segment: usize, column: usize) -> Option<&Envelope> {
        if self.segment == Some(segment) {
            self.columns.get(column)
        } else {
            None
        }
    }

    /// Rows folded for segment `segment`.
    pub fn rows(&self, segment: usize) -> u64 {
        self.column(segment, 0).map_or(0, Envelope::rows)
    }
}

/// A column's whole series: folded buckets (rows `0..folded.rows()`) then the rows kept.
#[derive(Debug, Clone, Copy)]
pub struct SeriesView<'a> {
    pub folded: Option<&'a Envelope>,
    pub recent: &'a [f64],
}

impl<'a> SeriesView<'a> {
    /// A series of kept rows only.
    pub fn recent(values: &'a [f64]) -> SeriesView<'a> {
        SeriesView {
            folded: None,
            recent: values,
        }
    }

    fn folded_rows(&self) -> u64 {
        self.folded.map_or(0, Envelope::rows)
    }

    /// Rows in the whole series.
    pub fn rows(&self) -> u64 {
        self.folded_rows() + self.recent.len() as u64
    }

    /// The last value, if any row is kept.
    pub fn last(&self) -> Option<f64> {
        self.recent.last().copied()
    }

    /// The value of `row`: exact for kept rows, the mean of its bucket for folded ones.
    pub fn value_at(&self, row: u64) -> Option<f64> {
        let f = self.folded_rows();
        if row >= f {
            let i = usize::try_from(row - f).ok()?;
            return self.recent.get(i).copied();
        }
        let env = self.folded?;
        env.buckets()
            .find(|(first, b)| row >= *first && row < first + b.rows)
            .and_then(|(_, b)| b.mean())
    }

    /// `n` buckets splitting rows `from..to` evenly (bucket `i` holds rows
    /// `from + i·len/n .. from + (i+1)·len/n`, clamped to the rows that exist). A folded
    /// bucket that straddles a boundary goes whole to the bucket holding its first row.
    /// O(n + rows kept in range + folded buckets).
    pub fn resample(&self, from: u64, to: u64, n: usize) -> Vec<Bucket> {
        let mut out = vec![Bucket::default(); n];
        if n == 0 || to <= from {
            return out;
        }
        let len = to - from;
        let index = |row: u64| -> Option<usize> {
            if row < from || row >= to {
                return None;
            }
            let i = (u128::from(row - from) * n as u128 / u128::from(len)) as usize;
            Some(i.min(n - 1))
        };
        if let Some(env) = self.folded {
            for (first, b) in env.buckets() {
                if let Some(slot) = index(first).and_then(|i| out.get_mut(i)) {
                    slot.merge(b);
                } else if first < from && first + b.rows > from {
                    if let Some(slot) = out.first_mut() {
                        slot.merge(b);
                    }
                }
            }
        }
        let f = self.folded_rows();
        let start = from.max(f);
        let end = to.min(self.rows());
        if start < end {
            let a = usize::try_from(start - f).unwrap_or(usize::MAX);
            let b = usize::try_from(end - f).unwrap_or(usize::MAX);
            for (k, &v) in self.recent.get(a..b).unwrap_or_default().iter().enumerate() {
                if let Some(slot) = index(start + k as u64).and_then(|i| out.get_mut(i)) {
                    slot.push(v);
                }
            }
        }
        out
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn envelope_keeps_min_max_and_mean_of_every_row() {
        let values: Vec<f64> = (0..1000).map(|i| (i % 37) as f64 - 3.0).collect();
        let mut env = Envelope::new(8);
        env.extend(&values[..333]);
        env.extend(&values[333..]);
        assert_eq!(env.rows(), 1000);
        assert!(env.buckets().count() <= 9);
        let mut total = Bucket::default();
        let mut next = 0;
        for (first, b) in env.buckets() {
            assert_eq!(first, next, "buckets are contiguous");
            next += b.rows;
            total.merge(b);
        }
        assert_eq!(next, 1000);
        assert_eq!(total.min, -3.0);
        assert_eq!(total.max, 33.0);
        let mean = values.iter().sum::<f64>() / 1000.0;
        assert!((total.mean().unwrap() - mean).abs() < 1e-12);
    }

    #[test]
    fn non_finite_values_are_counted_not_summed() {
        let mut b = Bucket::default();
        for v in [1.0, f64::NAN, 3.0, f64::INFINITY] {
            b.push(v);
        }
        assert_eq!((b.rows, b.finite, b.nonfinite()), (4, 2, 2));
        assert_eq!(b.mean(), Some(2.0));
        assert_eq!(b.range(), Some((1.0, 3.0)));
    }

    #[test]
    fn resampling_kept_rows_splits_them_evenly() {
        let values: Vec<f64> = (0..10).map(f64::from).collect();
        let s = SeriesView::recent(&values);
        let b = s.resample(0, 10, 5);
        let means: Vec<f64> = b.iter().map(|b| b.mean().unwrap()).collect();
        assert_eq!(means, vec![0.5, 2.5, 4.5, 6.5, 8.5]);
        // A range wider than the data: the buckets past the last row stay empty.
        let b = s.resample(0, 20, 4);
        assert_eq!(
            b.iter().map(|b| b.rows).collect::<Vec<_>>(),
            vec![5, 5, 0, 0]
        );
        // A window in the middle.
        let b = s.resample(4, 6, 2);
        assert_eq!((b[0].min, b[1].max), (4.0, 5.0));
    }

    #[test]
    fn resampling_folded_and_kept_rows_counts_every_row_once() {
        let values: Vec<f64> = (0..5000).map(|i| (i as f64).sin()).collect();
        let mut h = History::default();
        h.fold(0, &[&values[..3000]], 3000);
        let env = h.column(0, 0).unwrap();
        let s = SeriesView {
            folded: Some(env),
            recent: &values[3000..],
        };
        assert_eq!(s.rows(), 5000);
        let b = s.resample(0, 5000, 100);
        assert_eq!(b.iter().map(|b| b.rows).sum::<u64>(), 5000);
        let lo = b.iter().map(|b| b.min).fold(f64::INFINITY, f64::min);
        let hi = b.iter().map(|b| b.max).fold(f64::NEG_INFINITY, f64::max);
        let want_lo = values.iter().copied().fold(f64::INFINITY, f64::min);
        let want_hi = values.iter().copied().fold(f64::NEG_INFINITY, f64::max);
        assert_eq!((lo, hi), (want_lo, want_hi));
        assert_eq!(s.value_at(4999), Some(values[4999]));
        assert!(s.value_at(10).is_some());
        // Another segment's history is not used.
        assert!(h.column(1, 0).is_none());
    }
}
