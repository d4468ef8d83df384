//! Block averaging, Flyvbjerg & Petersen, J. Chem. Phys. 91, 461 (1989) (METHODS §3).
//!
//! Level 0 is the data; each next level averages neighbouring pairs (an odd last value is
//! dropped). At a level with n values: `c0 = (1/n) Σ (x_i − x̄)²`,
//! `SE = sqrt(c0/(n − 1))`, and its uncertainty `SE/sqrt(2(n − 1))`.
//!
//! **Plateau rule** (ours, common practice in the spirit of F&P): among levels with at
//! least [`MIN_BLOCKS`] blocks, the plateau is the first level `l` whose next level
//! (also with ≥ [`MIN_BLOCKS`] blocks) does not rise above it by more than level `l`'s
//! own one-sigma error: `SE_{l+1} ≤ SE_l + err_l`. The SE of the mean is `SE_l`. If no
//! level qualifies the correlation time is *not resolved*: the largest SE among the
//! eligible levels is reported with `resolved = false`.
//! Cost O(N) time, O(N/2) memory (the second level, halved in place).

use serde::{Deserialize, Serialize};

use super::descriptive::{mean, variance_population};
use super::finite;

/// Minimum number of blocks for a level to take part in the plateau choice
/// (METHODS §3: "stop when fewer than ~16–32 blocks remain", common practice).
pub const MIN_BLOCKS: usize = 16;

/// One blocking level.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct BlockLevel {
    /// Level index (0 = raw data).
    pub level: usize,
    /// Samples per block, `2^level`.
    pub block_size: usize,
    /// Number of blocks at this level.
    pub n_blocks: usize,
    /// Standard-error estimate of the mean at this level.
    pub se: f64,
    /// One-sigma uncertainty of `se`.
    pub se_error: f64,
}

/// Result of block averaging.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct BlockAverage {
    /// All levels down to 2 blocks.
    pub levels: Vec<BlockLevel>,
    /// Index of the plateau level in `levels` (`None` when not resolved).
    pub plateau_level: Option<usize>,
    /// Standard error of the mean (plateau value, or the largest eligible value when
    /// not resolved).
    pub sem: f64,
    /// Uncertainty of `sem`.
    pub sem_error: f64,
    /// A plateau was found.
    pub resolved: bool,
    /// Statistical inefficiency implied by the SE: `g = N·SE²/σ̂²` (σ̂² with 1/N);
    /// `None` for a constant series.
    pub g: Option<f64>,
}

/// All Flyvbjerg–Petersen levels (down to 2 blocks). Empty if fewer than 2 values.
/// Cost O(N).
pub fn block_levels(x: &[f64]) -> Vec<BlockLevel> {
    let mut levels = Vec::new();
    // Level 0 is read from `x`; the levels above live in one buffer of N/2 values,
    // halved in place.
    let mut cur: Vec<f64> = Vec::new();
    let mut level = 0;
    let mut size = 1usize;
    loop {
        let data: &[f64] = if level == 0 { x } else { &cur };
        if data.len() < 2 {
            break;
        }
        let n = data.len();
        let Some(m) = mean(data) else { break };
        let c0 = data.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / n as f64;
        let se = (c0 / (n - 1) as f64).sqrt();
        levels.push(BlockLevel {
            level,
            block_size: size,
            n_blocks: n,
            se,
            se_error: se / (2.0 * (n - 1) as f64).sqrt(),
        });
        let half = n / 2;
        if level == 0 {
            cur = x
                .chunks_exact(2)
                .map(|p| match p {
                    [a, b] => 0.5 * (a + b),
                    _ => f64::NAN,
                })
                .collect();
        } else {
            for i in 0..half {
                let v = match (cur.get(2 * i), cur.get(2 * i + 1)) {
                    (Some(a), Some(b)) => 0.5 * (a + b),
                    _ => break,
                };
                if let Some(slot) = cur.get_mut(i) {
                    *slot = v;
                }
            }
            cur.truncate(half);
        }
        level += 1;
        size *= 2;
    }
    levels
}

/// Block-averaged standard error of the mean with the plateau rule above. `None` if
/// fewer than 2 values or non-finite data. Cost O(N).
pub fn block_average(x: &[f64]) -> Option<BlockAverage> {
    block_average_with_variance(x, variance_population(x))
}

/// [`block_average`] given `variance_population(x)` already computed (so the caller's
/// pass is not repeated).
pub fn block_average_with_variance(x: &[f64], var0: Option<f64>) -> Option<BlockAverage> {
    let levels = block_levels(x);
    let first = levels.first()?;
    finite(first.se)?;
    let eligible: Vec<&BlockLevel> = levels.iter().filter(|l| l.n_blocks >= MIN_BLOCKS).collect();
    let mut plateau = None;
    for pair in eligible.windows(2) {
        if let [a, b] = pair {
            if b.se <= a.se + a.se_error {
                plateau = Some(a.level);
                break;
            }
        }
    }
    let chosen = match plateau {
        Some(l) => levels.get(l),
        None => eligible
            .iter()
            .copied()
            .max_by(|a, b| a.se.total_cmp(&b.se))
            .or(Some(first)),
    }?;
    let var0 = var0?;
    let n = x.len() as f64;
    let g = if var0 > 0.0 {
        finite(n * chosen.se * chosen.se / var0)
    } else {
        None
    };
    Some(BlockAverage {
        plateau_level: plateau,
        sem: chosen.se,
        sem_error: chosen.se_error,
        resolved: plateau.is_some(),
        g,
        levels,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn level0_is_s_over_sqrt_n() {
        // METHODS §3: level-0 SE equals the ddof-1 SD over sqrt(N), exactly.
        let x = [1.0, 2.0, 4.0, 8.0, 16.0];
        let l = block_levels(&x);
        let s = crate::stats::descriptive::std_dev(&x).unwrap();
        assert!((l[0].se - s / 5f64.sqrt()).abs() < 1e-14);
        assert_eq!(l.len(), 2); // 5 -> 2 -> 1 (stop)
        assert_eq!(l[1].n_blocks, 2);
        assert!(block_average(&[1.0]).is_none());
        let c = block_average(&[3.0; 64]).unwrap();
        assert_eq!(c.sem, 0.0);
        assert_eq!(c.g, None);
    }
}
