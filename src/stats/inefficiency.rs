//! Statistical inefficiency `g` and effective sample count `N_eff = N/g` (METHODS §1.2).
//!
//! Four estimators, all on the FFT/direct lag sums of [`super::acf`]:
//! - [`Estimator::FirstNegative`] (default): `g = 1 + 2 Σ_{t=1}^{t*−1} (1 − t/N) C_t`,
//!   truncated at the first lag `t* > 3` with `C_t ≤ 0` — the scheme of Chodera,
//!   J. Chem. Theory Comput. 12, 1799 (2016), eqs. 11–13, citing Chodera et al. 2007 §5.2.
//! - [`Estimator::SokalWindow`]: Sokal's automatic window written on the `ĝ` form
//!   (Goodman's form): `ĝ(M) = 1 + 2 Σ_{t=1}^{M} ρ̂_t`, smallest `M` with `M ≥ 5 ĝ(M)`
//!   (c = 5 on `ĝ`, i.e. c = 10 on Sokal's `τ_int`; Sokal 1997, Madras & Sokal 1988).
//! - [`Estimator::GeyerIps`] / [`Estimator::GeyerIms`]: Geyer's initial positive /
//!   initial monotone sequence estimators (Geyer, Statist. Sci. 7, 473 (1992)):
//!   `Γ̂_k = γ̂_{2k} + γ̂_{2k+1}` up to the first non-positive pair, `g = (−γ̂_0 + 2 Σ Γ̂_k)/γ̂_0`.
//!
//! Every estimate is clamped to `g ≥ 1`. A constant series gives `g = 1`, `N_eff = N` and
//! the `constant` flag (METHODS §0, common practice). Fewer than 2 values: `None`.
//! Cost: O(N·t*) while the estimator stops within the first 24 lags, otherwise one FFT,
//! O(N log N); memory O(N).

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use super::acf::{with_engine, AcfEngine, LazyAcov};
use super::finite;

/// Lags at or below this are summed even when `C_t ≤ 0` (METHODS §1.2(a) "minimum lag ~3").
pub const FIRST_NEGATIVE_MIN_LAG: usize = 3;
/// Window constant `c` of the Sokal/Goodman rule on the `ĝ` form (`M ≥ c ĝ(M)`).
pub const SOKAL_C: f64 = 5.0;

/// Estimator of the statistical inefficiency. JSON names are kebab-case.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Estimator {
    /// Truncation at the first non-positive adjusted autocorrelation (Chodera 2016). Default.
    #[default]
    FirstNegative,
    /// Sokal/Goodman automatic window, c = 5 on the `ĝ` form.
    SokalWindow,
    /// Geyer initial positive sequence.
    GeyerIps,
    /// Geyer initial monotone sequence.
    GeyerIms,
}

impl Estimator {
    /// All estimators, default first.
    pub const ALL: [Estimator; 4] = [
        Estimator::FirstNegative,
        Estimator::SokalWindow,
        Estimator::GeyerIps,
        Estimator::GeyerIms,
    ];

    /// The kebab-case name used in JSON and on the command line.
    pub fn name(self) -> &'static str {
        match self {
            Estimator::FirstNegative => "first-negative",
            Estimator::SokalWindow => "sokal-window",
            Estimator::GeyerIps => "geyer-ips",
            Estimator::GeyerIms => "geyer-ims",
        }
    }
}

impl fmt::Display for Estimator {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Estimator {
    type Err = String;
    fn from_str(s: &str) -> Result<Self, Self::Err> {
        Estimator::ALL
            .into_iter()
            .find(|e| e.name() == s)
            .ok_or_else(|| {
                format!("unknown estimator '{s}' (expected first-negative, sokal-window, geyer-ips or geyer-ims)")
            })
    }
}

/// Result of an inefficiency estimate.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Inefficiency {
    /// Statistical inefficiency `g ≥ 1` (samples per independent sample).
    pub g: f64,
    /// Effective sample count `N/g`.
    pub n_eff: f64,
    /// Number of samples used.
    pub n: usize,
    /// Which estimator produced `g`.
    pub estimator: Estimator,
    /// Lags summed: `t* − 1` (first-negative), `M` (Sokal), `2(m + 1)` (Geyer).
    pub lags_used: usize,
    /// The raw estimate was below 1 and was clamped.
    pub clamped: bool,
    /// The series is constant (σ̂² = 0): `g = 1` by definition.
    pub constant: bool,
    /// The estimate is trustworthy: `N ≥ 10 g` (Chodera 2016, "an order of magnitude")
    /// and, for the Sokal window, a window was found.
    pub reliable: bool,
}

/// Statistical inefficiency of `x` with the chosen estimator. `None` if fewer than 2
/// values (or non-finite input). Cost O(N log N) at most.
pub fn statistical_inefficiency(x: &[f64], estimator: Estimator) -> Option<Inefficiency> {
    with_engine(|engine| inefficiency_with(x, estimator, engine))
}

/// As [`statistical_inefficiency`] with the default estimator.
pub fn inefficiency(x: &[f64]) -> Option<Inefficiency> {
    statistical_inefficiency(x, Estimator::FirstNegative)
}

/// Standard error of the mean from `g` (METHODS §0; Chodera 2016 eq. 9):
/// `SE = sqrt(σ̂² g / N)`, σ̂² with the 1/N divisor. `None` if `n == 0` or inputs invalid.
pub fn sem_from_g(variance_population: f64, g: f64, n: usize) -> Option<f64> {
    if n == 0 || variance_population < 0.0 || g <= 0.0 {
        return None;
    }
    finite((variance_population * g / n as f64).sqrt())
}

pub(crate) fn inefficiency_with(
    x: &[f64],
    estimator: Estimator,
    engine: &mut AcfEngine,
) -> Option<Inefficiency> {
    let n = x.len();
    if n < 2 {
        return None;
    }
    let mut acov = LazyAcov::new(x, engine)?;
    let a0 = acov.get(0)?;
    if !a0.is_finite() {
        return None;
    }
    let nf = n as f64;
    let make = |g_raw: f64, lags: usize, constant: bool, found: bool| -> Option<Inefficiency> {
        let g_raw = finite(g_raw)?;
        let g = g_raw.max(1.0);
        Some(Inefficiency {
            g,
            n_eff: nf / g,
            n,
            estimator,
            lags_used: lags,
            clamped: g_raw < 1.0,
            constant,
            reliable: found && !constant && nf >= 10.0 * g,
        })
    };
    if a0 <= 0.0 {
        return make(1.0, 0, true, true);
    }
    let var0 = a0 / nf;
    match estimator {
        Estimator::FirstNegative => {
            let mut g = 1.0;
            let mut used = 0;
            for t in 1..n.saturating_sub(1) {
                let tf = t as f64;
                let c = acov.get(t)? / ((nf - tf) * var0);
                if c <= 0.0 && t > FIRST_NEGATIVE_MIN_LAG {
                    break;
                }
                g += 2.0 * c * (1.0 - tf / nf);
                used = t;
            }
            make(g, used, false, true)
        }
        Estimator::SokalWindow => {
            let mut g = 1.0;
            for m in 1..n {
                g += 2.0 * acov.get(m)? / a0;
                if m as f64 >= SOKAL_C * g {
                    return make(g, m, false, true);
                }
            }
            make(g, n - 1, false, false)
        }
        Estimator::GeyerIps | Estimator::GeyerIms => {
            let mut sum = 0.0;
            let mut running_min = f64::INFINITY;
            let mut pairs = 0;
            for k in 0..(n - 1) / 2 {
                let pair = (acov.get(2 * k)? + acov.get(2 * k + 1)?) / nf;
                if pair <= 0.0 {
                    break;
                }
                let term = if estimator == Estimator::GeyerIms {
                    running_min = running_min.min(pair);
                    running_min
                } else {
                    pair
                };
                sum += term;
                pairs += 1;
            }
            let sigma2 = -var0 + 2.0 * sum;
            make(sigma2 / var0, 2 * pairs, false, true)
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn names_round_trip() {
        for e in Estimator::ALL {
            assert_eq!(e.name().parse::<Estimator>().unwrap(), e);
            let j = serde_json::to_string(&e).unwrap();
            assert_eq!(j, format!("\"{}\"", e.name()));
        }
        assert!("nope".parse::<Estimator>().is_err());
    }

    #[test]
    fn constant_and_short() {
        for e in Estimator::ALL {
            assert!(statistical_inefficiency(&[1.0], e).is_none());
            let r = statistical_inefficiency(&[4.0; 10], e).unwrap();
            assert!(r.constant && r.g == 1.0 && r.n_eff == 10.0);
        }
    }

    #[test]
    fn alternating_is_clamped() {
        // METHODS §0: alternating ±1 has ρ_1 ≈ −1, raw g < 1, must clamp to 1.
        let x: Vec<f64> = (0..200)
            .map(|i| if i % 2 == 0 { 1.0 } else { -1.0 })
            .collect();
        for e in Estimator::ALL {
            let r = statistical_inefficiency(&x, e).unwrap();
            assert!(r.g >= 1.0, "{e}");
        }
        assert!(
            statistical_inefficiency(&x, Estimator::FirstNegative)
                .unwrap()
                .clamped
        );
    }
}
