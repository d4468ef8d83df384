//! Per-row detectors (spikes, runaway growth): their state, thresholds and pure scans.

use std::ops::Range;

use crate::alert::Thresholds;
use crate::stats::{self, RunawayOptions};

/// Rows before the checked window whose median and MAD are the runaway baseline
/// (common practice, no source).
pub const RUNAWAY_BASELINE_ROWS: usize = 200;
/// The runaway baseline is recomputed every this many rows (a median and a MAD of
/// [`RUNAWAY_BASELINE_ROWS`] values; recomputing it for every window would dominate the
/// cost on long runs).
pub const RUNAWAY_BASELINE_STEP: usize = 100;
/// Runaway growth factor across the window (stats default: tenfold).
pub const RUNAWAY_MIN_GROWTH: f64 = 10.0;
/// Far excursion in robust SDs of the baseline (METHODS §8).
pub const RUNAWAY_FAR_SIGMAS: f64 = 50.0;

/// Per-column state of the per-row detectors.
#[derive(Debug, Clone, Default)]
pub(super) struct ColumnCursor {
    /// Cached runaway baseline: (end row within segment, baseline).
    pub(super) baseline: Option<(usize, Option<stats::Baseline>)>,
    pub(super) spikes: u64,
}

/// A runaway baseline cache: (end row within segment, baseline).
pub(super) type BaselineCache = Option<(usize, Option<stats::Baseline>)>;

/// What the per-row detectors of one segment look at in this update.
#[derive(Debug, Clone, Copy)]
pub(super) struct ScanPlan {
    /// Rows of the segment.
    pub(super) n: usize,
    /// First row not yet scanned (non-finite, runaway, off-target).
    pub(super) start: usize,
    /// Rows judged by the spike detector: `spike_start..spike_end`.
    pub(super) spike_start: usize,
    pub(super) spike_end: usize,
    /// Rows scanned by the spike detector before this update, after new restarts (not
    /// clamped to `n`).
    pub(super) spike_scanned: usize,
}

/// Per-row detector results of one analysed column over the rows of a [`ScanPlan`]
/// (segment rows, ascending). Pure, so columns are computed on all cores; the alert
/// engine then sees them column by column in order.
#[derive(Debug, Clone, Default)]
pub(super) struct ColumnFlags {
    /// Hampel rows confirmed by the context test.
    pub(super) spikes: Vec<usize>,
    /// Runaway rows with the growth's samples per decade (NaN for a far excursion).
    pub(super) runaway: Vec<(usize, f64)>,
}

/// Rows around a spike whose robust SD is the spike's yardstick besides the Hampel
/// window's own (common practice, no source).
pub const SPIKE_CONTEXT_ROWS: usize = 250;

/// Family-wise false-alarm probability of the spike test over a whole segment (all its
/// analysed columns): 1 % (common practice, no source).
pub const SPIKE_FAMILY_ALPHA: f64 = 0.01;

/// Threshold of the second spike test, in robust SDs: at least `sigmas`, and at least the
/// Bonferroni bound z with P(|Z| > z) = α / tests for `tests` Gaussian values (textbook
/// multiple-testing correction), so a healthy run of any length raises a spike alert with
/// probability about α at most. 5 SD for 2·10⁴ values, about 6.1 for 10⁷; capped at 8.
pub fn spike_threshold(sigmas: f64, tests: usize) -> f64 {
    use statrs::distribution::{ContinuousCDF, Normal};
    let p = SPIKE_FAMILY_ALPHA / (2.0 * tests.max(1) as f64);
    let z = Normal::new(0.0, 1.0)
        .ok()
        .map(|n| -n.inverse_cdf(p))
        .filter(|z| z.is_finite())
        .unwrap_or(sigmas);
    sigmas.max(z.min(8.0))
}

/// Second spike test: the value must also lie `sigmas` robust SDs of its wider context
/// (the 2·[`SPIKE_CONTEXT_ROWS`] rows around it) from the Hampel window's median. The MAD of
/// 2k+1 = 21 correlated rows is itself noisy (relative error about a quarter), so the
/// Hampel identifier alone flags about one healthy row in a thousand; the wider scale and
/// [`spike_threshold`] keep false alarms rare however long the run.
pub(super) fn beyond_context(values: &[f64], i: usize, k: usize, sigmas: f64) -> bool {
    let Some(&x) = values.get(i) else {
        return false;
    };
    let window: Vec<f64> = values
        .get(i.saturating_sub(k)..(i + k + 1).min(values.len()))
        .unwrap_or(&[])
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    let context: Vec<f64> = values
        .get(i.saturating_sub(SPIKE_CONTEXT_ROWS)..(i + SPIKE_CONTEXT_ROWS).min(values.len()))
        .unwrap_or(&[])
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    match (stats::median(&window), stats::robust_sd(&context)) {
        (Some(m), Some(sd)) => (x - m).abs() > sigmas * sd,
        _ => false,
    }
}

/// Runaway options from the thresholds.
pub fn runaway_options(t: &Thresholds) -> RunawayOptions {
    RunawayOptions {
        window: t.runaway_window.max(3),
        min_r_squared: t.runaway_min_r2,
        min_growth: RUNAWAY_MIN_GROWTH,
        min_sigmas: t.runaway_min_sigmas,
        far_sigmas: RUNAWAY_FAR_SIGMAS,
    }
}

/// Rows in `rows` that grow exponentially or sit far out (with the growth's samples per
/// decade, NaN for a far excursion), judged against the median and MAD of the
/// [`RUNAWAY_BASELINE_ROWS`] rows that end at the last multiple of
/// [`RUNAWAY_BASELINE_STEP`] before the checked window (`cache` keeps the last baseline).
/// O(rows) plus O(window) per row that passes the cheap size test. With `first_only` it
/// stops at the first flagged row.
pub(super) fn runaway_flags(
    values: &[f64],
    rows: Range<usize>,
    opts: &RunawayOptions,
    cache: &mut Option<(usize, Option<stats::Baseline>)>,
    first_only: bool,
) -> Vec<(usize, f64)> {
    let w = opts.window.max(3);
    let mut flagged: Vec<(usize, f64)> = Vec::new();
    let mut scratch = Vec::with_capacity(RUNAWAY_BASELINE_ROWS);
    // The baseline's end changes every RUNAWAY_BASELINE_STEP rows: one division per
    // step, not per row.
    let mut base_end = 0;
    let mut next_step = 0;
    for r in rows.start.max(2 * w - 1)..rows.end {
        let Some(&x) = values.get(r) else { break };
        if !x.is_finite() {
            continue;
        }
        if r >= next_step {
            let steps = (r + 1 - w) / RUNAWAY_BASELINE_STEP;
            base_end = steps * RUNAWAY_BASELINE_STEP;
            next_step = (steps + 1) * RUNAWAY_BASELINE_STEP + w - 1;
        }
        let base = match *cache {
            Some((end, b)) if end == base_end => b,
            _ => {
                let b = values
                    .get(base_end.saturating_sub(RUNAWAY_BASELINE_ROWS)..base_end)
                    .and_then(|part| stats::Baseline::from_slice_with(part, &mut scratch));
                *cache = Some((base_end, b));
                b
            }
        };
        let Some(base) = base else { continue };
        let dev = (x - base.median).abs();
        if dev <= opts.min_sigmas * base.scale {
            continue;
        }
        let far = dev > opts.far_sigmas * base.scale;
        let growth = values
            .get(..=r)
            .and_then(|v| stats::runaway::exponential_growth(v, &base, opts));
        if far || growth.is_some() {
            flagged.push((r, growth.map_or(f64::NAN, |g| g.samples_per_decade)));
            if first_only {
                break;
            }
        }
    }
    flagged
}
