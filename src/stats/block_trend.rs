//! "Still changing?" by a slope test on block means, with Holm's correction across the
//! quantities of a run (METHODS §5.3).
//!
//! The series is cut into `m` consecutive blocks of `b ≈ 5·g` rows (`g` the statistical
//! inefficiency): block means of blocks several times `g` long are nearly independent, so a
//! least-squares slope of the block means on the block index with a Student t on the block
//! residuals holds its size however strong the autocorrelation (common practice, no source;
//! METHODS §5.3 names it). What dependence is left between neighbouring block means is taken
//! into account by Santer et al.'s effective number (J. Geophys. Res. 105, 7337, 2000):
//! `m_eff = m (1 − ρ₁)/(1 + ρ₁)` with `ρ₁ = (g − 1)/(2b)`, the lag-1 correlation of the
//! means of blocks of `b` rows of a series with inefficiency `g` when `b ≫ g` (our derivation
//! from `Var(block mean) ≈ σ² g / b` and the covariance of two adjacent sums,
//! `σ² (g − 1)/2`; it overstates ρ₁ for AR(1), so the test errs on the safe side).
//! Cost O(N).

use serde::{Deserialize, Serialize};
use statrs::distribution::{ContinuousCDF, StudentsT};

use super::regression::ols;

/// Block length in multiples of `g` (common practice, no source).
pub const BLOCK_G_MULTIPLE: f64 = 5.0;
/// Fewest blocks the test runs on; shorter blocks are used when the series holds fewer
/// than this many blocks of `5·g` rows (and the ρ₁ correction grows accordingly).
pub const MIN_BLOCKS: usize = 10;
/// Most blocks (longer blocks beyond: the test gains nothing from more).
pub const MAX_BLOCKS: usize = 400;

/// Result of the block-means slope test.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BlockTrend {
    /// Rows per block.
    pub block_rows: usize,
    /// Blocks used (the oldest `n mod b` rows are left out).
    pub blocks: usize,
    /// Slope per row (per sample of the input).
    pub slope_per_sample: f64,
    /// Its standard error, per row, after the ρ₁ correction.
    pub se_per_sample: f64,
    /// Degrees of freedom of the t statistic, `m_eff − 2`.
    pub dof: f64,
    /// Two-sided p-value.
    pub p_value: f64,
    /// Fitted change across the rows used: slope × rows.
    pub change: f64,
}

/// The block-means slope test on `x` with inefficiency `g` (≥ 1). `None` for fewer than
/// `2·MIN_BLOCKS` values or a constant series. O(N).
pub fn block_trend(x: &[f64], g: f64) -> Option<BlockTrend> {
    let n = x.len();
    if n < 2 * MIN_BLOCKS {
        return None;
    }
    let g = if g.is_finite() { g.max(1.0) } else { 1.0 };
    let mut b = (BLOCK_G_MULTIPLE * g).ceil().max(1.0) as usize;
    if n / b < MIN_BLOCKS {
        b = n / MIN_BLOCKS;
    }
    if n / b > MAX_BLOCKS {
        b = n.div_ceil(MAX_BLOCKS);
    }
    let m = n / b;
    if m < 3 {
        return None;
    }
    let start = n - m * b;
    let means: Vec<f64> = x
        .get(start..)?
        .chunks_exact(b)
        .map(|c| c.iter().sum::<f64>() / b as f64)
        .collect();
    let idx: Vec<f64> = (0..m).map(|j| j as f64).collect();
    let fit = ols(&idx, &means)?;
    let rho = ((g - 1.0) / (2.0 * b as f64)).clamp(0.0, 0.9);
    let m_eff = m as f64 * (1.0 - rho) / (1.0 + rho);
    let dof = (m_eff - 2.0).max(1.0);
    // SE of the slope with m − 2 residual dof, inflated to m_eff − 2.
    let se = fit.se_slope? * ((m as f64 - 2.0) / dof).sqrt();
    if !(se.is_finite() && se > 0.0) {
        return None;
    }
    let t = fit.slope / se;
    let dist = StudentsT::new(0.0, 1.0, dof).ok()?;
    let p = (2.0 * (1.0 - dist.cdf(t.abs()))).clamp(0.0, 1.0);
    let slope = fit.slope / b as f64;
    Some(BlockTrend {
        block_rows: b,
        blocks: m,
        slope_per_sample: slope,
        se_per_sample: se / b as f64,
        dof,
        p_value: p,
        change: slope * (m * b) as f64,
    })
}

/// Holm's step-down correction (Holm 1979, Scand. J. Statist. 6, 65–70): which of the
/// p-values are rejected at family-wise level `alpha`. `None` entries are not tested and
/// do not count towards the family. O(m log m).
pub fn holm(p_values: &[Option<f64>], alpha: f64) -> Vec<bool> {
    let mut order: Vec<(usize, f64)> = p_values
        .iter()
        .enumerate()
        .filter_map(|(i, p)| p.filter(|p| p.is_finite()).map(|p| (i, p)))
        .collect();
    order.sort_by(|a, b| a.1.total_cmp(&b.1));
    let m = order.len();
    let mut rejected = vec![false; p_values.len()];
    for (k, (i, p)) in order.into_iter().enumerate() {
        if p <= alpha / (m - k) as f64 {
            if let Some(r) = rejected.get_mut(i) {
                *r = true;
            }
        } else {
            break;
        }
    }
    rejected
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn holm_matches_the_textbook_example() {
        // Holm (1979) step-down on p = 0.01, 0.04, 0.03, 0.005 at α = 0.05: thresholds
        // 0.0125, 0.0167, 0.025, 0.05 on the sorted p-values 0.005, 0.01, 0.03, 0.04:
        // the first two are rejected, 0.03 > 0.025 stops (worked by hand, textbook rule).
        let r = holm(&[Some(0.01), Some(0.04), Some(0.03), Some(0.005)], 0.05);
        assert_eq!(r, vec![true, false, false, true]);
        // Untested entries do not enlarge the family.
        let r = holm(&[Some(0.02), None, None], 0.05);
        assert_eq!(r, vec![true, false, false]);
    }

    #[test]
    fn exact_line_is_found_and_flat_noise_free_series_is_not_tested() {
        let x: Vec<f64> = (0..1000)
            .map(|i| 2.0 + 0.5 * i as f64 + ((i % 7) as f64 - 3.0))
            .collect();
        let t = block_trend(&x, 1.0).unwrap();
        assert!((t.slope_per_sample - 0.5).abs() < 1e-3, "{t:?}");
        assert!(t.p_value < 1e-10);
        let flat = vec![3.0; 500];
        assert!(block_trend(&flat, 1.0).is_none());
    }
}
