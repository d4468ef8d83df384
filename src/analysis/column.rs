//! One column's statistics: which columns have them, the stable part, production, trend.

use super::{row_interval_ps, ProductionStats, TrendSummary};
use crate::mapping::Role;
use crate::stats::{self, Estimator};
use crate::table::Segment;

/// Trend test: p-value below which a quantity is "still changing" (1 %, common practice,
/// no source).
pub const TREND_P_VALUE: f64 = 0.01;
/// Points the O(n²) trend test (Mann–Kendall, Sen slope) runs on at most: block means
/// beyond (METHODS §5.2 suggests capping; 1000 keeps it a small part of the cost).
pub const TREND_MAX_POINTS: usize = 1000;

pub(super) fn has_statistics(role: Option<Role>) -> bool {
    !matches!(role, Some(Role::Step) | Some(Role::Time))
}

/// The rows of `v` before `stable_end`.
pub(super) fn stable_part(v: &[f64], stable_end: usize) -> &[f64] {
    v.get(..stable_end.min(v.len())).unwrap_or(&[])
}

pub(super) fn analysed_count(seg: &Segment) -> usize {
    seg.columns
        .iter()
        .filter(|c| has_statistics(c.spec.role))
        .count()
}

pub(super) fn first_nonfinite(x: &[f64]) -> usize {
    x.iter().position(|v| !v.is_finite()).unwrap_or(x.len())
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
    stats::mean(values.get(from.min(end)..end)?)
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

pub(super) fn trend(tail: &[f64], seg: &Segment, _row: usize) -> Option<TrendSummary> {
    let tt = stats::trend_test(tail, TREND_MAX_POINTS)?;
    let p = tt
        .hamed_rao
        .map(|h| h.p_value)
        .unwrap_or(tt.mann_kendall.p_value);
    let slope_per_ns = match (tt.sen_slope_per_sample, row_interval_ps(seg)) {
        (Some(s), Some(dt)) => Some(s / dt * 1000.0),
        _ => None,
    };
    Some(TrendSummary {
        slope_per_ns,
        p_value: p,
        still_changing: p < TREND_P_VALUE,
    })
}
