//! Runaway (blow-up) detection before values turn non-finite (METHODS §8, rules are
//! common practice and configurable):
//! - **sustained exponential growth**: a linear fit of `ln|x − m|` against the row over
//!   the last `window` (default 20) samples with positive slope, `R² > 0.9`, a total
//!   growth over the window of at least `min_growth` (default 10×) and a last deviation
//!   beyond `min_sigmas` (default 5) robust SDs. The growth-factor and size conditions
//!   are ours: they keep a slow linear ramp or plain noise from passing the R² test.
//! - **far excursion**: `|x − m| > 50 σ̂` (METHODS §8).
//!
//! `m` and `σ̂` come from a [`Baseline`] (median and 1.4826·MAD of a reference part,
//! usually the rows before the checked window). An exponential blow-up grows by orders of
//! magnitude per window while a double overflows only near 1e308, so the growth rule fires
//! long before a non-finite value. Cost O(window) per check, O(M) for a baseline of M rows.

use serde::{Deserialize, Serialize};

use super::spikes::{median_and_mad_mut, MAD_SCALE};
use super::{finite, regression::ols};

/// Robust centre and scale of a reference part.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Baseline {
    /// Median.
    pub median: f64,
    /// Robust SD (1.4826·MAD), floored at a tiny positive value.
    pub scale: f64,
}

impl Baseline {
    /// Baseline from the finite values of a slice. `None` if there are none. O(N).
    pub fn from_slice(x: &[f64]) -> Option<Baseline> {
        let mut scratch = Vec::new();
        Baseline::from_slice_with(x, &mut scratch)
    }

    /// As [`Baseline::from_slice`], with a scratch buffer the caller reuses (one copy of
    /// the finite values, two selections, no allocation once the buffer is big enough).
    pub fn from_slice_with(x: &[f64], scratch: &mut Vec<f64>) -> Option<Baseline> {
        scratch.clear();
        scratch.extend(x.iter().copied().filter(|a| a.is_finite()));
        let (m, raw) = median_and_mad_mut(scratch)?;
        let s = MAD_SCALE * raw;
        let floor = f64::EPSILON * m.abs().max(1.0);
        Some(Baseline {
            median: m,
            scale: s.max(floor),
        })
    }
}

/// Runaway settings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RunawayOptions {
    /// Samples in the growth fit.
    pub window: usize,
    /// Minimum R² of the log-linear fit.
    pub min_r_squared: f64,
    /// Minimum growth factor of `|x − m|` across the window.
    pub min_growth: f64,
    /// Minimum last deviation in robust SDs for the growth rule.
    pub min_sigmas: f64,
    /// Far-excursion threshold in robust SDs.
    pub far_sigmas: f64,
}

impl Default for RunawayOptions {
    fn default() -> Self {
        Self {
            window: 20,
            min_r_squared: 0.9,
            min_growth: 10.0,
            min_sigmas: 5.0,
            far_sigmas: 50.0,
        }
    }
}

/// Exponential growth found at the end of a series.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Growth {
    /// Growth rate of `ln|x − m|` per sample.
    pub rate_per_sample: f64,
    /// R² of the fit.
    pub r_squared: f64,
    /// First row of the fitted window.
    pub start_row: usize,
    /// Samples for `|x − m|` to grow tenfold.
    pub samples_per_decade: f64,
}

/// Result of a runaway check on a series.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct RunawayCheck {
    /// Sustained exponential growth over the last window, if any.
    pub growth: Option<Growth>,
    /// First row with `|x − m| > far_sigmas·σ̂`, if any.
    pub far_row: Option<usize>,
}

impl RunawayCheck {
    /// Either rule fired.
    pub fn is_runaway(&self) -> bool {
        self.growth.is_some() || self.far_row.is_some()
    }
}

/// Growth rule on the last `opts.window` values of `x` (rows are `x` indices).
pub fn exponential_growth(x: &[f64], base: &Baseline, opts: &RunawayOptions) -> Option<Growth> {
    let w = opts.window.max(3);
    let start = x.len().checked_sub(w)?;
    let tail = x.get(start..)?;
    if tail.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let tiny = base.scale * 1e-6;
    let rows: Vec<f64> = (start..x.len()).map(|i| i as f64).collect();
    let logs: Vec<f64> = tail
        .iter()
        .map(|v| (v - base.median).abs().max(tiny).ln())
        .collect();
    let fit = ols(&rows, &logs)?;
    let r2 = fit.r_squared?;
    let last_dev = (tail.last()? - base.median).abs();
    let growth = (fit.slope * (w - 1) as f64).exp();
    if fit.slope > 0.0
        && r2 > opts.min_r_squared
        && growth >= opts.min_growth
        && last_dev > opts.min_sigmas * base.scale
    {
        Some(Growth {
            rate_per_sample: fit.slope,
            r_squared: r2,
            start_row: start,
            samples_per_decade: finite(std::f64::consts::LN_10 / fit.slope)?,
        })
    } else {
        None
    }
}

/// First row (from `from`) with `|x − m| > far_sigmas·σ̂` (finite values only).
pub fn far_excursion(
    x: &[f64],
    base: &Baseline,
    opts: &RunawayOptions,
    from: usize,
) -> Option<usize> {
    let lim = opts.far_sigmas * base.scale;
    x.iter()
        .enumerate()
        .skip(from)
        .find(|(_, v)| v.is_finite() && (*v - base.median).abs() > lim)
        .map(|(i, _)| i)
}

/// Rows before the checked window that form the baseline of [`runaway`].
pub const BASELINE_ROWS: usize = 5000;

/// Runaway check: baseline from the up to [`BASELINE_ROWS`] rows before the last window
/// (or the whole series when it is shorter than two windows), growth rule on the last
/// window, far rule on the checked window. Cost O(min(N, 5000)), independent of the run
/// length. Empty input: nothing flagged.
pub fn runaway(x: &[f64], opts: &RunawayOptions) -> RunawayCheck {
    let w = opts.window.max(3);
    let ref_end = if x.len() >= 2 * w {
        x.len() - w
    } else {
        x.len()
    };
    let ref_start = ref_end.saturating_sub(BASELINE_ROWS);
    let Some(base) = x.get(ref_start..ref_end).and_then(Baseline::from_slice) else {
        return RunawayCheck {
            growth: None,
            far_row: None,
        };
    };
    RunawayCheck {
        growth: exponential_growth(x, &base, opts),
        far_row: far_excursion(x, &base, opts, x.len().saturating_sub(w)),
    }
}

/// The rise of `|x − m|` over the last quarter of a growth window must be at least this
/// many times its rise over the third quarter. Exponential growth that is tenfold across
/// the window rises e^{ln 10 / 4} ≈ 1.78 times as much in each quarter as in the one
/// before (more when faster, or when it started from the noise inside the window); a
/// straight ramp rises the same (ratio 1) and a ramp that levels off less (our
/// derivation; the margin below 1.78 is for the noise, common practice, no source).
pub const RUNAWAY_ACCELERATION: f64 = 1.2;

/// True when the deviations whose logarithms are `logs` (ascending rows, evenly spaced)
/// rise faster over the last quarter than over the third ([`RUNAWAY_ACCELERATION`]).
fn accelerates(logs: &[f64]) -> bool {
    let n = logs.len();
    if n < 4 {
        return true;
    }
    let q = n / 4;
    let mean_dev = |part: &[f64]| -> f64 {
        part.iter().map(|l| l.exp()).sum::<f64>() / part.len().max(1) as f64
    };
    let (Some(q2), Some(q3), Some(q4)) = (
        logs.get(n - 3 * q..n - 2 * q),
        logs.get(n - 2 * q..n - q),
        logs.get(n - q..),
    ) else {
        return true;
    };
    let (d2, d3, d4) = (mean_dev(q2), mean_dev(q3), mean_dev(q4));
    d4 - d3 >= RUNAWAY_ACCELERATION * (d3 - d2)
}

/// Points of a strided growth fit ([`exponential_growth_strided`]).
pub const STRIDED_FIT_POINTS: usize = 25;

/// The growth rule over the `window` rows that end at row `end` (inclusive) of `x`, fitted
/// on at most [`STRIDED_FIT_POINTS`] rows spaced evenly back from `end` (so a window of
/// thousands of rows costs as little as one of twenty), with one more condition than
/// [`exponential_growth`]: the fit over the window's last half must also grow, by at least
/// `√min_growth` across that half, and the deviation must rise faster over the last
/// quarter than over the third ([`RUNAWAY_ACCELERATION`]). Exponential growth keeps its
/// rate over the whole window and passes; a straight ramp, whose logarithm flattens, or a
/// ramp that levels off, does not (common practice, no source). O([`STRIDED_FIT_POINTS`]).
pub fn exponential_growth_strided(
    x: &[f64],
    end: usize,
    window: usize,
    base: &Baseline,
    opts: &RunawayOptions,
) -> Option<Growth> {
    let w = window.max(3);
    let start = (end + 1).checked_sub(w)?;
    let stride = w.div_ceil(STRIDED_FIT_POINTS).max(1);
    let tiny = base.scale * 1e-6;
    let mut rows = Vec::with_capacity(STRIDED_FIT_POINTS + 1);
    let mut logs = Vec::with_capacity(STRIDED_FIT_POINTS + 1);
    let mut i = end;
    loop {
        let v = *x.get(i)?;
        if !v.is_finite() {
            return None;
        }
        rows.push(i as f64);
        logs.push((v - base.median).abs().max(tiny).ln());
        if i < start + stride {
            break;
        }
        i -= stride;
    }
    rows.reverse();
    logs.reverse();
    let fit = ols(&rows, &logs)?;
    let r2 = fit.r_squared?;
    let last_dev = (x.get(end)? - base.median).abs();
    let growth = (fit.slope * (w - 1) as f64).exp();
    if !(fit.slope > 0.0
        && r2 > opts.min_r_squared
        && growth >= opts.min_growth
        && last_dev > opts.min_sigmas * base.scale)
    {
        return None;
    }
    let half = rows.len() / 2;
    let late = ols(rows.get(half..)?, logs.get(half..)?)?;
    let late_growth = (late.slope * (w / 2) as f64).exp();
    if late_growth < opts.min_growth.sqrt() {
        return None;
    }
    if !accelerates(&logs) {
        return None;
    }
    Some(Growth {
        rate_per_sample: fit.slope,
        r_squared: r2,
        start_row: start,
        samples_per_decade: finite(std::f64::consts::LN_10 / fit.slope)?,
    })
}
