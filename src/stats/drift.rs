//! Drift: OLS slope with an autocorrelation-corrected standard error and confidence
//! interval, and the MD normalisations (METHODS §4.2–4.3).
//!
//! SE corrections (METHODS §4.2):
//! - [`SlopeSeMethod::SqrtG`] (default): `SE = SE_OLS·sqrt(g_res)`, `g_res` from the
//!   first-negative estimator on the residuals; effective dof `N/g_res − 2` (common practice).
//! - [`SlopeSeMethod::Ar1`]: Santer et al., J. Geophys. Res. 105, 7337 (2000):
//!   `N_eff = N(1 − r1)/(1 + r1)`, `SE = SE_OLS·sqrt((N − 2)/(N_eff − 2))`, dof `N_eff − 2`.
//! - [`SlopeSeMethod::NeweyWest`]: Newey & West, Econometrica 55, 703 (1987), Bartlett
//!   weights, bandwidth `L = ⌊4(N/100)^{2/9}⌋`, small-sample factor `N/(N − 2)`; dof N − 2.
//!
//! The confidence interval uses Student's t (statrs) with the effective dof.
//! Cost O(N) (plus O(N log N) for `g_res` in the worst case; O(N·L) for Newey–West).

use serde::{Deserialize, Serialize};
use statrs::distribution::{ContinuousCDF, StudentsT};

use super::descriptive::lag1_autocorrelation;
use super::finite;
use super::inefficiency::{statistical_inefficiency, Estimator};
use super::regression::{ols, LinearFit};

/// Boltzmann constant in kJ mol⁻¹ K⁻¹: `R = N_A k_B`, exact since SI 2019 (CODATA 2018).
pub const BOLTZMANN_KJ_PER_MOL_K: f64 = 0.00831446261815324;

/// How the slope's standard error is corrected for correlated residuals.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum SlopeSeMethod {
    /// `SE_OLS·sqrt(g_res)` (default).
    #[default]
    SqrtG,
    /// AR(1) effective sample size (Santer et al. 2000).
    Ar1,
    /// Newey–West HAC with Bartlett weights.
    NeweyWest,
}

/// A slope with its corrected error.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Drift {
    /// The OLS fit (slope in units of y per unit of t).
    pub fit: LinearFit,
    /// Correction used.
    pub method: SlopeSeMethod,
    /// Corrected standard error of the slope.
    pub se: f64,
    /// Effective degrees of freedom for the t distribution.
    pub dof: f64,
    /// `g_res` (SqrtG), `(1 + r1)/(1 − r1)` (Ar1) or `(SE_HAC/SE_OLS)²` (Newey–West).
    pub inflation: f64,
    /// Newey–West bandwidth, when used.
    pub lags: Option<usize>,
    /// `slope/se`; `None` when `se = 0` (points exactly on a line).
    pub t_stat: Option<f64>,
    /// Two-sided p-value of `slope = 0` from Student t with `dof`; `None` when `se = 0`.
    pub p_value: Option<f64>,
    /// Confidence level of the interval.
    pub confidence: f64,
    /// Interval lower end.
    pub ci_low: f64,
    /// Interval upper end.
    pub ci_high: f64,
}

/// Newey–West bandwidth rule of thumb `⌊4 (N/100)^{2/9}⌋`.
pub fn newey_west_lags(n: usize) -> usize {
    (4.0 * (n as f64 / 100.0).powf(2.0 / 9.0)).floor() as usize
}

/// AR(1) effective sample size `N (1 − r1)/(1 + r1)` (Santer et al. 2000). `None` if
/// `r1 ≤ −1` or the result is not finite.
pub fn ar1_effective_n(n: usize, r1: f64) -> Option<f64> {
    if r1 <= -1.0 {
        return None;
    }
    finite(n as f64 * (1.0 - r1) / (1.0 + r1))
}

/// Newey–West HAC standard error of the OLS slope:
/// `Var(b) = S_tt⁻² Σ_{|l|≤L} w_l Σ_i u_i u_{i+l} · N/(N−2)`, `u_i = (t_i − t̄) r_i`,
/// `w_l = 1 − |l|/(L + 1)`. `None` on invalid input. Cost O(N·L).
pub fn newey_west_se(fit: &LinearFit, t: &[f64], residuals: &[f64], lags: usize) -> Option<f64> {
    let n = t.len();
    if n != residuals.len() || n < 3 {
        return None;
    }
    let u: Vec<f64> = t
        .iter()
        .zip(residuals)
        .map(|(ti, r)| (ti - fit.t_mean) * r)
        .collect();
    let mut s: f64 = u.iter().map(|v| v * v).sum();
    for l in 1..=lags.min(n - 1) {
        let w = 1.0 - l as f64 / (lags as f64 + 1.0);
        let head = u.get(..n - l)?;
        let tail = u.get(l..)?;
        let c: f64 = head.iter().zip(tail).map(|(a, b)| a * b).sum();
        s += 2.0 * w * c;
    }
    let var = s / (fit.s_tt * fit.s_tt) * n as f64 / (n as f64 - 2.0);
    if var < 0.0 {
        return None;
    }
    finite(var.sqrt())
}

/// Student-t two-sided p-value and the `confidence` quantile for `dof`.
fn t_stats(t_stat: f64, dof: f64, confidence: f64) -> Option<(f64, f64)> {
    let dist = StudentsT::new(0.0, 1.0, dof).ok()?;
    let p = 2.0 * (1.0 - dist.cdf(t_stat.abs()));
    let q = dist.inverse_cdf(0.5 + confidence / 2.0);
    Some((finite(p.clamp(0.0, 1.0))?, finite(q)?))
}

/// Slope of `y` against `t` with the chosen SE correction and a `confidence` (e.g. 0.95)
/// Student-t interval. Pass `t` in the log's time (ps) so the slope is per ps.
/// `None` if the fit or the correction is undefined (N ≤ 3, constant t, effective dof ≤ 0,
/// confidence outside (0, 1)).
pub fn drift(t: &[f64], y: &[f64], method: SlopeSeMethod, confidence: f64) -> Option<Drift> {
    if !(confidence > 0.0 && confidence < 1.0) {
        return None;
    }
    let fit = ols(t, y)?;
    let se_ols = fit.se_slope?;
    let n = fit.n as f64;
    let res = fit.residuals(t, y);
    let (se, dof, inflation, lags) = match method {
        SlopeSeMethod::SqrtG => {
            let g = statistical_inefficiency(&res, Estimator::FirstNegative)?.g;
            (se_ols * g.sqrt(), n / g - 2.0, g, None)
        }
        SlopeSeMethod::Ar1 => {
            let r1 = lag1_autocorrelation(&res).unwrap_or(0.0);
            let neff = ar1_effective_n(fit.n, r1)?;
            if neff <= 2.0 {
                return None;
            }
            let se = se_ols * ((n - 2.0) / (neff - 2.0)).sqrt();
            (se, neff - 2.0, (1.0 + r1) / (1.0 - r1), None)
        }
        SlopeSeMethod::NeweyWest => {
            let l = newey_west_lags(fit.n);
            let se = newey_west_se(&fit, t, &res, l)?;
            let infl = if se_ols > 0.0 {
                (se / se_ols).powi(2)
            } else {
                1.0
            };
            (se, n - 2.0, infl, Some(l))
        }
    };
    if dof <= 0.0 {
        return None;
    }
    let se = finite(se)?;
    let t_stat = if se > 0.0 {
        finite(fit.slope / se)
    } else {
        None
    };
    let (p_value, q) = match t_stat {
        Some(t) => {
            let (p, q) = t_stats(t, dof, confidence)?;
            (Some(p), q)
        }
        None => (None, 0.0),
    };
    Some(Drift {
        fit,
        method,
        se,
        dof,
        inflation,
        lags,
        t_stat,
        p_value,
        confidence,
        ci_low: fit.slope - q * se,
        ci_high: fit.slope + q * se,
    })
}

/// Slope per ns from a slope per ps (×1000).
pub fn per_ns(slope_per_ps: f64) -> f64 {
    slope_per_ps * 1000.0
}

/// Divide by the atom count. `None` if `atoms == 0`.
pub fn per_atom(value: f64, atoms: u64) -> Option<f64> {
    (atoms > 0).then(|| value / atoms as f64)
}

/// Energy drift in `k_B T` per ns per degree of freedom: `b/(N_df k_B T)` with `b` in
/// kJ mol⁻¹ ns⁻¹ (METHODS §4.3, common practice). `None` unless `n_df > 0`, `T > 0`.
pub fn kt_per_ns_per_dof(
    slope_kj_per_mol_per_ns: f64,
    n_df: f64,
    temperature_k: f64,
) -> Option<f64> {
    if n_df <= 0.0 || temperature_k <= 0.0 {
        return None;
    }
    finite(slope_kj_per_mol_per_ns / (n_df * BOLTZMANN_KJ_PER_MOL_K * temperature_k))
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn normalisation_example() {
        // METHODS §4.3 worked example (exact arithmetic): 1 kJ/mol/ns, N_df = 2997, 300 K
        // -> 1.337697e-4 kT/ns/dof; per atom (1000 atoms) 1e-3.
        let v = kt_per_ns_per_dof(1.0, 2997.0, 300.0).unwrap();
        assert!((v - 1.337697e-4).abs() < 5e-11);
        assert_eq!(per_atom(1.0, 1000), Some(1e-3));
        assert_eq!(per_atom(1.0, 0), None);
        assert_eq!(per_ns(0.002), 2.0);
        // CODATA 2018 / SI 2019: k_B T at 300 K = 2.494338785445972 kJ/mol (METHODS §9).
        assert!((BOLTZMANN_KJ_PER_MOL_K * 300.0 - 2.494338785445972).abs() < 1e-15);
        assert_eq!(newey_west_lags(500), 5);
    }

    #[test]
    fn undefined_cases() {
        assert!(drift(&[0.0, 1.0], &[1.0, 2.0], SlopeSeMethod::SqrtG, 0.95).is_none());
        assert!(drift(
            &[0.0, 1.0, 2.0, 3.0],
            &[1.0, 2.0, 3.0, 4.5],
            SlopeSeMethod::SqrtG,
            1.5
        )
        .is_none());
    }
}
