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

use std::sync::Arc;

use realfft::num_complex::Complex;
use realfft::{ComplexToReal, RealFftPlanner, RealToComplex};

use super::descriptive::mean;

/// Lags computed directly (O(N) each) before [`LazyAcov`] falls back to one FFT.
const DIRECT_LAGS: usize = 24;

/// Reusable FFT plans and buffers for repeated autocovariances of similar lengths
/// (the equilibration search calls it once per candidate start).
pub(crate) struct AcfEngine {
    planner: RealFftPlanner<f64>,
    plans: Option<(
        usize,
        Arc<dyn RealToComplex<f64>>,
        Arc<dyn ComplexToReal<f64>>,
    )>,
    input: Vec<f64>,
    spectrum: Vec<Complex<f64>>,
    output: Vec<f64>,
}

impl AcfEngine {
    pub(crate) fn new() -> Self {
        Self {
            planner: RealFftPlanner::new(),
            plans: None,
            input: Vec::new(),
            spectrum: Vec::new(),
            output: Vec::new(),
        }
    }

    /// Lag sums `a_t` of an already centred series `dx`, t = 0 … N−1. `None` on an
    /// internal FFT error (not expected) or empty input.
    pub(crate) fn lag_sums(&mut self, dx: &[f64]) -> Option<Vec<f64>> {
        let n = dx.len();
        if n == 0 {
            return None;
        }
        if n == 1 {
            return Some(dx.iter().map(|v| v * v).collect());
        }
        let len = (2 * n - 1).next_power_of_two();
        let (fwd, inv) = match &self.plans {
            Some((l, f, i)) if *l == len => (Arc::clone(f), Arc::clone(i)),
            _ => {
                let f = self.planner.plan_fft_forward(len);
                let i = self.planner.plan_fft_inverse(len);
                self.plans = Some((len, Arc::clone(&f), Arc::clone(&i)));
                (f, i)
            }
        };
        self.input.clear();
        self.input.extend_from_slice(dx);
        self.input.resize(len, 0.0);
        self.spectrum.clear();
        self.spectrum.resize(len / 2 + 1, Complex::new(0.0, 0.0));
        fwd.process(&mut self.input, &mut self.spectrum).ok()?;
        for c in self.spectrum.iter_mut() {
            *c = Complex::new(c.norm_sqr(), 0.0);
        }
        self.output.clear();
        self.output.resize(len, 0.0);
        inv.process(&mut self.spectrum, &mut self.output).ok()?;
        let scale = 1.0 / len as f64;
        Some(self.output.iter().take(n).map(|v| v * scale).collect())
    }
}

/// Centre a series on its mean. `None` if empty or the mean is not finite.
pub(crate) fn centred(x: &[f64]) -> Option<(f64, Vec<f64>)> {
    let m = mean(x)?;
    Some((m, x.iter().map(|v| v - m).collect()))
}

/// Lag sums `a_t` evaluated lazily: the first [`DIRECT_LAGS`] lags directly (O(N) each,
/// cheap when an estimator stops early), everything beyond from one FFT (O(N log N)).
/// Both give the same values up to rounding.
pub(crate) struct LazyAcov<'a> {
    dx: Vec<f64>,
    direct: Vec<f64>,
    fft: Option<Vec<f64>>,
    engine: &'a mut AcfEngine,
}

impl<'a> LazyAcov<'a> {
    /// `None` if `x` is empty.
    pub(crate) fn new(x: &[f64], engine: &'a mut AcfEngine) -> Option<Self> {
        let (_, dx) = centred(x)?;
        Some(Self {
            dx,
            direct: Vec::new(),
            fft: None,
            engine,
        })
    }

    /// `a_t`, or `None` for t ≥ N (or an FFT failure).
    pub(crate) fn get(&mut self, t: usize) -> Option<f64> {
        let n = self.dx.len();
        if t >= n {
            return None;
        }
        if let Some(f) = &self.fft {
            return f.get(t).copied();
        }
        if t < DIRECT_LAGS {
            while self.direct.len() <= t {
                let lag = self.direct.len();
                let head = self.dx.get(..n - lag)?;
                let tail = self.dx.get(lag..)?;
                let s: f64 = head.iter().zip(tail).map(|(a, b)| a * b).sum();
                self.direct.push(s);
            }
            return self.direct.get(t).copied();
        }
        let f = self.engine.lag_sums(&self.dx)?;
        let v = f.get(t).copied();
        self.fft = Some(f);
        v
    }
}

/// Linear lag sums `a_t = Σ δx_i δx_{i+t}` for t = 0 … N−1 via zero-padded FFT.
/// `None` if empty. Cost O(N log N).
pub fn lag_sums(x: &[f64]) -> Option<Vec<f64>> {
    let (_, dx) = centred(x)?;
    AcfEngine::new().lag_sums(&dx)
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
    fn edge_cases() {
        assert_eq!(acf_biased(&[]), None);
        assert_eq!(acf_biased(&[2.0, 2.0]), None);
        assert_eq!(acf_biased(&[1.0]), None);
        assert_eq!(acf_biased(&[1.0, 2.0]).unwrap()[0], 1.0);
    }
}
