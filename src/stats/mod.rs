//! Statistics as pure functions on slices (no I/O, no clocks). Each names its method.
//!
//! Methods and check values: `METHODS.md` of the project's reference notes; every function
//! documents the published method it follows and its cost.
//!
//! **Conventions**
//! - Inputs are column slices in canonical units (time in ps), evenly spaced where an
//!   estimator needs it (split at gaps first).
//! - **Non-finite policy:** the functions take *finite* data. Find NaN/±inf first with
//!   [`non_finite_positions`] (an immediate blow-up event) and pass the finite stretch.
//!   Given non-finite values anyway, no function panics, and a result that would not be
//!   finite is returned as `None` rather than as a NaN ([`spikes::hampel`] and
//!   [`runaway`] skip non-finite values explicitly).
//! - Undefined values are `None`: too few samples, constant column where a ratio is
//!   needed, empty input.
//! - Cost: everything is O(N) or O(N log N) (FFT); the O(n²) trend statistics run on at
//!   most 2000 points (block means beyond). For incremental use recompute every k new
//!   rows; [`descriptive::Moments`] folds old data into mergeable blocks in O(1) each.

pub mod acf;
pub mod block_trend;
pub mod blocking;
pub mod descriptive;
pub mod drift;
pub mod equilibration;
pub mod fluctuation;
pub mod inefficiency;
pub mod regression;
pub mod runaway;
pub mod spikes;
pub mod throughput;
pub mod trend;

pub use acf::{acf_adjusted, acf_biased, lag_sums};
pub use block_trend::{block_trend, holm, BlockTrend};
pub use blocking::{block_average, block_levels, BlockAverage, BlockLevel};
pub use descriptive::{
    lag1_autocorrelation, mean, min_max, std_dev, summarize, summarize_with_variance, variance,
    variance_population, Moments, Summary,
};
pub use drift::{
    drift, kt_per_ns_per_dof, per_atom, per_ns, Drift, SlopeSeMethod, BOLTZMANN_KJ_PER_MOL_K,
};
pub use equilibration::{combine_onsets, detect_equilibration, mser, mser5, Equilibration, Mser};
pub use fluctuation::{
    canonical_relative_sd, chi2_band, degrees_of_freedom, fluctuation_band, infer_ensemble,
    temperature_fluctuation, Ensemble, EnsembleGuess, FluctuationCheck, FluctuationVerdict,
};
pub use inefficiency::{
    inefficiency, sem_from_g, statistical_inefficiency, Estimator, Inefficiency,
};
pub use regression::{ols, ols_no_intercept, ols_on_rows, LinearFit, NoInterceptFit};
pub use runaway::{runaway, Baseline, RunawayCheck, RunawayOptions};
pub use spikes::{hampel, mad, median, robust_sd, HampelOptions, MAD_SCALE};
pub use throughput::{eta_seconds, precision_eta, throughput, PrecisionEta, Throughput};
pub use trend::{
    hamed_rao, mann_kendall, sen_slope, slope_t_test, trend_test, HamedRao, MannKendall, TrendTest,
};

/// Positions (0-based rows) of NaN and ±inf values, ascending. O(N).
pub fn non_finite_positions(x: &[f64]) -> Vec<usize> {
    x.iter()
        .enumerate()
        .filter(|(_, v)| !v.is_finite())
        .map(|(i, _)| i)
        .collect()
}

/// Sum with eight independent accumulators: breaks the floating-point add dependency
/// chain so the compiler can vectorise (and sums in a pairwise-like order, which is no less
/// accurate than a left-to-right sum).
pub(crate) fn fast_sum(x: &[f64]) -> f64 {
    let mut acc = [0.0f64; 8];
    let chunks = x.chunks_exact(8);
    let rest = chunks.remainder();
    for c in chunks {
        for (a, v) in acc.iter_mut().zip(c) {
            *a += v;
        }
    }
    let tail: f64 = rest.iter().sum();
    ((acc[0] + acc[4]) + (acc[1] + acc[5])) + ((acc[2] + acc[6]) + (acc[3] + acc[7])) + tail
}

/// Dot product `Σ a_i b_i` over the common length, eight accumulators (see [`fast_sum`]).
#[cfg(test)]
pub(crate) fn fast_dot(a: &[f64], b: &[f64]) -> f64 {
    let n = a.len().min(b.len());
    let (a, b) = (a.get(..n).unwrap_or(&[]), b.get(..n).unwrap_or(&[]));
    let mut acc = [0.0f64; 8];
    let ca = a.chunks_exact(8);
    let cb = b.chunks_exact(8);
    let tail: f64 = ca
        .remainder()
        .iter()
        .zip(cb.remainder())
        .map(|(x, y)| x * y)
        .sum();
    for (x, y) in ca.zip(cb) {
        for ((s, p), q) in acc.iter_mut().zip(x).zip(y) {
            *s += p * q;
        }
    }
    ((acc[0] + acc[4]) + (acc[1] + acc[5])) + ((acc[2] + acc[6]) + (acc[3] + acc[7])) + tail
}

/// `Some(v)` if `v` is finite.
pub(crate) fn finite(v: f64) -> Option<f64> {
    v.is_finite().then_some(v)
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn non_finite_helper() {
        assert_eq!(
            non_finite_positions(&[1.0, f64::NAN, 2.0, f64::INFINITY, f64::NEG_INFINITY]),
            vec![1, 3, 4]
        );
        assert!(non_finite_positions(&[]).is_empty());
    }
}
