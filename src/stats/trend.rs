//! Trend tests: "is this quantity still changing?" (METHODS §5).
//!
//! - [`slope_t_test`]: slope over its autocorrelation-corrected SE, Student t (§5.1);
//! - [`mann_kendall`]: Mann (1945) / Kendall (1975) S statistic with the tie-corrected
//!   variance, continuity-corrected Z and two-sided normal p-value;
//! - [`sen_slope`]: Sen (1968) median of pairwise slopes (as scipy `theilslopes`);
//! - [`hamed_rao`]: Hamed & Rao, J. Hydrology 204, 182 (1998) variance correction from the
//!   biased acf of the ranks of the Sen-detrended series, lags with `|ρ_k| > 1.96/√n`;
//! - [`trend_test`]: all of the above on at most `max_points` values: a longer series is
//!   replaced by means of `b = ⌈N/max_points⌉` consecutive samples (incomplete last block
//!   dropped) and the Sen slope is divided by `b` to stay per sample.
//!
//! Cost: Mann–Kendall and Sen are O(n²) in time (Sen also O(n²) memory) on the capped
//! n ≤ `max_points` (default [`DEFAULT_MAX_POINTS`] = 2000: 2·10⁶ pairs); the cap keeps
//! the whole test O(N) in the series length.

use serde::{Deserialize, Serialize};
use statrs::function::erf::erfc;

use super::acf::acf_biased;
use super::drift::{drift, Drift, SlopeSeMethod};
use super::finite;

/// Default cap on the points fed to the O(n²) tests.
pub const DEFAULT_MAX_POINTS: usize = 2000;
/// Two-sided 5 % normal quantile `Φ⁻¹(0.975)` (Hamed–Rao lag significance).
pub const Z_975: f64 = 1.959963984540054;

/// Slope t-test: the [`Drift`] of `y` on `t` with the chosen SE correction (§5.1).
pub fn slope_t_test(t: &[f64], y: &[f64], method: SlopeSeMethod) -> Option<Drift> {
    drift(t, y, method, 0.95)
}

/// Two-sided normal p-value `2(1 − Φ(|z|)) = erfc(|z|/√2)` (accurate far in the tail).
pub fn normal_two_sided_p(z: f64) -> f64 {
    erfc(z.abs() / std::f64::consts::SQRT_2)
}

/// Mann–Kendall test result.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct MannKendall {
    /// Number of values.
    pub n: usize,
    /// `S = Σ_{i<j} sign(x_j − x_i)`.
    pub s: i64,
    /// Tie-corrected `Var(S)`.
    pub var_s: f64,
    /// Continuity-corrected standard normal statistic.
    pub z: f64,
    /// Two-sided p-value.
    pub p_value: f64,
}

fn mk_z(s: i64, var: f64) -> f64 {
    let sd = var.sqrt();
    if sd <= 0.0 {
        return 0.0;
    }
    match s {
        s if s > 0 => (s - 1) as f64 / sd,
        s if s < 0 => (s + 1) as f64 / sd,
        _ => 0.0,
    }
}

/// Mann–Kendall S, tie-corrected variance
/// `[n(n−1)(2n+5) − Σ t_p(t_p−1)(2t_p+5)]/18`, Z and p. `None` if fewer than 2 values or
/// `Var(S) = 0` (all tied). O(n²) — cap n (see [`trend_test`]).
pub fn mann_kendall(x: &[f64]) -> Option<MannKendall> {
    let n = x.len();
    if n < 2 {
        return None;
    }
    let mut s: i64 = 0;
    for (i, xi) in x.iter().enumerate() {
        for xj in x.iter().skip(i + 1) {
            if xj > xi {
                s += 1;
            } else if xj < xi {
                s -= 1;
            }
        }
    }
    let mut sorted = x.to_vec();
    sorted.sort_by(f64::total_cmp);
    let mut tie_term = 0.0;
    let mut run = 1usize;
    for w in sorted.windows(2) {
        if let [a, b] = w {
            if a == b {
                run += 1;
                continue;
            }
        }
        if run > 1 {
            let t = run as f64;
            tie_term += t * (t - 1.0) * (2.0 * t + 5.0);
        }
        run = 1;
    }
    if run > 1 {
        let t = run as f64;
        tie_term += t * (t - 1.0) * (2.0 * t + 5.0);
    }
    let nf = n as f64;
    let var_s = (nf * (nf - 1.0) * (2.0 * nf + 5.0) - tie_term) / 18.0;
    if var_s <= 0.0 {
        return None;
    }
    let z = mk_z(s, var_s);
    Some(MannKendall {
        n,
        s,
        var_s,
        z,
        p_value: normal_two_sided_p(z),
    })
}

/// Sen's slope: median of `(y_j − y_i)/(t_j − t_i)` over pairs with `t_j ≠ t_i` (as scipy
/// `theilslopes`). `None` if lengths differ or no pair has distinct `t`. O(n²) time and
/// memory — cap n.
pub fn sen_slope(t: &[f64], y: &[f64]) -> Option<f64> {
    if t.len() != y.len() {
        return None;
    }
    let n = t.len();
    let mut slopes = Vec::with_capacity(n.saturating_mul(n.saturating_sub(1)) / 2);
    for (i, (ti, yi)) in t.iter().zip(y).enumerate() {
        for (tj, yj) in t.iter().zip(y).skip(i + 1) {
            if tj != ti {
                slopes.push((yj - yi) / (tj - ti));
            }
        }
    }
    super::spikes::median_mut(&mut slopes).and_then(finite)
}

/// Sen's slope against the sample index (per sample).
pub fn sen_slope_index(y: &[f64]) -> Option<f64> {
    let t: Vec<f64> = (0..y.len()).map(|i| i as f64).collect();
    sen_slope(&t, y)
}

/// Average ranks (1-based; ties share the mean rank), as scipy `rankdata`.
pub fn ranks(x: &[f64]) -> Vec<f64> {
    let mut idx: Vec<usize> = (0..x.len()).collect();
    idx.sort_by(|&a, &b| match (x.get(a), x.get(b)) {
        (Some(p), Some(q)) => p.total_cmp(q),
        _ => std::cmp::Ordering::Equal,
    });
    let mut out = vec![0.0; x.len()];
    let mut i = 0;
    while i < idx.len() {
        let vi = idx.get(i).and_then(|&k| x.get(k)).copied();
        let mut j = i + 1;
        while j < idx.len() && idx.get(j).and_then(|&k| x.get(k)).copied() == vi {
            j += 1;
        }
        let r = (i + j + 1) as f64 / 2.0;
        for k in idx.get(i..j).unwrap_or(&[]) {
            if let Some(slot) = out.get_mut(*k) {
                *slot = r;
            }
        }
        i = j;
    }
    out
}

/// Hamed–Rao correction.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct HamedRao {
    /// Variance inflation `n/n*`.
    pub n_over_nstar: f64,
    /// Lags kept (significant at 5 %).
    pub significant_lags: usize,
    /// Corrected variance `Var(S)·n/n*`.
    pub var_s: f64,
    /// Corrected Z.
    pub z: f64,
    /// Corrected two-sided p-value.
    pub p_value: f64,
}

/// Hamed–Rao (1998) modified Mann–Kendall: remove `sen_per_sample·i`, rank, biased acf of
/// the ranks, keep lags with `|ρ_k| > 1.96/√n`, `n/n* = 1 + 2/(n(n−1)(n−2)) Σ (n−k)(n−k−1)(n−k−2) ρ_k`.
/// `None` if n < 3, the ranks are constant or `n/n* ≤ 0`. Cost O(n log n).
pub fn hamed_rao(x: &[f64], mk: &MannKendall, sen_per_sample: f64) -> Option<HamedRao> {
    let n = x.len();
    if n < 3 {
        return None;
    }
    let det: Vec<f64> = x
        .iter()
        .enumerate()
        .map(|(i, v)| v - sen_per_sample * i as f64)
        .collect();
    let r = ranks(&det);
    let rho = acf_biased(&r)?;
    let nf = n as f64;
    let crit = Z_975 / nf.sqrt();
    let mut sum = 0.0;
    let mut sig = 0;
    for (k, rk) in rho.iter().enumerate().skip(1) {
        if rk.abs() > crit {
            let kf = k as f64;
            sum += (nf - kf) * (nf - kf - 1.0) * (nf - kf - 2.0) * rk;
            sig += 1;
        }
    }
    let ratio = 1.0 + 2.0 / (nf * (nf - 1.0) * (nf - 2.0)) * sum;
    if ratio <= 0.0 || !ratio.is_finite() {
        return None;
    }
    let var_s = mk.var_s * ratio;
    let z = mk_z(mk.s, var_s);
    Some(HamedRao {
        n_over_nstar: ratio,
        significant_lags: sig,
        var_s,
        z,
        p_value: normal_two_sided_p(z),
    })
}

/// Combined trend test on a capped series.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct TrendTest {
    /// Samples per point fed to the tests (1 unless the series was longer than the cap).
    pub block_size: usize,
    /// Mann–Kendall on the (block) series.
    pub mann_kendall: MannKendall,
    /// Sen slope per original sample.
    pub sen_slope_per_sample: Option<f64>,
    /// Hamed–Rao autocorrelation-corrected test.
    pub hamed_rao: Option<HamedRao>,
}

/// Mann–Kendall + Sen + Hamed–Rao on at most `max_points` points (block means beyond,
/// see module doc). `None` if fewer than 2 points or all tied. Cost O(N + max_points²).
pub fn trend_test(x: &[f64], max_points: usize) -> Option<TrendTest> {
    let cap = max_points.max(3);
    let b = if x.len() > cap {
        x.len().div_ceil(cap)
    } else {
        1
    };
    let owned;
    let y: &[f64] = if b > 1 {
        owned = x
            .chunks_exact(b)
            .map(|c| c.iter().sum::<f64>() / b as f64)
            .collect::<Vec<f64>>();
        &owned
    } else {
        x
    };
    let mk = mann_kendall(y)?;
    let sen = sen_slope_index(y);
    let hr = sen.and_then(|s| hamed_rao(y, &mk, s));
    Some(TrendTest {
        block_size: b,
        mann_kendall: mk,
        sen_slope_per_sample: sen.map(|s| s / b as f64),
        hamed_rao: hr,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn hand_checks() {
        // METHODS §5.2 exact: [1,2,3,4,5] -> S = 10, Var = 16.6667, Z = 2.2045407685048604,
        // p = 0.02748633611151033.
        let r = mann_kendall(&[1.0, 2.0, 3.0, 4.0, 5.0]).unwrap();
        assert_eq!(r.s, 10);
        assert!((r.var_s - 50.0 / 3.0).abs() < 1e-12);
        assert!((r.z - 2.2045407685048604).abs() < 1e-12);
        // statrs erfc is accurate to ~1e-10 relative here.
        assert!(
            (r.p_value / 0.02748633611151033 - 1.0).abs() < 1e-9,
            "{}",
            r.p_value
        );
        // Ties: [1,2,2,3] -> S = 5, Var = 7.6667 (tie term 18), Z = 1.4446302370292303.
        let r = mann_kendall(&[1.0, 2.0, 2.0, 3.0]).unwrap();
        assert_eq!(r.s, 5);
        assert!((r.var_s - 23.0 / 3.0).abs() < 1e-12);
        assert!((r.z - 1.4446302370292303).abs() < 1e-12);
        assert!(mann_kendall(&[2.0; 5]).is_none());
        assert!(mann_kendall(&[2.0]).is_none());
        // scipy rankdata convention (average ranks), hand-checked.
        assert_eq!(ranks(&[10.0, 20.0, 20.0, 5.0]), vec![2.0, 3.5, 3.5, 1.0]);
        assert_eq!(sen_slope_index(&[1.0]), None);
    }
}
