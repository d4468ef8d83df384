//! Autocorrelation by FFT (Wiener–Khinchin), METHODS §0 and §1.1.
//!
//! The mean-removed series is zero-padded to the next power of two `L ≥ 2N − 1`, so the
//! inverse transform of `|F|²` gives the *linear* (not circular) lag sums
//! `a_t = Σ_{i=0}^{N−1−t} δx_i δx_{i+t}`, t = 0 … N−1. Cost O(N log N), memory O(N).
//!
//! Two normalisations (METHODS §0; always say which):
//! - biased `ρ̂_t = a_t / a_0` (statsmodels `acf(adjusted=False)`, NIST r(1));
//! - adjusted `C_t = [a_t/(N − t)] / (a_0/N)` (statsmodels `adjusted=True`; Chodera 2016
//!   eq. 13).

use std::cell::RefCell;
use std::ops::Range;
use std::sync::Arc;

use realfft::num_complex::Complex;
use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};

use super::descriptive::mean;
#[cfg(test)]
use super::fast_dot;

/// Lags computed directly (O(N) each) before [`LazyAcov`] switches to FFTs.
const DIRECT_LAGS: usize = 24;
/// First lag window of the segmented FFT (lags below this from blocks of this size).
const SEGMENT_LAGS: usize = 256;

type Plans = (
    usize,
    Arc<dyn RealToComplex<f64>>,
    Arc<dyn ComplexToReal<f64>>,
);

/// Reusable FFT plans (one thread-local engine serves all calls on a thread, so the
/// twiddle tables of a length are computed once).
pub(crate) struct AcfEngine {
    planner: RealFftPlanner<f64>,
    plans: Vec<Plans>,
}

thread_local! {
    static ENGINE: RefCell<AcfEngine> = RefCell::new(AcfEngine::new());
}

/// Run `f` with this thread's engine (a fresh one if it is already borrowed).
pub(crate) fn with_engine<R>(f: impl FnOnce(&mut AcfEngine) -> R) -> R {
    ENGINE.with(|cell| match cell.try_borrow_mut() {
        Ok(mut e) => f(&mut e),
        Err(_) => f(&mut AcfEngine::new()),
    })
}

impl AcfEngine {
    pub(crate) fn new() -> Self {
        Self {
            planner: RealFftPlanner::new(),
            plans: Vec::new(),
        }
    }

    fn plans(&mut self, len: usize) -> (Arc<dyn RealToComplex<f64>>, Arc<dyn ComplexToReal<f64>>) {
        if let Some((_, f, i)) = self.plans.iter().find(|p| p.0 == len) {
            return (Arc::clone(f), Arc::clone(i));
        }
        let f = self.planner.plan_fft_forward(len);
        let i = self.planner.plan_fft_inverse(len);
        if self.plans.len() >= 8 {
            self.plans.remove(0);
        }
        self.plans.push((len, Arc::clone(&f), Arc::clone(&i)));
        (f, i)
    }

    /// Lag sums `a_t` of the series `x − m` (centred on the fly, no copy of the series
    /// beyond the FFT buffer), t = 0 … N−1, from one zero-padded FFT pair. `None` on empty
    /// input or an FFT error (not expected).
    pub(crate) fn lag_sums(&mut self, x: &[f64], m: f64) -> Option<Vec<f64>> {
        let n = x.len();
        if n == 0 {
            return None;
        }
        if n == 1 {
            return Some(x.iter().map(|v| (v - m) * (v - m)).collect());
        }
        let len = (2 * n - 1).next_power_of_two();
        let (fwd, inv) = self.plans(len);
        let mut input = vec![0.0; len];
        for (d, v) in input.iter_mut().zip(x) {
            *d = v - m;
        }
        let mut spectrum = vec![Complex::new(0.0, 0.0); len / 2 + 1];
        fwd.process(&mut input, &mut spectrum).ok()?;
        for c in spectrum.iter_mut() {
            *c = Complex::new(c.norm_sqr(), 0.0);
        }
        let mut output = input;
        inv.process(&mut spectrum, &mut output).ok()?;
        let scale = 1.0 / len as f64;
        output.truncate(n);
        output.iter_mut().for_each(|v| *v *= scale);
        Some(output)
    }

    /// Lag sums for lags `0 … b−1` only (`b = lags` rounded up to a power of two), by
    /// segmented FFTs: each block of `b` values is correlated with itself and the next
    /// block through FFTs of length `2b`, spectra are summed, one inverse at the end.
    /// Exact linear sums (no wrap-around) in O(N log b). Falls back to [`Self::lag_sums`]
    /// when `b` is not small against N.
    pub(crate) fn lag_sums_upto(&mut self, x: &[f64], m: f64, lags: usize) -> Option<Vec<f64>> {
        let n = x.len();
        let b = lags.next_power_of_two().max(64);
        if 8 * b >= n {
            return self.lag_sums(x, m);
        }
        let len = 2 * b;
        let (fwd, inv) = self.plans(len);
        let zero = Complex::new(0.0, 0.0);
        let mut acc = vec![zero; b + 1];
        let mut a_in = vec![0.0; len];
        let mut e_in = vec![0.0; len];
        let mut fa = vec![zero; b + 1];
        let mut fe = vec![zero; b + 1];
        let mut start = 0;
        while start < n {
            a_in.iter_mut().for_each(|v| *v = 0.0);
            e_in.iter_mut().for_each(|v| *v = 0.0);
            let a_src = x.get(start..(start + b).min(n))?;
            let e_src = x.get(start..(start + len).min(n))?;
            for (d, v) in a_in.iter_mut().zip(a_src) {
                *d = v - m;
            }
            for (d, v) in e_in.iter_mut().zip(e_src) {
                *d = v - m;
            }
            fwd.process(&mut a_in, &mut fa).ok()?;
            fwd.process(&mut e_in, &mut fe).ok()?;
            for ((s, p), q) in acc.iter_mut().zip(&fa).zip(&fe) {
                *s += p.conj() * q;
            }
            start += b;
        }
        if let Some(c) = acc.first_mut() {
            c.im = 0.0;
        }
        if let Some(c) = acc.last_mut() {
            c.im = 0.0;
        }
        let mut out = vec![0.0; len];
        inv.process(&mut acc, &mut out).ok()?;
        let scale = 1.0 / len as f64;
        out.truncate(b.min(n));
        out.iter_mut().for_each(|v| *v *= scale);
        Some(out)
    }
}

/// Centre a series on its mean. `None` if empty or the mean is not finite.
#[cfg(test)]
fn centred(x: &[f64]) -> Option<(f64, Vec<f64>)> {
    let m = mean(x)?;
    Some((m, x.iter().map(|v| v - m).collect()))
}

/// Direct lags computed together in one pass over the series (the series is read once
/// per batch instead of once per lag).
const LAG_BATCH: usize = 8;

/// `a_t = Σ_i (x_i − m)(x_{i+t} − m)` for each `t` in `lags` (ascending, all `< x.len()`),
/// appended to `out`. Each lag is summed exactly as [`fast_dot`] sums a centred copy:
/// eight accumulators over chunks of 8 in order, the same pairwise combination, then the
/// left-over products left to right, so the values are identical, without the copy and
/// with one pass over the series for the whole batch.
fn centred_lag_sums(x: &[f64], m: f64, lags: Range<usize>, out: &mut Vec<f64>) {
    let n = x.len();
    let lags = lags.start..lags.end.min(n);
    if lags.is_empty() {
        return;
    }
    let t_max = lags.end - 1;
    let mut acc = vec![[0.0f64; 8]; lags.len()];
    // Chunks that every lag of the batch has.
    let common = (n - t_max) / 8;
    for (c, head) in x.chunks_exact(8).take(common).enumerate() {
        let mut a = [0.0f64; 8];
        for (d, v) in a.iter_mut().zip(head) {
            *d = v - m;
        }
        let i = 8 * c;
        for (sums, t) in acc.iter_mut().zip(lags.clone()) {
            let tail = x.get(i + t..i + t + 8).unwrap_or(&[]);
            for ((s, p), q) in sums.iter_mut().zip(&a).zip(tail) {
                *s += p * (q - m);
            }
        }
    }
    for (sums, t) in acc.iter_mut().zip(lags) {
        let len = n - t;
        let full = len / 8;
        for c in common..full {
            let i = 8 * c;
            let head = x.get(i..i + 8).unwrap_or(&[]);
            let tail = x.get(i + t..i + t + 8).unwrap_or(&[]);
            for ((s, p), q) in sums.iter_mut().zip(head).zip(tail) {
                *s += (p - m) * (q - m);
            }
        }
        let rest: f64 = x
            .get(8 * full..len)
            .unwrap_or(&[])
            .iter()
            .zip(x.get(8 * full + t..).unwrap_or(&[]))
            .map(|(p, q)| (p - m) * (q - m))
            .sum();
        let a = sums;
        out.push(((a[0] + a[4]) + (a[1] + a[5])) + ((a[2] + a[6]) + (a[3] + a[7])) + rest);
    }
}

/// Lag sums `a_t` evaluated lazily, cheapest first: the first [`DIRECT_LAGS`] lags
/// directly (O(N) each, cheap when an estimator stops early); then lags below 256, 4096,
/// … from segmented FFTs (O(N log b)); finally all lags from one full FFT (O(N log N)).
/// All tiers give the same values up to rounding.
/// The series is centred on the fly (no whole-series copy).
pub(crate) struct LazyAcov<'a> {
    x: &'a [f64],
    mean: f64,
    direct: Vec<f64>,
    partial: Option<Vec<f64>>,
    engine: &'a mut AcfEngine,
}

impl<'a> LazyAcov<'a> {
    /// `None` if `x` is empty.
    pub(crate) fn new(x: &'a [f64], engine: &'a mut AcfEngine) -> Option<Self> {
        let mean = mean(x)?;
        Some(Self {
            x,
            mean,
            direct: Vec::new(),
            partial: None,
            engine,
        })
    }

    /// `a_t`, or `None` for t ≥ N (or an FFT failure).
    pub(crate) fn get(&mut self, t: usize) -> Option<f64> {
        let n = self.x.len();
        if t >= n {
            return None;
        }
        if let Some(v) = self.partial.as_ref().and_then(|p| p.get(t)) {
            return Some(*v);
        }
        if self.partial.is_none() && t < DIRECT_LAGS {
            while self.direct.len() <= t {
                let from = self.direct.len();
                let to = (from + LAG_BATCH).min(DIRECT_LAGS).min(n);
                centred_lag_sums(self.x, self.mean, from..to, &mut self.direct);
            }
            return self.direct.get(t).copied();
        }
        let have = self.partial.as_ref().map_or(0, Vec::len);
        let mut want = SEGMENT_LAGS.max(have * 16);
        while want <= t {
            want *= 16;
        }
        let p = self.engine.lag_sums_upto(self.x, self.mean, want)?;
        let v = p.get(t).copied();
        self.partial = Some(p);
        v
    }
}

/// Linear lag sums `a_t = Σ δx_i δx_{i+t}` for t = 0 … N−1 via zero-padded FFT.
/// `None` if empty. Cost O(N log N).
pub fn lag_sums(x: &[f64]) -> Option<Vec<f64>> {
    let m = mean(x)?;
    with_engine(|e| e.lag_sums(x, m))
}

/// Biased autocorrelation `ρ̂_t = a_t/a_0`, t = 0 … N−1 (METHODS §0; statsmodels
/// `acf(adjusted=False)`). `None` if empty or constant. Cost O(N log N).
pub fn acf_biased(x: &[f64]) -> Option<Vec<f64>> {
    let a = lag_sums(x)?;
    let a0 = *a.first()?;
    if a0 <= 0.0 || !a0.is_finite() {
        return None;
    }
    Some(a.iter().map(|v| v / a0).collect())
}

/// Adjusted autocorrelation `C_t = [a_t/(N−t)] / (a_0/N)`, t = 0 … N−1 (METHODS §0;
/// Chodera 2016 eq. 13; statsmodels `acf(adjusted=True)`). `None` if empty or constant.
/// Cost O(N log N).
pub fn acf_adjusted(x: &[f64]) -> Option<Vec<f64>> {
    let a = lag_sums(x)?;
    let n = a.len() as f64;
    let a0 = *a.first()?;
    if a0 <= 0.0 || !a0.is_finite() {
        return None;
    }
    let var0 = a0 / n;
    Some(
        a.iter()
            .enumerate()
            .map(|(t, v)| v / ((n - t as f64) * var0))
            .collect(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    #[allow(clippy::needless_range_loop)]
    fn fft_matches_direct_sums() {
        // Direct definition (METHODS §1.1 step 2) on a small irregular series.
        let x = [1.0, 3.0, -2.0, 0.5, 4.0, 4.0, -1.0];
        let a = lag_sums(&x).unwrap();
        let m = x.iter().sum::<f64>() / 7.0;
        for t in 0..7 {
            let d: f64 = (0..7 - t).map(|i| (x[i] - m) * (x[i + t] - m)).sum();
            assert!((a[t] - d).abs() < 1e-12, "lag {t}");
        }
        let mut eng = AcfEngine::new();
        let mut lazy = LazyAcov::new(&x, &mut eng).unwrap();
        for t in 0..7 {
            assert!((lazy.get(t).unwrap() - a[t]).abs() < 1e-12);
        }
        assert_eq!(lazy.get(7), None);
    }

    #[test]
    #[allow(clippy::needless_range_loop)]
    fn segmented_fft_matches_full() {
        // Same linear sums from blocks (overlap of two blocks, no wrap-around).
        let x: Vec<f64> = (0..5000)
            .map(|i| ((i * 7919) % 113) as f64 + (i as f64 * 0.01).sin())
            .collect();
        let full = lag_sums(&x).unwrap();
        let m = centred(&x).unwrap().0;
        let mut eng = AcfEngine::new();
        let part = eng.lag_sums_upto(&x, m, 300).unwrap();
        // Centring on the fly, lags in batches, gives the same sums, bit for bit, as
        // centring a copy first and summing each lag on its own.
        for len in [1, 2, 7, 8, 9, 23, 24, 25, 31, 100, 4999, 5000] {
            let x = &x[..len];
            let (_, dx) = centred(x).unwrap();
            let mut fresh = LazyAcov::new(x, &mut eng).unwrap();
            for t in 0..DIRECT_LAGS.min(len) {
                let copy = fast_dot(&dx[..len - t], &dx[t..]);
                assert_eq!(
                    fresh.get(t).unwrap().to_bits(),
                    copy.to_bits(),
                    "{len} lag {t}"
                );
            }
        }
        assert_eq!(part.len(), 512);
        for t in 0..512 {
            assert!((part[t] - full[t]).abs() < 1e-9 * full[0], "lag {t}");
        }
        let mut lazy = LazyAcov::new(&x, &mut eng).unwrap();
        for t in [0, 5, 30, 300, 700, 4999] {
            assert!(
                (lazy.get(t).unwrap() - full[t]).abs() < 1e-9 * full[0],
                "lag {t}"
            );
        }
    }

    #[test]
    fn edge_cases() {
        assert_eq!(acf_biased(&[]), None);
        assert_eq!(acf_biased(&[2.0, 2.0]), None);
        assert_eq!(acf_biased(&[1.0]), None);
        assert_eq!(acf_biased(&[1.0, 2.0]).unwrap()[0], 1.0);
    }
}
