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
//! Cost O(N) time, O(N/4) memory (level 1 generated on the fly, the levels above halved in
//! place).

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
/// Cost O(N) time; O(N/4) memory: level 1 (pair means) is generated on the fly from the
/// data, never stored, and the levels from 2 on live in one buffer halved in place. Every
/// level's numbers are bit-for-bit those of the plain construction (same operations in
/// the same order; tested).
pub fn block_levels(x: &[f64]) -> Vec<BlockLevel> {
    let mut levels = Vec::new();
    let push = |levels: &mut Vec<BlockLevel>, level: usize, n: usize, ss: f64| {
        let c0 = ss / n as f64;
        let se = (c0 / (n - 1) as f64).sqrt();
        levels.push(BlockLevel {
            level,
            block_size: 1 << level,
            n_blocks: n,
            se,
            se_error: se / (2.0 * (n - 1) as f64).sqrt(),
        });
    };
    // Level 0: the data.
    if x.len() < 2 {
        return levels;
    }
    let Some(m) = mean(x) else { return levels };
    push(
        &mut levels,
        0,
        x.len(),
        squared_deviations(x.iter().copied(), m),
    );
    // Level 1: pair means, generated as needed.
    let pairs = || {
        x.chunks_exact(2).map(|p| match p {
            [a, b] => 0.5 * (a + b),
            _ => f64::NAN,
        })
    };
    let n1 = x.len() / 2;
    if n1 < 2 {
        return levels;
    }
    let Some(m) = mean_of(pairs, n1) else {
        return levels;
    };
    push(&mut levels, 1, n1, squared_deviations(pairs(), m));
    // Level 2 on: means of four, then halved in place.
    let mut cur: Vec<f64> = x
        .chunks_exact(4)
        .map(|q| match q {
            [a, b, c, d] => 0.5 * (0.5 * (a + b) + 0.5 * (c + d)),
            _ => f64::NAN,
        })
        .collect();
    let mut level = 2;
    loop {
        let n = cur.len();
        if n < 2 {
            break;
        }
        let Some(m) = mean(&cur) else { break };
        push(
            &mut levels,
            level,
            n,
            squared_deviations(cur.iter().copied(), m),
        );
        let half = n / 2;
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
        level += 1;
    }
    levels
}

/// `Σ (v − m)²` in sequence order.
fn squared_deviations(values: impl Iterator<Item = f64>, m: f64) -> f64 {
    values.map(|v| (v - m) * (v - m)).sum::<f64>()
}

/// [`mean`] of the `n` values `values()` yields, with the same operations in the same order
/// (eight running sums, then the compensating pass with four), so that the result is
/// bit-for-bit that of `mean` on the stored values.
fn mean_of<I: Iterator<Item = f64>>(values: impl Fn() -> I, n: usize) -> Option<f64> {
    if n == 0 {
        return None;
    }
    let nf = n as f64;
    let (a, tail) = strided_sums::<8>(values(), n, 0.0);
    let total = ((a[0] + a[4]) + (a[1] + a[5])) + ((a[2] + a[6]) + (a[3] + a[7])) + tail;
    let m0 = total / nf;
    let (b, rest) = strided_sums::<4>(values(), n, m0);
    finite(m0 + (b[0] + b[1] + b[2] + b[3] + rest) / nf)
}

/// The `K` running sums of `v − shift` over the first `n − n % K` values (value `i` into
/// sum `i mod K`) and the plain sum of the last `n % K`: the order of `fast_sum` (`K` = 8,
/// `shift` = 0) and of `mean`'s compensating pass (`K` = 4).
fn strided_sums<const K: usize>(
    values: impl Iterator<Item = f64>,
    n: usize,
    shift: f64,
) -> ([f64; K], f64) {
    let whole = n - n % K;
    let mut acc = [0.0f64; K];
    let mut last = [0.0f64; K];
    for (i, v) in values.enumerate().take(n) {
        let d = v - shift;
        if i < whole {
            if let Some(a) = acc.get_mut(i % K) {
                *a += d;
            }
        } else if let Some(t) = last.get_mut(i - whole) {
            *t = d;
        }
    }
    (acc, last.get(..n - whole).unwrap_or(&[]).iter().sum())
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

    /// The plain construction: every level stored, its mean, c0 and SE from the stored
    /// values (the definition in the module doc).
    fn plain_levels(x: &[f64]) -> Vec<BlockLevel> {
        let mut levels = Vec::new();
        let mut cur = x.to_vec();
        let mut level = 0;
        while cur.len() >= 2 {
            let n = cur.len();
            let Some(m) = mean(&cur) else { break };
            let c0 = cur.iter().map(|v| (v - m) * (v - m)).sum::<f64>() / n as f64;
            let se = (c0 / (n - 1) as f64).sqrt();
            levels.push(BlockLevel {
                level,
                block_size: 1 << level,
                n_blocks: n,
                se,
                se_error: se / (2.0 * (n - 1) as f64).sqrt(),
            });
            cur = cur.chunks_exact(2).map(|p| 0.5 * (p[0] + p[1])).collect();
            level += 1;
        }
        levels
    }

    #[test]
    fn levels_generated_on_the_fly_equal_the_stored_construction_bit_for_bit() {
        // A fixed linear congruential generator; lengths that exercise every remainder of
        // the eight- and four-way sums at levels 0, 1 and 2.
        let mut state: u64 = 0x2545_f491_4f6c_dd1d;
        let mut next = || {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            (state >> 11) as f64 / (1u64 << 53) as f64 * 1.0e4 - 5.0e3
        };
        let mut lengths: Vec<usize> = (0..70).collect();
        lengths.extend([255, 256, 257, 1001, 4099, 65_537]);
        for n in lengths {
            let x: Vec<f64> = (0..n).map(|_| next()).collect();
            assert_eq!(block_levels(&x), plain_levels(&x), "n = {n}");
        }
    }

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
