//! One column's statistics: which columns have them, the stable part, production, trend.

use super::{row_interval_ps, ColumnAnalysis, ProductionStats, TrendSummary};
use crate::mapping::Role;
use crate::stats::{self, Estimator};
use crate::table::{Column, Segment};

/// Trend test: family-wise probability, over the quantities tested in one run, of calling a
/// stationary run "still changing" (0.2 %; Holm's correction spreads it over the
/// quantities). The target is at most 1 % of healthy runs not "steady" or warned for all
/// rules together (spikes, onset, trend); at a nominal 1 % the trend test alone used that
/// budget (measured: docs/verdicts.md), so it gets a fifth of it, as the spike test does
/// (common practice, no source).
pub const TREND_P_VALUE: f64 = 0.002;
/// Points the O(n²) trend test (Mann–Kendall, Sen slope) ran on at most; kept for the
/// folded view's block means (METHODS §5.2 suggests capping).
pub const TREND_MAX_POINTS: usize = 1000;
/// Practical size of a trend: a quantity is "still changing" only when the fitted change
/// across its production window is more than this many standard errors of its mean (a
/// trend smaller than a few error bars does not change what the user reports; common
/// practice, no source; METHODS §5.3). Under no trend the change has an SD of
/// about √12 ≈ 3.5 SEM, so the significance test, not this rule, sets the false-alarm rate;
/// this rule guards against an underestimated standard error of the slope.
pub const TREND_MIN_CHANGE_SEM: f64 = 5.0;
/// Rows at each end of a column checked for a counter (see [`is_counter`]).
pub const COUNTER_CHECK_ROWS: usize = 200;

/// A role that never has statistics (step and time counters).
pub(super) fn has_statistics(role: Option<Role>) -> bool {
    !matches!(role, Some(Role::Step) | Some(Role::Time))
}

/// A counter whatever its name: strictly monotonic (increasing or decreasing) over its
/// first and last [`COUNTER_CHECK_ROWS`] rows, with at least three rows. A step, time or
/// wall-clock column is one; an observable with any noise is not. O(1) per call (at most
/// 2·[`COUNTER_CHECK_ROWS`] values), so the per-row detectors may ask on every update.
pub(super) fn is_counter(values: &[f64]) -> bool {
    let n = values.len();
    if n < 3 {
        return false;
    }
    let head = values.get(..n.min(COUNTER_CHECK_ROWS)).unwrap_or(&[]);
    let tail = values
        .get(n.saturating_sub(COUNTER_CHECK_ROWS)..)
        .unwrap_or(&[]);
    let up = |s: &[f64]| s.windows(2).all(|w| matches!(w, [a, b] if b > a));
    let down = |s: &[f64]| s.windows(2).all(|w| matches!(w, [a, b] if b < a));
    (up(head) && up(tail)) || (down(head) && down(tail))
}

/// An observable column: one the statistics and the per-row detectors look at, whatever
/// its name (every column but the counters; the name only picks the wording).
pub(super) fn observable(c: &Column) -> bool {
    has_statistics(c.spec.role) && !is_counter(c.values())
}

/// The rows of `v` before `stable_end`.
pub(super) fn stable_part(v: &[f64], stable_end: usize) -> &[f64] {
    v.get(..stable_end.min(v.len())).unwrap_or(&[])
}

pub(super) fn analysed_count(seg: &Segment) -> usize {
    seg.columns.iter().filter(|c| observable(c)).count()
}

/// The first row of `x` with a non-finite value written in the log (absent values, rows
/// that do not have this column, are skipped), or `x.len()`.
pub(super) fn first_nonfinite(x: &[f64]) -> usize {
    super::present::first_written_nonfinite(x)
}

/// Rows per block of [`blockwise_inefficiency`] (common practice, no source).
pub const INEFFICIENCY_BLOCK_ROWS: usize = 500;

/// Statistical inefficiency of a series that may not be stationary: the median of g over
/// blocks of [`INEFFICIENCY_BLOCK_ROWS`] rows (g of the whole would grow with any trend or
/// step, METHODS §1.3). Used for the off-target window's standard error while the run has
/// no onset. O(N log block).
pub(super) fn blockwise_inefficiency(x: &[f64]) -> Option<f64> {
    if x.len() < 2 * INEFFICIENCY_BLOCK_ROWS {
        return stats::inefficiency(x).map(|i| i.g);
    }
    let mut gs: Vec<f64> = x
        .chunks_exact(INEFFICIENCY_BLOCK_ROWS)
        .filter_map(|c| stats::inefficiency(c).map(|i| i.g))
        .collect();
    gs.sort_by(f64::total_cmp);
    stats::median(&gs)
}

pub(super) fn finite_part_mean(values: &[f64], from: usize) -> Option<f64> {
    let end = first_nonfinite(values);
    let part = super::present::Present::of_values(values.get(from.min(end)..end)?);
    stats::mean(part.values())
}

/// Production statistics of `x[row..]`; `g` and `n_eff` are the onset's, computed on the
/// same full-resolution tail by the onset search (not recomputed).
pub(super) fn production(x: &[f64], row: usize, g: f64, n_eff: f64) -> Option<ProductionStats> {
    let tail = x.get(row..)?;
    let (summary, var_pop) = stats::summarize_with_variance(tail)?;
    let block = stats::blocking::block_average_with_variance(tail, var_pop);
    Some(ProductionStats {
        first_row: row,
        count: tail.len(),
        mean: summary.mean,
        std: summary.std,
        variance_population: var_pop,
        sem_block: block.map(|b| b.sem),
        sem_from_g: var_pop.and_then(|v| stats::sem_from_g(v, g, tail.len())),
        inefficiency: Some(g),
        estimator: Estimator::FirstNegative,
        effective_samples: Some(n_eff),
        min: summary.min,
        max: summary.max,
    })
}

/// The block-means slope test on a column's production part `tail` with its
/// inefficiency `g` (METHODS §5.3): "still changing" is decided later for the whole run
/// ([`judge_trends`]: Holm across the quantities, and the practical size). The slope per ns
/// needs the time column; the change is in the column's unit.
pub(super) fn trend(tail: &[f64], seg: &Segment, g: f64, sem: Option<f64>) -> Option<TrendSummary> {
    trend_of_means(tail, 1, seg, g, sem)
}

/// As [`trend`] on means of `rows_per_point` rows (the folded view); `g` in rows.
pub(super) fn trend_of_means(
    points: &[f64],
    rows_per_point: usize,
    seg: &Segment,
    g: f64,
    sem: Option<f64>,
) -> Option<TrendSummary> {
    let b = rows_per_point.max(1) as f64;
    let t = stats::block_trend(points, (g / b).max(1.0))?;
    let slope_per_ns = row_interval_ps(seg).map(|dt| t.slope_per_sample / b / dt * 1000.0);
    Some(TrendSummary {
        slope_per_ns,
        slope_per_row: t.slope_per_sample / b,
        change: t.change,
        sem,
        p_value: t.p_value,
        still_changing: false,
    })
}

/// Decides "still changing" for every tested column of a run: significant after Holm's
/// correction at [`TREND_P_VALUE`] across the columns with a trend test (except
/// `skip`, the column whose drift is judged as a conservation test), and a change across the
/// production window above [`TREND_MIN_CHANGE_SEM`] standard errors of the mean.
pub(super) fn judge_trends(columns: &mut [ColumnAnalysis], skip: Option<&str>) {
    let p: Vec<Option<f64>> = columns
        .iter()
        .map(|c| {
            (Some(c.name.as_str()) != skip)
                .then(|| c.trend.as_ref().map(|t| t.p_value))
                .flatten()
        })
        .collect();
    let rejected = stats::holm(&p, TREND_P_VALUE);
    for (c, r) in columns.iter_mut().zip(rejected) {
        if let Some(t) = c.trend.as_mut() {
            let large = t
                .sem
                .filter(|s| *s > 0.0)
                .is_none_or(|s| t.change.abs() > TREND_MIN_CHANGE_SEM * s);
            t.still_changing = r && large;
        }
    }
}
