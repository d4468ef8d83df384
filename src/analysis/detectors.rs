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
    /// Runaway detector state: cached baselines, the episode in progress.
    pub(super) baseline: RunawayState,
    pub(super) spikes: u64,
}

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

/// Nominal family-wise false-alarm probability of the spike test over a whole segment (all
/// its analysed columns): 0.2 % (common practice, no source). The Bonferroni bound assumes
/// the centre and scale are known; estimated from 21 and 500 rows they add their own
/// noise, and at a nominal 1 % the Monte-Carlo check measured 2 % of healthy runs with a
/// spike alert (docs/verdicts.md), so the nominal level is set below the 1 % target.
pub const SPIKE_FAMILY_ALPHA: f64 = 0.002;

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

/// Whether `part` holds a stretch of identical consecutive values covering at least a
/// quarter of it (and at least 10 rows): a column that was constant (the volume before a
/// barostat starts, a box held fixed) is in that part, so its robust spread says nothing
/// about the values that follow. A change there is a new stage, not a spike or a blow-up
/// (stages are cut and judged in `stages`). Noisy values, even rounded, do not repeat that
/// long. O(part).
pub fn has_constant_stretch(part: &[f64]) -> bool {
    let need = (part.len() / 4).max(10);
    let mut run = 0usize;
    let mut last = f64::NAN;
    for &v in part {
        if v == last {
            run += 1;
            if run >= need {
                return true;
            }
        } else {
            run = 1;
            last = v;
        }
    }
    false
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
    // A context that was constant for a while: a stage change, judged elsewhere.
    let before = values
        .get(i.saturating_sub(SPIKE_CONTEXT_ROWS)..i)
        .unwrap_or(&[]);
    if has_constant_stretch(before) {
        return false;
    }
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

/// Windows of the runaway growth rule: the configured window (20 rows by default) and
/// [`RUNAWAY_SCALE_FACTOR`] and its square times it (100 and 500 rows), each judged against
/// its own baseline before it. A growth rule over one window catches e-folding times up to
/// `(w − 1)/ln 10` rows (tenfold across the window): about 8, 43 and 217 rows. Slower
/// growth is caught by the far rule once it has lasted [`RUNAWAY_FAR_ROWS`] rows beyond
/// [`RUNAWAY_FAR_SIGMAS`] robust SDs, about 4 e-folding times after it left the noise,
/// whatever the rate (common practice, no source).
pub const RUNAWAY_SCALES: usize = 4;
/// Ratio of successive runaway windows.
pub const RUNAWAY_SCALE_FACTOR: usize = 5;
/// Consecutive rows beyond [`RUNAWAY_FAR_SIGMAS`] that make a far excursion a runaway: a
/// single outlying row is a spike, never a runaway (common practice, no source).
pub const RUNAWAY_FAR_ROWS: usize = 3;

/// The runaway windows for a configured window `w0`.
pub fn runaway_windows(w0: usize) -> [usize; RUNAWAY_SCALES] {
    let w0 = w0.max(3);
    let mut out = [w0; RUNAWAY_SCALES];
    for k in 1..RUNAWAY_SCALES {
        out[k] = out[k - 1] * RUNAWAY_SCALE_FACTOR;
    }
    out
}

/// Rows the runaway detector looks back over from a row: its longest window and the
/// baseline before it, aligned to [`RUNAWAY_BASELINE_STEP`].
pub fn runaway_lookback(w0: usize) -> usize {
    runaway_windows(w0)[RUNAWAY_SCALES - 1] + RUNAWAY_BASELINE_ROWS + RUNAWAY_BASELINE_STEP
}

/// A runaway baseline cache: (end row within segment, baseline).
pub(super) type BaselineEntry = Option<(usize, Option<stats::Baseline>)>;

/// Baselines kept per column, by their end row: every window reads the same baselines,
/// each one [`RUNAWAY_BASELINE_STEP`] rows apart, the shortest window first and the
/// longest (2,480 rows later with the default windows) last, so that 32 slots compute each
/// baseline once. Longer windows than the default recompute some (same results).
pub(super) const BASELINE_SLOTS: usize = 32;

/// Per-column state of the runaway detector between updates.
#[derive(Debug, Clone, Copy, Default, PartialEq)]
pub(super) struct RunawayState {
    /// Baselines computed, in slot `(end / RUNAWAY_BASELINE_STEP) % BASELINE_SLOTS`.
    pub(super) baselines: [BaselineEntry; BASELINE_SLOTS],
    /// The baseline of the runaway episode in progress: rows that stay beyond
    /// `min_sigmas` robust SDs of it (or turn non-finite) continue the episode.
    pub(super) episode: Option<stats::Baseline>,
}

impl RunawayState {
    /// The cached baselines after `drop` rows were forgotten from the segment's front: a
    /// multiple of the baseline step keeps them (renumbered); any other drop forgets them.
    pub(super) fn forget_rows(&mut self, drop: usize) {
        let old = std::mem::take(&mut self.baselines);
        if !drop.is_multiple_of(RUNAWAY_BASELINE_STEP) {
            return;
        }
        for (end, b) in old.into_iter().flatten() {
            let Some(end) = end.checked_sub(drop) else {
                continue;
            };
            if let Some(slot) = self.baselines.get_mut(baseline_slot(end)) {
                if slot.is_none_or(|(kept, _)| kept < end) {
                    *slot = Some((end, b));
                }
            }
        }
    }
}

/// The cache slot of the baseline that ends at row `end`.
fn baseline_slot(end: usize) -> usize {
    (end / RUNAWAY_BASELINE_STEP) % BASELINE_SLOTS
}

/// The state handed to a scan (copied in and out of the column's cursor).
pub(super) type BaselineCache = RunawayState;

/// The baseline of row `r` for window `w`: the median and MAD of the
/// [`RUNAWAY_BASELINE_ROWS`] rows that end at the last multiple of
/// [`RUNAWAY_BASELINE_STEP`] at or before the window's first row (`None` before 100 rows
/// of history).
fn baseline_for(
    values: &[f64],
    r: usize,
    w: usize,
    cache: &mut [BaselineEntry; BASELINE_SLOTS],
    scratch: &mut Vec<f64>,
) -> Option<stats::Baseline> {
    let first = (r + 1).checked_sub(w)?;
    let base_end = first / RUNAWAY_BASELINE_STEP * RUNAWAY_BASELINE_STEP;
    if base_end < RUNAWAY_BASELINE_STEP {
        return None;
    }
    let entry = cache.get_mut(baseline_slot(base_end))?;
    match *entry {
        Some((end, b)) if end == base_end => b,
        _ => {
            // A reference part that was constant for a while has no baseline either: the
            // column varies only since a stage change inside it.
            let b = values
                .get(base_end.saturating_sub(RUNAWAY_BASELINE_ROWS)..base_end)
                .filter(|part| !has_constant_stretch(part))
                .and_then(|part| stats::Baseline::from_slice_with(part, scratch));
            *entry = Some((base_end, b));
            b
        }
    }
}

/// Rows in `rows` that grow exponentially (with the growth's samples per decade), sit far
/// out for [`RUNAWAY_FAR_ROWS`] rows, or continue a runaway episode (NaN for the last two).
/// Growth is judged over the windows of [`runaway_windows`], each against its own
/// baseline (`state` keeps them, and the episode in progress, between calls). O(rows) plus
/// O(fit points) per window for each row that passes the cheap size test. With
/// `first_only` it stops at the first flagged row.
pub(super) fn runaway_flags(
    values: &[f64],
    rows: Range<usize>,
    opts: &RunawayOptions,
    state: &mut RunawayState,
    first_only: bool,
) -> Vec<(usize, f64)> {
    let windows = runaway_windows(opts.window);
    let mut flagged: Vec<(usize, f64)> = Vec::new();
    let mut scratch = Vec::with_capacity(RUNAWAY_BASELINE_ROWS);
    for r in rows {
        let Some(&x) = values.get(r) else { break };
        if let Some(ep) = state.episode {
            if !x.is_finite() || (x - ep.median).abs() > opts.min_sigmas * ep.scale {
                flagged.push((r, f64::NAN));
                if first_only {
                    break;
                }
                continue;
            }
            state.episode = None;
        }
        if !x.is_finite() {
            continue;
        }
        for (k, &w) in windows.iter().enumerate() {
            let Some(base) = baseline_for(values, r, w, &mut state.baselines, &mut scratch) else {
                continue;
            };
            // A constant reference part (its scale is only the floor) has no spread to
            // measure growth against: a constant column that starts to vary (the volume
            // when constant pressure starts) is a stage change, not a blow-up. Growth is
            // judged again once the reference part varies.
            if base.scale <= f64::EPSILON * base.median.abs().max(1.0) {
                continue;
            }
            let dev = (x - base.median).abs();
            if dev <= opts.min_sigmas * base.scale {
                continue;
            }
            let far = k == 0
                && r + 1 >= RUNAWAY_FAR_ROWS
                && values
                    .get(r + 1 - RUNAWAY_FAR_ROWS..=r)
                    .is_some_and(|last| {
                        last.iter().all(|v| {
                            v.is_finite() && (v - base.median).abs() > opts.far_sigmas * base.scale
                        })
                    });
            let growth = if far {
                None
            } else {
                stats::runaway::exponential_growth_strided(values, r, w, &base, opts)
            };
            if far || growth.is_some() {
                flagged.push((r, growth.map_or(f64::NAN, |g| g.samples_per_decade)));
                state.episode = Some(base);
                break;
            }
        }
        if first_only && !flagged.is_empty() {
            break;
        }
    }
    flagged
}
