//! Bounded memory for endless runs: a series that keeps its recent values at full
//! resolution and folds older ones into block summaries.
//!
//! Past the cap, the oldest values are folded into blocks of `2^k` consecutive rows, each
//! kept as [`Moments`] (count, mean, sum of squared deviations, min, max). Blocks are aligned
//! at row 0 and all have the same length; when there are too many, neighbouring pairs merge
//! and the block length doubles. Memory is therefore bounded by the cap: at most `cap`
//! values at full resolution plus at most `cap / 4` blocks of 40 bytes.
//!
//! What stays exact after folding (tested against the unfolded series):
//! - count, mean, the spread (variance with n − 1), min and max — [`FoldedSeries::moments`];
//! - the block means at the block length and every longer block — [`FoldedSeries::block_means`],
//!   so Flyvbjerg–Petersen block-averaging levels at or above the folded block length, and
//!   the standard error they give once blocks are longer than the correlation time, equal
//!   those of the unfolded data;
//! - the chart's min/max envelope per block — [`FoldedSeries::envelope`].
//!
//! What becomes approximate: the statistical inefficiency `g` and the equilibration onset
//! are computed from block means where the data are folded (the onset search already works
//! on block means for long series); the drift slope is fitted to block means at their mean
//! times (weights equal, so the slope differs from the full-resolution fit only through the
//! within-block spread); spike detection runs on the recent full-resolution part only.
//! [`FoldedSeries::is_folded`] says when this applies, so that the user can be told.

use crate::stats::Moments;
use crate::table::is_absent;

/// Block means with the blocks that held no value (`None`: every row of the block was
/// without one) given their nearest earlier block's mean (the first ones the first
/// known), so that means stay aligned with their blocks' rows. Empty when no block has a
/// value.
pub fn fill_empty_means(means: &[Option<f64>]) -> Vec<f64> {
    let Some(first) = means.iter().flatten().next().copied() else {
        return Vec::new();
    };
    let mut last = first;
    means
        .iter()
        .map(|m| {
            if let Some(v) = m {
                last = *v;
            }
            last
        })
        .collect()
}

/// Rows kept at full resolution per followed run unless `--keep-rows` or `keep-rows` says
/// otherwise. 100 runs of 10 columns followed at once on a shared login node then hold at
/// most 100 × 11 series × (8 B × 10 000 rows + 40 B × 1 250 blocks) ≈ 140 MB (the rows'
/// line numbers count as a series), about what 13 000 rows a run would take unfolded;
/// runs shorter than the cap are never folded and stay exact.
pub const DEFAULT_KEEP_ROWS: usize = 10_000;

/// The smallest cap accepted: the per-row detectors need about a thousand rows behind
/// their cursors (spike context, runaway baseline, windows) and folding takes half.
pub const MIN_KEEP_ROWS: usize = 2_000;

/// The smallest cap accepted (so that the folded blocks always have a tail to compare with).
pub const MIN_CAP: usize = 64;

/// A series with its recent part at full resolution and its older part folded into blocks.
#[derive(Debug, Clone)]
pub struct FoldedSeries {
    cap: usize,
    block_len: usize,
    blocks: Vec<Moments>,
    /// The block being filled: folded rows that do not make a whole block yet (their
    /// values; an absent value, [`ABSENT`](crate::table::ABSENT), is a row without one).
    partial: Moments,
    /// Rows in the block being filled, with or without a value.
    partial_rows: usize,
    recent: Vec<f64>,
}

impl FoldedSeries {
    /// A series that keeps at most `cap` values at full resolution (at least [`MIN_CAP`]).
    pub fn with_cap(cap: usize) -> FoldedSeries {
        FoldedSeries {
            cap: cap.max(MIN_CAP),
            block_len: 1,
            blocks: Vec::new(),
            partial: Moments::new(),
            partial_rows: 0,
            recent: Vec::new(),
        }
    }

    /// Appends one value; folds the oldest values when the cap is exceeded. Amortised O(1).
    pub fn push(&mut self, value: f64) {
        self.recent.push(value);
        if self.recent.len() > self.cap {
            self.fold();
        }
    }

    /// Appends many values.
    pub fn extend(&mut self, values: &[f64]) {
        for &v in values {
            self.push(v);
        }
    }

    /// Number of rows seen (folded and recent).
    pub fn len(&self) -> u64 {
        self.folded_rows() + self.recent.len() as u64
    }

    /// Whether no value was pushed.
    pub fn is_empty(&self) -> bool {
        self.folded_rows() == 0 && self.recent.is_empty()
    }

    /// Whether older values have been folded (some statistics are then approximate).
    pub fn is_folded(&self) -> bool {
        self.folded_rows() > 0
    }

    /// Rows per folded block (1 while nothing is folded).
    pub fn block_len(&self) -> usize {
        self.block_len
    }

    /// Rows held in folded blocks.
    pub fn folded_rows(&self) -> u64 {
        self.blocks.len() as u64 * self.block_len as u64 + self.partial_rows as u64
    }

    /// The recent values at full resolution (the last rows of the series).
    pub fn recent(&self) -> &[f64] {
        &self.recent
    }

    /// The folded blocks, oldest first.
    pub fn blocks(&self) -> &[Moments] {
        &self.blocks
    }

    /// Count, mean, spread, min and max of the whole series (exact).
    pub fn moments(&self) -> Moments {
        let mut total = Moments::new();
        for block in &self.blocks {
            total.merge(block);
        }
        total.merge(&self.partial);
        for &v in self.recent.iter().filter(|v| !is_absent(**v)) {
            total.push(v);
        }
        total
    }

    /// Means of consecutive blocks of `block_len()` rows over the whole series, aligned at
    /// row 0; an incomplete last block is dropped. Equal to the block means of the unfolded
    /// series (up to rounding). Rows without a value are left out of their block's mean;
    /// a block with none takes its neighbour's ([`fill_empty_means`]).
    pub fn block_means(&self) -> Vec<f64> {
        let mut means: Vec<Option<f64>> = self.blocks.iter().map(Moments::mean).collect();
        let mut rest = self.recent.as_slice();
        if self.partial_rows > 0 {
            // The block being filled continues into the recent values.
            let missing = self.block_len - self.partial_rows;
            let Some(head) = rest.get(..missing) else {
                return fill_empty_means(&means);
            };
            let mut block = self.partial;
            for &v in head.iter().filter(|v| !is_absent(**v)) {
                block.push(v);
            }
            means.push(block.mean());
            rest = rest.get(missing..).unwrap_or_default();
        }
        means.extend(rest.chunks_exact(self.block_len).map(|c| {
            let present: Vec<f64> = c.iter().copied().filter(|v| !is_absent(*v)).collect();
            Moments::from_slice(&present).mean()
        }));
        fill_empty_means(&means)
    }

    /// Min and max per block of `block_len()` rows (folded part) followed by each recent
    /// value as its own (min, max): the envelope a chart draws.
    pub fn envelope(&self) -> Vec<(f64, f64)> {
        let mut out: Vec<(f64, f64)> = self
            .blocks
            .iter()
            .chain(std::iter::once(&self.partial))
            .filter_map(|b| Some((b.min()?, b.max()?)))
            .collect();
        out.extend(self.recent.iter().map(|&v| (v, v)));
        out
    }

    /// Folds `values` straight into blocks, as the rows that follow everything pushed so
    /// far: for a caller that keeps the recent rows itself (the follow loop keeps them in
    /// its table). Only valid while [`recent`](Self::recent) is empty (nothing was pushed
    /// with [`push`](Self::push)); otherwise the values are pushed. Amortised O(1) a value.
    pub fn fold_values(&mut self, values: &[f64]) {
        if !self.recent.is_empty() {
            self.extend(values);
            return;
        }
        self.fold_into_blocks(values);
        self.merge_blocks();
    }

    /// The folded rows that do not make a whole block yet.
    pub fn partial(&self) -> &Moments {
        &self.partial
    }

    /// Moments of consecutive blocks of `block_len()` rows over the whole series followed
    /// by `tail` (rows that come after everything pushed or folded), aligned at row 0,
    /// with the rows of the incomplete last block returned apart. The block moments equal
    /// those of the same blocks of the unfolded series (up to rounding).
    pub fn blocks_with_tail(&self, tail: &[f64]) -> (Vec<Moments>, Moments) {
        let mut blocks = self.blocks.clone();
        let (mut current, mut rows) = (self.partial, self.partial_rows);
        for &v in self.recent.iter().chain(tail) {
            if !is_absent(v) {
                current.push(v);
            }
            rows += 1;
            if rows == self.block_len {
                blocks.push(std::mem::take(&mut current));
                rows = 0;
            }
        }
        (blocks, current)
    }

    fn fold_into_blocks(&mut self, values: &[f64]) {
        for &value in values {
            if !is_absent(value) {
                self.partial.push(value);
            }
            self.partial_rows += 1;
            if self.partial_rows == self.block_len {
                self.blocks.push(std::mem::take(&mut self.partial));
                self.partial_rows = 0;
            }
        }
    }

    /// Moves the oldest values, beyond half the cap, into blocks; merges neighbouring block
    /// pairs while there are more than `cap / 4` blocks.
    fn fold(&mut self) {
        let to_fold = self.recent.len().saturating_sub(self.cap / 2);
        let mut recent = std::mem::take(&mut self.recent);
        self.fold_into_blocks(recent.get(..to_fold).unwrap_or_default());
        recent.drain(..to_fold);
        self.recent = recent;
        self.merge_blocks();
    }

    /// Merges neighbouring block pairs while there are more than `cap / 4` blocks.
    fn merge_blocks(&mut self) {
        while self.blocks.len() > self.cap / 4 {
            // With an odd count the last block and the rows after it become the new block
            // being filled, so every whole block keeps the same length and alignment.
            if !self.blocks.len().is_multiple_of(2) {
                if let Some(mut last) = self.blocks.pop() {
                    last.merge(&self.partial);
                    self.partial = last;
                    self.partial_rows += self.block_len;
                }
            }
            self.blocks = self
                .blocks
                .chunks_exact(2)
                .map(|pair| {
                    let mut merged = pair.first().copied().unwrap_or_default();
                    if let Some(second) = pair.get(1) {
                        merged.merge(second);
                    }
                    merged
                })
                .collect();
            self.block_len *= 2;
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::stats::{block_levels, mean, min_max, variance};

    /// A deterministic correlated series (AR(1), φ = 0.9, plus a slow trend).
    fn series(n: usize) -> Vec<f64> {
        let mut state = 0x2545_F491_4F6C_DD1Du64;
        let mut x = 0.0;
        (0..n)
            .map(|i| {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                let u = (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5;
                x = 0.9 * x + u;
                1000.0 + x + 1e-4 * i as f64
            })
            .collect()
    }

    fn close(a: f64, b: f64, rel: f64) -> bool {
        (a - b).abs() <= rel * a.abs().max(b.abs()).max(1e-300)
    }

    /// Rows without a value (a record row that did not write the name) are rows of their
    /// block but not values: the moments are those of the values written, the blocks stay
    /// aligned with the rows, and a block with no value takes its neighbour's mean.
    #[test]
    fn rows_without_a_value_are_rows_but_not_values() {
        use crate::table::ABSENT;
        let data = series(50_001);
        // Every third row without a value, and rows 1000..1100 without any.
        let with_gaps: Vec<f64> = data
            .iter()
            .enumerate()
            .map(|(i, &v)| {
                if i % 3 == 2 || (1000..1100).contains(&i) {
                    ABSENT
                } else {
                    v
                }
            })
            .collect();
        let present: Vec<f64> = with_gaps
            .iter()
            .copied()
            .filter(|v| !is_absent(*v))
            .collect();
        let mut s = FoldedSeries::with_cap(256);
        s.extend(&with_gaps);
        assert!(s.is_folded());
        assert_eq!(s.len(), with_gaps.len() as u64);
        // Two-pass mean and variance of the values written are the reference.
        let m = s.moments();
        assert_eq!(m.count(), present.len() as u64);
        assert!(close(m.mean().unwrap(), mean(&present).unwrap(), 1e-12));
        assert!(close(
            m.variance().unwrap(),
            variance(&present).unwrap(),
            1e-9
        ));
        // One finite mean per whole block of rows, each the mean of its block's values.
        let b = s.block_len();
        let means = s.block_means();
        assert_eq!(means.len(), with_gaps.len() / b);
        assert!(means.iter().all(|v| v.is_finite()));
        for (k, got) in means.iter().enumerate() {
            let block: Vec<f64> = with_gaps[k * b..(k + 1) * b]
                .iter()
                .copied()
                .filter(|v| !is_absent(*v))
                .collect();
            if let Some(want) = mean(&block) {
                assert!(close(*got, want, 1e-9), "block {k}: {got} vs {want}");
            }
        }
        // Folding straight into blocks gives the same blocks as pushing.
        let mut direct = FoldedSeries::with_cap(256);
        direct.fold_values(&with_gaps);
        let (blocks, _) = direct.blocks_with_tail(&[]);
        let counts: u64 = blocks.iter().map(Moments::count).sum();
        assert!(counts <= present.len() as u64);
        assert_eq!(direct.len(), with_gaps.len() as u64);
    }

    #[test]
    fn empty_block_means_take_their_neighbours() {
        assert_eq!(
            fill_empty_means(&[None, Some(1.0), None, None, Some(4.0), None]),
            vec![1.0, 1.0, 1.0, 1.0, 4.0, 4.0]
        );
        assert!(fill_empty_means(&[None, None]).is_empty());
    }

    #[test]
    fn memory_stays_bounded() {
        let mut s = FoldedSeries::with_cap(1024);
        for v in series(1_000_000) {
            s.push(v);
        }
        assert!(s.recent().len() <= 1024);
        assert!(s.blocks().len() <= 1024 / 4 + 1);
        assert_eq!(s.len(), 1_000_000);
        assert!(s.is_folded());
    }

    #[test]
    fn moments_equal_the_unfolded_series() {
        let data = series(100_003);
        let mut s = FoldedSeries::with_cap(512);
        s.extend(&data);
        let m = s.moments();
        // Two-pass mean and variance of the full data are the reference (NIST StRD style
        // accuracy is checked for them in the statistics tests).
        assert_eq!(m.count(), data.len() as u64);
        assert!(close(m.mean().unwrap(), mean(&data).unwrap(), 1e-12));
        assert!(close(m.variance().unwrap(), variance(&data).unwrap(), 1e-9));
        let (lo, hi) = min_max(&data).unwrap();
        assert_eq!(m.min(), Some(lo));
        assert_eq!(m.max(), Some(hi));
    }

    #[test]
    fn block_means_equal_those_of_the_unfolded_series() {
        let data = series(50_000);
        let mut s = FoldedSeries::with_cap(256);
        s.extend(&data);
        let b = s.block_len();
        assert!(b > 1);
        let expected: Vec<f64> = data
            .chunks_exact(b)
            .map(|c| c.iter().sum::<f64>() / b as f64)
            .collect();
        let got = s.block_means();
        assert_eq!(got.len(), expected.len());
        for (g, e) in got.iter().zip(&expected) {
            assert!(close(*g, *e, 1e-12), "{g} vs {e}");
        }
    }

    #[test]
    fn blocking_levels_above_the_fold_match() {
        // Flyvbjerg & Petersen (1989): level k of the blocking transform is the series of
        // means of 2^k consecutive values, so levels at or above the folded block length
        // are the same whether computed from folded blocks or from the raw data.
        let n = 1 << 16;
        let data = series(n);
        let mut s = FoldedSeries::with_cap(1024);
        s.extend(&data);
        let k = s.block_len().trailing_zeros() as usize;
        let full = block_levels(&data);
        let folded = block_levels(&s.block_means());
        for (level, from_folded) in folded.iter().enumerate() {
            let reference = &full[level + k];
            assert_eq!(from_folded.n_blocks, reference.n_blocks);
            // Level k + j of the unfolded data has SE scaled by the same block count.
            assert!(
                close(from_folded.se, reference.se, 1e-9),
                "level {}: {} vs {}",
                level + k,
                from_folded.se,
                reference.se
            );
        }
    }

    #[test]
    fn envelope_covers_every_value() {
        let data = series(10_000);
        let mut s = FoldedSeries::with_cap(128);
        s.extend(&data);
        let env = s.envelope();
        let b = s.block_len();
        let partial = usize::from(s.partial.count() > 0);
        assert_eq!(env.len(), s.blocks().len() + partial + s.recent().len());
        for (i, (lo, hi)) in env.iter().take(s.blocks().len()).enumerate() {
            let chunk = &data[i * b..(i + 1) * b];
            let (clo, chi) = min_max(chunk).unwrap();
            assert_eq!((*lo, *hi), (clo, chi));
        }
    }

    #[test]
    fn short_series_is_not_folded() {
        let mut s = FoldedSeries::with_cap(100);
        s.extend(&[1.0, 2.0, 3.0]);
        assert!(!s.is_folded());
        assert_eq!(s.recent(), &[1.0, 2.0, 3.0]);
        assert_eq!(s.block_means(), vec![1.0, 2.0, 3.0]);
        assert!(FoldedSeries::with_cap(10).is_empty());
    }

    #[test]
    fn folding_values_directly_equals_pushing_them() {
        // The same rows folded straight into blocks (recent rows kept elsewhere) give the
        // same blocks as the unfolded series: compare with plain chunk means and moments.
        let data = series(30_000);
        let mut s = FoldedSeries::with_cap(400);
        for piece in data[..20_000].chunks(700) {
            s.fold_values(piece);
        }
        assert!(s.recent().is_empty());
        assert_eq!(s.len(), 20_000);
        assert!(s.blocks().len() <= 100);
        let tail = &data[20_000..];
        let b = s.block_len();
        let (blocks, rest) = s.blocks_with_tail(tail);
        let expected: Vec<&[f64]> = data.chunks_exact(b).collect();
        assert_eq!(blocks.len(), expected.len());
        for (got, chunk) in blocks.iter().zip(&expected) {
            assert!(close(got.mean().unwrap(), mean(chunk).unwrap(), 1e-12));
            assert_eq!((got.min(), got.max()), {
                let (lo, hi) = min_max(chunk).unwrap();
                (Some(lo), Some(hi))
            });
        }
        assert_eq!(rest.count() as usize, data.len() % b);
    }

    proptest::proptest! {
        #![proptest_config(proptest::prelude::ProptestConfig::with_cases(64))]
        /// Any length and cap: the folded series keeps the exact count, mean, spread and
        /// block means of the raw series (merge formulas of Chan, Golub & LeVeque 1979).
        #[test]
        fn folding_preserves_exact_statistics(n in 1usize..20_000, cap in 64usize..700) {
            let data = series(n);
            let mut s = FoldedSeries::with_cap(cap);
            s.extend(&data);
            let m = s.moments();
            proptest::prop_assert_eq!(m.count(), n as u64);
            proptest::prop_assert!(close(m.mean().unwrap(), mean(&data).unwrap(), 1e-12));
            if n > 1 {
                proptest::prop_assert!(close(m.variance().unwrap(), variance(&data).unwrap(), 1e-8));
            }
            let b = s.block_len();
            let expected: Vec<f64> = data.chunks_exact(b).map(|c| c.iter().sum::<f64>() / b as f64).collect();
            let got = s.block_means();
            proptest::prop_assert_eq!(got.len(), expected.len());
            for (g, e) in got.iter().zip(&expected) {
                proptest::prop_assert!(close(*g, *e, 1e-11));
            }
            proptest::prop_assert!(s.recent().len() <= cap.max(MIN_CAP));
            proptest::prop_assert!(s.blocks().len() <= cap.max(MIN_CAP) / 4);
        }
    }
}
