//! Descriptive statistics: two-pass mean / standard deviation / min / max, and a
//! mergeable Welford accumulator ([`Moments`]).
//!
//! Methods: the two-pass (corrected) algorithm for the variance and Welford's
//! one-pass update with Chan, Golub & LeVeque's pairwise merge (Chan, Golub &
//! LeVeque, "Algorithms for computing the sample variance", Am. Stat. 37, 1983;
//! Welford, Technometrics 4, 1962) [M: citations from memory]. Checked against NIST
//! StRD univariate data (see `tests/stats_nist.rs`).
//!
//! All functions take finite data (see [`crate::stats::non_finite_positions`]); a result
//! that would not be finite is returned as `None`.

use serde::{Deserialize, Serialize};

use super::{fast_sum, finite};

/// Arithmetic mean with one refinement pass (`x̄ + Σ(x_i − x̄)/n`), which recovers the
/// digits lost by the plain sum on data with a large common offset (NIST NumAcc3/4).
/// `None` for an empty slice. Cost O(N).
pub fn mean(x: &[f64]) -> Option<f64> {
    if x.is_empty() {
        return None;
    }
    let n = x.len() as f64;
    let m0 = fast_sum(x) / n;
    // Σ(x − m0) = Σx − n·m0 in exact arithmetic; summed explicitly it recovers the
    // rounding of the first pass.
    let mut acc = [0.0f64; 4];
    let chunks = x.chunks_exact(4);
    let rest: f64 = chunks.remainder().iter().map(|v| v - m0).sum();
    for c in chunks {
        for (a, v) in acc.iter_mut().zip(c) {
            *a += v - m0;
        }
    }
    let corr = (acc[0] + acc[1] + acc[2] + acc[3] + rest) / n;
    finite(m0 + corr)
}

/// Sum of squared deviations from the mean, two-pass with the compensating term
/// (Chan, Golub & LeVeque's "corrected two-pass" form). Returns `(mean, Σ(x − x̄)²)`.
fn centred_ss(x: &[f64]) -> Option<(f64, f64)> {
    let m = mean(x)?;
    let mut ssa = [0.0f64; 4];
    let mut sa = [0.0f64; 4];
    let chunks = x.chunks_exact(4);
    let (mut ss, mut s) = (0.0, 0.0);
    for v in chunks.remainder() {
        let d = v - m;
        ss += d * d;
        s += d;
    }
    for c in chunks {
        for ((q, l), v) in ssa.iter_mut().zip(sa.iter_mut()).zip(c) {
            let d = v - m;
            *q += d * d;
            *l += d;
        }
    }
    ss += (ssa[0] + ssa[1]) + (ssa[2] + ssa[3]);
    s += (sa[0] + sa[1]) + (sa[2] + sa[3]);
    let n = x.len() as f64;
    let ss = finite(ss - s * s / n)?.max(0.0);
    Some((m, ss))
}

/// Sample variance with the n − 1 divisor (two-pass). `None` if fewer than 2 values.
/// Cost O(N).
pub fn variance(x: &[f64]) -> Option<f64> {
    if x.len() < 2 {
        return None;
    }
    let (_, ss) = centred_ss(x)?;
    finite(ss / (x.len() - 1) as f64)
}

/// Population variance σ̂² with the 1/N divisor (METHODS §0 "ddof 0"). `None` if empty.
/// Cost O(N).
pub fn variance_population(x: &[f64]) -> Option<f64> {
    if x.is_empty() {
        return None;
    }
    let (_, ss) = centred_ss(x)?;
    finite(ss / x.len() as f64)
}

/// Sample standard deviation (n − 1 divisor). `None` if fewer than 2 values. Cost O(N).
pub fn std_dev(x: &[f64]) -> Option<f64> {
    variance(x).map(f64::sqrt)
}

/// Minimum and maximum. `None` if empty. Cost O(N).
pub fn min_max(x: &[f64]) -> Option<(f64, f64)> {
    let first = *x.first()?;
    let mut lo = first;
    let mut hi = first;
    for &v in x {
        if v < lo {
            lo = v;
        }
        if v > hi {
            hi = v;
        }
    }
    Some((lo, hi))
}

/// Lag-1 autocorrelation, biased form `r(1) = Σ_{i≥1} δx_i δx_{i−1} / Σ δx_i²`
/// (NIST StRD univariate definition; METHODS §0). `None` if fewer than 2 values or a
/// constant series. Cost O(N).
pub fn lag1_autocorrelation(x: &[f64]) -> Option<f64> {
    if x.len() < 2 {
        return None;
    }
    let m = mean(x)?;
    let den: f64 = x.iter().map(|v| (v - m) * (v - m)).sum();
    if den <= 0.0 {
        return None;
    }
    let num: f64 = x
        .windows(2)
        .map(|w| match w {
            [a, b] => (a - m) * (b - m),
            _ => 0.0,
        })
        .sum();
    finite(num / den)
}

/// Summary of a column: count, mean, standard deviation (n − 1), min, max.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Summary {
    /// Number of values.
    pub count: usize,
    /// Arithmetic mean.
    pub mean: f64,
    /// Standard deviation with the n − 1 divisor; `None` for a single value.
    pub std: Option<f64>,
    /// Smallest value.
    pub min: f64,
    /// Largest value.
    pub max: f64,
}

/// Two-pass summary. `None` if empty. Cost O(N) (four passes).
pub fn summarize(x: &[f64]) -> Option<Summary> {
    summarize_with_variance(x).map(|(s, _)| s)
}

/// [`summarize`] and [`variance_population`] from one pass of the centred sums (the same
/// values as the two calls). `None` if empty or the mean is not finite.
pub fn summarize_with_variance(x: &[f64]) -> Option<(Summary, Option<f64>)> {
    let (mean, ss) = centred_ss(x)?;
    let (min, max) = min_max(x)?;
    let std = (x.len() > 1)
        .then(|| (ss / (x.len() - 1) as f64).sqrt())
        .and_then(finite);
    let summary = Summary {
        count: x.len(),
        mean,
        std,
        min,
        max,
    };
    Some((summary, finite(ss / x.len() as f64)))
}

/// Mergeable running moments (count, mean, M2 = Σ(x − x̄)², min, max): Welford's update
/// and the Chan–Golub–LeVeque merge of two partial results. Push is O(1), merge O(1).
/// Used to fold old data into blocks while keeping exact count/mean/variance.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize, Default)]
pub struct Moments {
    count: u64,
    mean: f64,
    m2: f64,
    min: f64,
    max: f64,
}

impl Moments {
    /// Empty accumulator.
    pub fn new() -> Self {
        Self::default()
    }

    /// Accumulate a slice (one pass). Cost O(N).
    pub fn from_slice(x: &[f64]) -> Self {
        let mut m = Self::new();
        for &v in x {
            m.push(v);
        }
        m
    }

    /// Add one value (Welford). Caller passes finite values.
    pub fn push(&mut self, v: f64) {
        if self.count == 0 {
            self.min = v;
            self.max = v;
        } else {
            self.min = self.min.min(v);
            self.max = self.max.max(v);
        }
        self.count += 1;
        let d = v - self.mean;
        self.mean += d / self.count as f64;
        self.m2 += d * (v - self.mean);
    }

    /// Merge another accumulator into this one (Chan, Golub & LeVeque pairwise form).
    pub fn merge(&mut self, other: &Moments) {
        if other.count == 0 {
            return;
        }
        if self.count == 0 {
            *self = *other;
            return;
        }
        let na = self.count as f64;
        let nb = other.count as f64;
        let n = na + nb;
        let d = other.mean - self.mean;
        self.mean += d * nb / n;
        self.m2 += other.m2 + d * d * na * nb / n;
        self.count += other.count;
        self.min = self.min.min(other.min);
        self.max = self.max.max(other.max);
    }

    /// Number of values.
    pub fn count(&self) -> u64 {
        self.count
    }
    /// Mean, `None` if empty.
    pub fn mean(&self) -> Option<f64> {
        (self.count > 0).then_some(self.mean).and_then(finite)
    }
    /// Sum of squared deviations from the mean, `None` if empty.
    pub fn m2(&self) -> Option<f64> {
        (self.count > 0)
            .then_some(self.m2)
            .and_then(finite)
            .map(|v| v.max(0.0))
    }
    /// Sample variance (n − 1), `None` if fewer than 2 values.
    pub fn variance(&self) -> Option<f64> {
        (self.count > 1)
            .then(|| self.m2 / (self.count - 1) as f64)
            .and_then(finite)
            .map(|v| v.max(0.0))
    }
    /// Sample standard deviation (n − 1), `None` if fewer than 2 values.
    pub fn std_dev(&self) -> Option<f64> {
        self.variance().map(f64::sqrt)
    }
    /// Minimum, `None` if empty.
    pub fn min(&self) -> Option<f64> {
        (self.count > 0).then_some(self.min)
    }
    /// Maximum, `None` if empty.
    pub fn max(&self) -> Option<f64> {
        (self.count > 0).then_some(self.max)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn empty_and_single() {
        assert_eq!(mean(&[]), None);
        assert_eq!(variance(&[1.0]), None);
        assert_eq!(summarize(&[]), None);
        let s = summarize(&[2.5]).unwrap();
        assert_eq!(
            (s.count, s.mean, s.std, s.min, s.max),
            (1, 2.5, None, 2.5, 2.5)
        );
        assert_eq!(lag1_autocorrelation(&[3.0, 3.0, 3.0]), None);
    }

    #[test]
    fn moments_merge_matches_two_pass() {
        // Textbook example (hand arithmetic): 2,4,4,4,5,5,7,9 has mean 5, population
        // variance 4, sample variance 32/7.
        let x = [2.0, 4.0, 4.0, 4.0, 5.0, 5.0, 7.0, 9.0];
        let mut a = Moments::from_slice(&x[..3]);
        let b = Moments::from_slice(&x[3..]);
        a.merge(&b);
        assert_eq!(a.count(), 8);
        assert!((a.mean().unwrap() - 5.0).abs() < 1e-15);
        assert!((a.variance().unwrap() - 32.0 / 7.0).abs() < 1e-14);
        assert_eq!((a.min(), a.max()), (Some(2.0), Some(9.0)));
        assert!((variance(&x).unwrap() - 32.0 / 7.0).abs() < 1e-14);
        assert!((variance_population(&x).unwrap() - 4.0).abs() < 1e-14);
        let mut e = Moments::new();
        e.merge(&Moments::new());
        assert_eq!(e.mean(), None);
    }
}
