//! Throughput and ETAs from row arrival times (PRODUCT capability 3). Wall-clock
//! arrival times are passed in (seconds, any origin); simulated time in ps.
//!
//! - [`throughput`]: OLS slope of simulated time on arrival time over the most recent
//!   `window` rows (default 200). Engines flush output in bursts (many rows with one
//!   arrival time); the regression over several bursts is robust to that where a
//!   last-two-rows difference is not (common practice). Cost O(window).
//! - [`eta_seconds`]: wall time to reach a target simulated time at the current rate.
//! - [`precision_eta`]: wall time until the standard error of the mean reaches a target:
//!   `SEM² = σ̂²·g/N` (METHODS §0) ⇒ `N_needed = σ̂² g / SEM²_target`; the missing samples
//!   times the sample interval give simulated time, divided by the rate gives wall time.

use serde::{Deserialize, Serialize};

use super::finite;
use super::regression::ols;

/// Default number of recent rows in the throughput fit.
pub const DEFAULT_WINDOW: usize = 200;
/// ps per ns.
const PS_PER_NS: f64 = 1000.0;
/// Seconds per day.
const SECONDS_PER_DAY: f64 = 86_400.0;

/// Simulation speed.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Throughput {
    /// Simulated ps per wall-clock second.
    pub ps_per_second: f64,
    /// Simulated ns per day.
    pub ns_per_day: f64,
    /// Rows used.
    pub rows: usize,
}

/// Throughput from `(arrival seconds, simulated ps)` pairs over the last `window` rows.
/// `None` if lengths differ, fewer than 2 rows, arrival times all equal, or the rate is
/// not positive (stalled or going backwards).
pub fn throughput(arrival_s: &[f64], sim_ps: &[f64], window: usize) -> Option<Throughput> {
    if arrival_s.len() != sim_ps.len() {
        return None;
    }
    let start = arrival_s.len().saturating_sub(window.max(2));
    let fit = ols(arrival_s.get(start..)?, sim_ps.get(start..)?)?;
    let rate = fit.slope;
    if rate <= 0.0 {
        return None;
    }
    Some(Throughput {
        ps_per_second: rate,
        ns_per_day: finite(rate * SECONDS_PER_DAY / PS_PER_NS)?,
        rows: fit.n,
    })
}

/// Wall seconds until simulated time `target_ps` at `ps_per_second`; 0 if reached.
/// `None` if the rate is not positive.
pub fn eta_seconds(current_ps: f64, target_ps: f64, ps_per_second: f64) -> Option<f64> {
    if ps_per_second <= 0.0 {
        return None;
    }
    finite((target_ps - current_ps) / ps_per_second).map(|v| v.max(0.0))
}

/// Precision ETA.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct PrecisionEta {
    /// Samples needed in total for the target SEM.
    pub samples_needed: f64,
    /// Samples still missing (0 when reached).
    pub samples_missing: f64,
    /// Simulated ps still needed.
    pub sim_ps_missing: f64,
    /// Wall seconds until the target is reached at the current rate.
    pub wall_seconds: f64,
}

/// Wall time until the SEM reaches `target_sem`, from the population variance `var`,
/// inefficiency `g`, current sample count `n`, sample interval (ps) and rate (ps/s).
/// `None` for non-positive target, interval or rate, negative variance or `g < 1`.
pub fn precision_eta(
    var: f64,
    g: f64,
    n: usize,
    target_sem: f64,
    sample_interval_ps: f64,
    ps_per_second: f64,
) -> Option<PrecisionEta> {
    if target_sem <= 0.0
        || sample_interval_ps <= 0.0
        || ps_per_second <= 0.0
        || var < 0.0
        || g < 1.0
    {
        return None;
    }
    let needed = finite(var * g / (target_sem * target_sem))?;
    let missing = (needed - n as f64).max(0.0);
    let sim = missing * sample_interval_ps;
    Some(PrecisionEta {
        samples_needed: needed,
        samples_missing: missing,
        sim_ps_missing: sim,
        wall_seconds: finite(sim / ps_per_second)?,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn bursts_and_eta() {
        // 10 ps per burst of 5 rows every 2 s -> 5 ps/s = 432 ns/day (hand arithmetic).
        let mut arr = vec![];
        let mut sim = vec![];
        for b in 0..20 {
            for r in 0..5 {
                arr.push(2.0 * b as f64);
                sim.push(10.0 * b as f64 + 2.0 * r as f64);
            }
        }
        let t = throughput(&arr, &sim, 100).unwrap();
        assert!((t.ps_per_second - 5.0).abs() < 1e-9);
        assert!((t.ns_per_day - 432.0).abs() < 1e-6);
        assert!(throughput(&[1.0, 1.0], &[0.0, 1.0], 10).is_none());
        assert!(throughput(&[1.0, 2.0], &[1.0, 1.0], 10).is_none());
        assert_eq!(eta_seconds(100.0, 200.0, 5.0), Some(20.0));
        assert_eq!(eta_seconds(300.0, 200.0, 5.0), Some(0.0));
        // var 4, g 9, target 0.1 -> 3600 samples; 1000 done, 0.5 ps each, 5 ps/s -> 260 s.
        let p = precision_eta(4.0, 9.0, 1000, 0.1, 0.5, 5.0).unwrap();
        assert!((p.samples_needed - 3600.0).abs() < 1e-9);
        assert!((p.wall_seconds - 260.0).abs() < 1e-9);
    }
}
