//! Kinetic-temperature fluctuations against the canonical expectation (METHODS §6), the
//! degrees-of-freedom helper and ensemble inference.
//!
//! In the canonical ensemble `N_df·T_inst/T ~ χ²(N_df)`, so `σ_T/⟨T⟩ = sqrt(2/N_df)`
//! (Frenkel & Smit 2002; Allen & Tildesley 1987). [`temperature_fluctuation`] compares the
//! observed `σ_T/⟨T⟩` with that value inside a χ² band for the sample variance: with
//! `n_eff = N/g` effectively independent samples (`g` of `(T − ⟨T⟩)²`, METHODS §6) the
//! sample variance is approximately `σ²·χ²(ν)/ν` with `ν = n_eff − 1`, widened for the
//! excess kurtosis `12/N_df` of a χ²(N_df) variable by matching the variance
//! `2/ν' = 2/ν + 12/(N_df·n_eff)` (our moment-matching approximation).
//! Cost O(N log N) (one `g`).

use serde::{Deserialize, Serialize};
use statrs::distribution::{ChiSquared, ContinuousCDF};

use super::descriptive::{mean, std_dev};
use super::finite;
use super::inefficiency::{statistical_inefficiency, Estimator};

/// `N_df = 3N − constraints − 3` (centre-of-mass motion removed; Allen & Tildesley) unless
/// `dof` is given. `None` if the result is not positive.
pub fn degrees_of_freedom(atoms: u64, constraints: u64, dof: Option<f64>) -> Option<f64> {
    if let Some(d) = dof {
        return (d > 0.0 && d.is_finite()).then_some(d);
    }
    let v = 3.0 * atoms as f64 - constraints as f64 - 3.0;
    (v > 0.0).then_some(v)
}

/// Canonical relative SD of the kinetic temperature `sqrt(2/N_df)`. `None` if `N_df ≤ 0`.
pub fn canonical_relative_sd(n_df: f64) -> Option<f64> {
    (n_df > 0.0).then(|| (2.0 / n_df).sqrt()).and_then(finite)
}

/// Central band of `χ²(ν)/ν` with probability `coverage` (e.g. 0.999): the per-sample
/// band of `T_inst/T` for `ν = N_df` (METHODS §6). `None` if `ν ≤ 0` or coverage not in (0,1).
pub fn chi2_band(nu: f64, coverage: f64) -> Option<(f64, f64)> {
    if !(nu > 0.0 && coverage > 0.0 && coverage < 1.0) {
        return None;
    }
    let d = ChiSquared::new(nu).ok()?;
    let lo = d.inverse_cdf((1.0 - coverage) / 2.0) / nu;
    let hi = d.inverse_cdf((1.0 + coverage) / 2.0) / nu;
    Some((finite(lo)?, finite(hi)?))
}

/// Verdict of the fluctuation-size test. JSON kebab-case.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum FluctuationVerdict {
    /// Fluctuations smaller than canonical (e.g. a weak-coupling thermostat).
    TooSmall,
    /// Within the band.
    Consistent,
    /// Fluctuations larger than canonical (heating/cooling, wrong N_df).
    TooLarge,
}

/// Result of the fluctuation-size test.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct FluctuationCheck {
    /// Degrees of freedom used (named in the verdict).
    pub n_df: f64,
    /// Observed `σ_T/⟨T⟩` (σ with n − 1).
    pub observed: f64,
    /// Canonical `sqrt(2/N_df)`.
    pub expected: f64,
    /// Band on `σ_T/⟨T⟩` for this sample size.
    pub low: f64,
    /// Upper end of the band.
    pub high: f64,
    /// Coverage of the band.
    pub coverage: f64,
    /// Samples.
    pub n: usize,
    /// Inefficiency of `(T − ⟨T⟩)²` used for the sample size.
    pub g: f64,
    /// Verdict.
    pub verdict: FluctuationVerdict,
}

impl FluctuationCheck {
    /// Human text naming the N_df used.
    pub fn describe(&self) -> String {
        let what = match self.verdict {
            FluctuationVerdict::TooSmall => "too small",
            FluctuationVerdict::Consistent => "consistent with canonical",
            FluctuationVerdict::TooLarge => "too large",
        };
        format!(
            "σ_T/⟨T⟩ = {:.4} vs sqrt(2/N_df) = {:.4} for N_df = {} (band {:.4}–{:.4}): {what}",
            self.observed, self.expected, self.n_df, self.low, self.high
        )
    }
}

/// Fluctuation-size test of kinetic temperatures (K) for `n_df` degrees of freedom. `g`
/// of the squared deviations is estimated unless given. `None` if fewer than 3 values,
/// `⟨T⟩ ≤ 0`, `n_df ≤ 0`, coverage not in (0, 1) or too few effective samples (< 2).
pub fn temperature_fluctuation(
    temps: &[f64],
    n_df: f64,
    g: Option<f64>,
    coverage: f64,
) -> Option<FluctuationCheck> {
    let n = temps.len();
    if n < 3 {
        return None;
    }
    // Invalid N_df: no band, and no need to estimate g.
    canonical_relative_sd(n_df)?;
    let m = mean(temps)?;
    if m <= 0.0 {
        return None;
    }
    let sd = std_dev(temps)?;
    let observed = finite(sd / m)?;
    let g = match g {
        Some(g) => g,
        None => {
            let sq: Vec<f64> = temps.iter().map(|t| (t - m) * (t - m)).collect();
            statistical_inefficiency(&sq, Estimator::FirstNegative)?.g
        }
    };
    fluctuation_band(observed, n, g, n_df, coverage)
}

/// The band and verdict for an observed relative SD `σ_T/⟨T⟩` of `n` temperatures whose
/// squared deviations have inefficiency `g` (taken as at least 1): a χ² band on the
/// variance with `ν_eff = 2/(2/ν + 12/(N_df·N_eff))` (METHODS §6). Shared by the slice
/// version above and by callers that hold only moments. `None` if `n_df ≤ 0`, the
/// observed value is not finite, coverage is not in (0, 1) or fewer than 2 effective
/// samples.
pub fn fluctuation_band(
    observed: f64,
    n: usize,
    g: f64,
    n_df: f64,
    coverage: f64,
) -> Option<FluctuationCheck> {
    let expected = canonical_relative_sd(n_df)?;
    let observed = finite(observed)?;
    // NaN or below 1 (no correlation can make samples more than independent): 1.
    let g = if g >= 1.0 { g } else { 1.0 };
    let n_eff = n as f64 / g;
    let nu = n_eff - 1.0;
    if nu < 1.0 {
        return None;
    }
    let nu_eff = 2.0 / (2.0 / nu + 12.0 / (n_df * n_eff));
    let (lo, hi) = chi2_band(nu_eff, coverage)?;
    let low = expected * lo.sqrt();
    let high = expected * hi.sqrt();
    let verdict = if observed < low {
        FluctuationVerdict::TooSmall
    } else if observed > high {
        FluctuationVerdict::TooLarge
    } else {
        FluctuationVerdict::Consistent
    };
    Some(FluctuationCheck {
        n_df,
        observed,
        expected,
        low,
        high,
        coverage,
        n,
        g,
        verdict,
    })
}

/// Thermodynamic ensemble of a run.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize, clap::ValueEnum)]
#[serde(rename_all = "kebab-case")]
pub enum Ensemble {
    /// Constant energy (microcanonical).
    Nve,
    /// Constant temperature (canonical).
    Nvt,
    /// Constant temperature and pressure.
    Npt,
}

impl std::str::FromStr for Ensemble {
    type Err = String;
    fn from_str(s: &str) -> Result<Ensemble, String> {
        match s.trim().to_ascii_lowercase().as_str() {
            "nve" => Ok(Ensemble::Nve),
            "nvt" => Ok(Ensemble::Nvt),
            "npt" => Ok(Ensemble::Npt),
            _ => Err(format!("'{s}' is not an ensemble (nve, nvt, npt)")),
        }
    }
}

impl std::fmt::Display for Ensemble {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.write_str(match self {
            Ensemble::Nve => "nve",
            Ensemble::Nvt => "nvt",
            Ensemble::Npt => "npt",
        })
    }
}

/// An inferred ensemble with the reason, as text.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EnsembleGuess {
    /// The ensemble.
    pub ensemble: Ensemble,
    /// Why.
    pub reason: String,
}

/// Relative SD of the volume above which it "varies" (common practice, no source).
pub const VOLUME_VARIES_REL_SD: f64 = 1e-6;
/// SD(total)/SD(kinetic) below which the run is taken as NVE (common practice, no source).
pub const NVE_TOTAL_OVER_KINETIC: f64 = 0.1;

/// Infer the ensemble (common practice, no source): volume with relative SD above
/// [`VOLUME_VARIES_REL_SD`] → NPT; else a fast-fluctuation scale of the total energy below
/// [`NVE_TOTAL_OVER_KINETIC`] times that of the kinetic energy → NVE; else NVT when both
/// energies are known. `None` when nothing can be inferred.
///
/// The energies are compared by the spread of their row-to-row differences
/// ([`fast_fluctuation_scale`]), not by their plain SD: a conserved energy that drifts, or a
/// total energy still relaxing, has a large SD but small row-to-row changes, and must not
/// make an NVE run look thermostatted.
pub fn infer_ensemble(
    total: Option<&[f64]>,
    kinetic: Option<&[f64]>,
    volume: Option<&[f64]>,
) -> Option<EnsembleGuess> {
    if let Some(v) = volume {
        if let (Some(m), Some(sd)) = (mean(v), std_dev(v)) {
            let rel = if m != 0.0 { sd / m.abs() } else { sd };
            if rel > VOLUME_VARIES_REL_SD {
                return Some(EnsembleGuess {
                    ensemble: Ensemble::Npt,
                    reason: format!(
                        "volume varies (relative SD {rel:.2e} > {VOLUME_VARIES_REL_SD:.0e})"
                    ),
                });
            }
        }
    }
    let sd_t = fast_fluctuation_scale(total?)?;
    let sd_k = fast_fluctuation_scale(kinetic?)?;
    if sd_k <= 0.0 {
        return None;
    }
    let ratio = sd_t / sd_k;
    let (ensemble, reason) = if ratio < NVE_TOTAL_OVER_KINETIC {
        (
            Ensemble::Nve,
            format!("total energy changes from row to row by {ratio:.3} of the kinetic energy's changes (< {NVE_TOTAL_OVER_KINETIC})"),
        )
    } else {
        (
            Ensemble::Nvt,
            format!("total energy fluctuates ({ratio:.3} of the kinetic energy's row-to-row changes) and the volume does not vary"),
        )
    };
    Some(EnsembleGuess { ensemble, reason })
}

/// Spread of the row-to-row differences, `SD(x_{i+1} − x_i)/√2`: equal to the SD for
/// uncorrelated noise and nearly blind to slow drifts and transients (von Neumann's
/// mean-square successive difference, 1941). `None` for fewer than 3 values. O(N).
pub fn fast_fluctuation_scale(x: &[f64]) -> Option<f64> {
    if x.len() < 3 {
        return None;
    }
    let msd = x
        .iter()
        .zip(x.iter().skip(1))
        .map(|(a, b)| (b - a) * (b - a))
        .sum::<f64>()
        / (x.len() - 1) as f64;
    finite((msd / 2.0).sqrt())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn drifting_nve_total_energy_is_still_recognised_as_nve() {
        // A conserved total energy with a strong linear drift and tiny noise, next to a
        // kinetic energy with canonical-size noise: NVE (common practice, no source).
        let n = 2000;
        let mut state = 7u64;
        let mut noise = || {
            state = state
                .wrapping_mul(6364136223846793005)
                .wrapping_add(1442695040888963407);
            ((state >> 11) as f64 / (1u64 << 53) as f64) - 0.5
        };
        let kinetic: Vec<f64> = (0..n).map(|_| 11_000.0 + 300.0 * noise()).collect();
        let total: Vec<f64> = (0..n)
            .map(|i| -30_000.0 + 0.4 * i as f64 + 2.0 * noise())
            .collect();
        let guess = infer_ensemble(Some(&total), Some(&kinetic), None).unwrap();
        assert_eq!(guess.ensemble, Ensemble::Nve, "{}", guess.reason);
        // White noise: the successive-difference scale equals the SD (von Neumann 1941).
        let white: Vec<f64> = (0..20_000).map(|_| noise()).collect();
        let sd = std_dev(&white).unwrap();
        let scale = fast_fluctuation_scale(&white).unwrap();
        assert!((scale / sd - 1.0).abs() < 0.03, "{scale} vs {sd}");
    }

    #[test]
    fn dof_helper() {
        // N_df = 3N - constraints - 3 (METHODS §4.3, Allen & Tildesley).
        assert_eq!(degrees_of_freedom(1000, 0, None), Some(2997.0));
        assert_eq!(degrees_of_freedom(1000, 500, None), Some(2497.0));
        assert_eq!(degrees_of_freedom(1, 0, None), None);
        assert_eq!(degrees_of_freedom(1, 0, Some(12.0)), Some(12.0));
        assert_eq!(canonical_relative_sd(0.0), None);
        assert!(chi2_band(10.0, 1.0).is_none());
    }
}
