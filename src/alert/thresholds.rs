//! Alert thresholds: defaults with their sources, overridable in `plateau.toml` (`[alerts]`
//! table, kebab-case keys such as `drift-warning`) and on the command line
//! (`--threshold KEY=VALUE`, dashes or underscores, or the dedicated options such as
//! `--temperature-tolerance`).
//!
//! Every default names where it comes from. "common practice, no source" marks a value that
//! is a convention of the trade or our engineering choice, not a published number; change it
//! freely. The numbers are documented for users in `docs/report-schema.md` (section
//! "Alert thresholds").

use serde::{Deserialize, Serialize};

/// All alert thresholds. Units are the canonical ones (K, bar, ps) unless a field says so.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
#[serde(deny_unknown_fields, default, rename_all = "kebab-case")]
pub struct Thresholds {
    /// Hampel identifier half-window `k` in rows (window `2k+1`). Default 10: METHODS §8
    /// found k = 10, t0 = 5 flags exactly the injected spikes of autocorrelated test data
    /// where the textbook k = 5, t0 = 3 gives many false flags (common practice, no source).
    pub spike_window: usize,
    /// Hampel threshold `t0` in robust standard deviations (1.4826·MAD). Default 5 (as above).
    pub spike_sigmas: f64,
    /// Rows without a spike before a spike alert on a column clears and may be raised again.
    /// Default 100 rows (common practice, no source): a burst of spikes is one alert.
    pub spike_clear_rows: u32,
    /// Rows of a runaway fit: `log|x − median|` regressed on the row over this many rows.
    /// Default 20 (METHODS §8, common practice, no source).
    pub runaway_window: usize,
    /// Minimum R² of that fit for sustained exponential growth. Default 0.9 (METHODS §8,
    /// common practice, no source).
    pub runaway_min_r2: f64,
    /// The last value must also lie this many robust standard deviations from the median
    /// of the reference part, so noise that happens to line up is not called growth.
    /// Default 10 (common practice, no source; a Gaussian value beyond 10 σ has probability
    /// below 1e-22).
    pub runaway_min_sigmas: f64,
    /// A drift is significant only when |slope| / stderr exceeds this. Default 3 (METHODS
    /// §4.2, common practice, no source).
    pub drift_sigmas: f64,
    /// Warning level of the conserved-energy drift in k_B·T per ns per degree of freedom.
    /// Default 0.01: with a heat capacity near N_df·k_B (equipartition over kinetic and
    /// potential terms, textbook harmonic estimate) this drift heats the system by about
    /// 1 % of T per ns, 3 K/ns at 300 K (our derivation; METHODS §4.3 calls 0.01 the upper
    /// end of "good", common practice, no source).
    pub drift_warning: f64,
    /// Critical level of the drift, k_B·T per ns per degree of freedom. Default 0.1 (about
    /// 10 % of T per ns by the same estimate; METHODS §4.3, common practice, no source).
    pub drift_critical: f64,
    /// Allowed offset of the mean temperature from its target, K, before the statistical
    /// margin. Default 5 K (common practice, no source): it absorbs how engines count
    /// degrees of freedom (METHODS §6) and the lag of a thermostat behind a ramp.
    pub temperature_tolerance: f64,
    /// Allowed offset of the mean pressure from its target, bar, before the statistical
    /// margin. Default 50 bar (common practice, no source): instantaneous pressure in
    /// small atomistic boxes fluctuates by hundreds of bar (METHODS §6).
    pub pressure_tolerance: f64,
    /// Statistical margin of the off-target test in standard errors of the window mean
    /// (standard error from the statistical inefficiency g). Default 3 (issue text).
    pub off_target_sigmas: f64,
    /// Least rows in the moving window whose mean is compared with the target. The window
    /// itself is set in correlation times (`alert::off_target_window_rows`: g times the
    /// effective samples that keep the margin within half the tolerance); this is its floor.
    /// Default 20 rows (common practice, no source).
    pub off_target_window: usize,
    /// Fluctuation-size verdict: two-sided probability of the χ² band outside which
    /// σ_T/⟨T⟩ is called too small or too large. Default 0.999 (METHODS §6 uses 99.9 %
    /// bands, common practice, no source).
    pub fluctuation_band: f64,
    /// Stalled output: no row for this many median row gaps. Default 5 (Contract).
    pub stall_factor: f64,
    /// ... and at least this many seconds. Default 60 s (Contract).
    pub stall_minimum_seconds: f64,
    /// Stalled output after exactly this many seconds (`--stall-after`), replacing the two
    /// values above.
    pub stall_after_seconds: Option<f64>,
    /// Skipped data-like lines: `info` for any, `warning` above this fraction of the data
    /// lines. Default 0.01 (common practice, no source).
    pub skipped_warning_fraction: f64,
    /// Finite rows needed before a non-finite alert on a column clears. Default 100.
    pub nonfinite_clear_rows: u32,
}

impl Default for Thresholds {
    fn default() -> Thresholds {
        Thresholds {
            spike_window: 10,
            spike_sigmas: 5.0,
            spike_clear_rows: 100,
            runaway_window: 20,
            runaway_min_r2: 0.9,
            runaway_min_sigmas: 10.0,
            drift_sigmas: 3.0,
            drift_warning: 0.01,
            drift_critical: 0.1,
            temperature_tolerance: 5.0,
            pressure_tolerance: 50.0,
            off_target_sigmas: 3.0,
            off_target_window: 20,
            fluctuation_band: 0.999,
            stall_factor: 5.0,
            stall_minimum_seconds: 60.0,
            stall_after_seconds: None,
            skipped_warning_fraction: 0.01,
            nonfinite_clear_rows: 100,
        }
    }
}

/// Names of the keys `Thresholds::set` and the `[alerts]` table accept.
pub const THRESHOLD_KEYS: [&str; 19] = [
    "spike_window",
    "spike_sigmas",
    "spike_clear_rows",
    "runaway_window",
    "runaway_min_r2",
    "runaway_min_sigmas",
    "drift_sigmas",
    "drift_warning",
    "drift_critical",
    "temperature_tolerance",
    "pressure_tolerance",
    "off_target_sigmas",
    "off_target_window",
    "fluctuation_band",
    "stall_factor",
    "stall_minimum_seconds",
    "stall_after_seconds",
    "skipped_warning_fraction",
    "nonfinite_clear_rows",
];

fn count(key: &str, value: f64) -> Result<u64, String> {
    if value.is_finite() && value >= 0.0 && value.fract() == 0.0 && value <= 1e9 {
        Ok(value as u64)
    } else {
        Err(format!("{key} must be a whole number, got {value}"))
    }
}

fn positive(key: &str, value: f64) -> Result<f64, String> {
    if value.is_finite() && value > 0.0 {
        Ok(value)
    } else {
        Err(format!("{key} must be a positive number, got {value}"))
    }
}

impl Thresholds {
    /// Sets one threshold by its key (`KEY=VALUE` on the command line).
    pub fn set(&mut self, key: &str, value: f64) -> Result<(), String> {
        let k = key.trim().replace('-', "_");
        match k.as_str() {
            "spike_window" => self.spike_window = count(key, value)?.max(1) as usize,
            "spike_sigmas" => self.spike_sigmas = positive(key, value)?,
            "spike_clear_rows" => {
                self.spike_clear_rows = count(key, value)?.min(u32::MAX as u64) as u32
            }
            "runaway_window" => self.runaway_window = count(key, value)?.max(3) as usize,
            "runaway_min_r2" => {
                if !(0.0..=1.0).contains(&value) {
                    return Err(format!("{key} must lie between 0 and 1, got {value}"));
                }
                self.runaway_min_r2 = value
            }
            "runaway_min_sigmas" => self.runaway_min_sigmas = positive(key, value)?,
            "drift_sigmas" => self.drift_sigmas = positive(key, value)?,
            "drift_warning" => self.drift_warning = positive(key, value)?,
            "drift_critical" => self.drift_critical = positive(key, value)?,
            "temperature_tolerance" => {
                self.temperature_tolerance = non_negative(key, value)?;
            }
            "pressure_tolerance" => self.pressure_tolerance = non_negative(key, value)?,
            "off_target_sigmas" => self.off_target_sigmas = non_negative(key, value)?,
            "off_target_window" => self.off_target_window = count(key, value)?.max(2) as usize,
            "fluctuation_band" => {
                if !(value > 0.0 && value < 1.0) {
                    return Err(format!(
                        "{key} must lie strictly between 0 and 1, got {value}"
                    ));
                }
                self.fluctuation_band = value
            }
            "stall_factor" => self.stall_factor = positive(key, value)?,
            "stall_minimum_seconds" => self.stall_minimum_seconds = non_negative(key, value)?,
            "stall_after_seconds" => self.stall_after_seconds = Some(positive(key, value)?),
            "skipped_warning_fraction" => self.skipped_warning_fraction = non_negative(key, value)?,
            "nonfinite_clear_rows" => {
                self.nonfinite_clear_rows = count(key, value)?.min(u32::MAX as u64) as u32
            }
            _ => {
                return Err(format!(
                    "unknown alert threshold '{key}'; known: {}",
                    THRESHOLD_KEYS.join(", ")
                ))
            }
        }
        Ok(())
    }

    /// Checks relations between thresholds (warning below critical).
    pub fn validate(&self) -> Result<(), String> {
        if self.drift_warning > self.drift_critical {
            return Err(format!(
                "drift_warning ({}) must not exceed drift_critical ({})",
                self.drift_warning, self.drift_critical
            ));
        }
        Ok(())
    }

    /// The stall limit in seconds for a run whose rows arrive `median_gap_seconds` apart.
    pub fn stall_limit_seconds(&self, median_gap_seconds: Option<f64>) -> f64 {
        if let Some(s) = self.stall_after_seconds {
            return s;
        }
        let from_gap = median_gap_seconds
            .filter(|g| g.is_finite() && *g > 0.0)
            .map(|g| g * self.stall_factor)
            .unwrap_or(0.0);
        from_gap.max(self.stall_minimum_seconds)
    }
}

fn non_negative(key: &str, value: f64) -> Result<f64, String> {
    if value.is_finite() && value >= 0.0 {
        Ok(value)
    } else {
        Err(format!("{key} must be zero or more, got {value}"))
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_listed_key_can_be_set() {
        for key in THRESHOLD_KEYS {
            let mut t = Thresholds::default();
            let value = if key.contains("r2") || key.contains("band") || key.contains("fraction") {
                0.5
            } else {
                7.0
            };
            t.set(key, value).unwrap();
            assert_ne!(t, Thresholds::default(), "{key} did not change anything");
        }
    }

    #[test]
    fn unknown_key_and_bad_values_are_rejected() {
        let mut t = Thresholds::default();
        assert!(t.set("spike_size", 3.0).unwrap_err().contains("unknown"));
        assert!(t.set("spike_window", 2.5).is_err());
        assert!(t.set("drift_warning", -1.0).is_err());
        assert!(t.set("fluctuation_band", 1.0).is_err());
    }

    #[test]
    fn dashes_work_like_underscores() {
        let mut t = Thresholds::default();
        t.set("temperature-tolerance", 2.0).unwrap();
        assert_eq!(t.temperature_tolerance, 2.0);
    }

    #[test]
    fn stall_limit_is_five_gaps_but_at_least_a_minute() {
        // Contract: default 5x the median gap between rows, at least one minute.
        let t = Thresholds::default();
        assert_eq!(t.stall_limit_seconds(Some(2.0)), 60.0);
        assert_eq!(t.stall_limit_seconds(Some(30.0)), 150.0);
        assert_eq!(t.stall_limit_seconds(None), 60.0);
        let mut t = t;
        t.set("stall_after_seconds", 10.0).unwrap();
        assert_eq!(t.stall_limit_seconds(Some(30.0)), 10.0);
    }

    #[test]
    fn toml_table_rejects_unknown_keys() {
        let ok: Thresholds = toml::from_str("drift-warning = 0.02").unwrap();
        assert_eq!(ok.drift_warning, 0.02);
        assert_eq!(ok.spike_window, 10);
        assert!(toml::from_str::<Thresholds>("drift-warn = 0.02").is_err());
    }
}
