//! Heating ramps: a temperature that rises linearly and then holds (pure, on slices).
//!
//! Model: `T(t) = a + b·min(t, τ)`, a line up to the break time `τ` and a plateau after it
//! (a continuous two-piece, "hinge", regression). For each candidate break row `k` the
//! regressor `x = min(t, t_k)` gives an ordinary least-squares fit whose sums come from
//! prefix sums, so every break is tried in O(1) and the whole search is O(n) (least squares
//! on a piecewise-linear regressor with a known break: Seber & Wild, Nonlinear Regression,
//! Wiley 1989, ch. 9 "multiphase and spline regressions"; from memory). The break with the
//! smallest residual sum of squares wins.
//!
//! A ramp is accepted as heating when (common practice, no source):
//! - it rises by at least [`MIN_RISE_K`] over at least [`MIN_RAMP_ROWS`] rows;
//! - the rise is at least [`MIN_RISE_NOISE`] times the residual SD (it is no fluctuation);
//! - the ramp part is straight: its residual RMS is at most [`MAX_RAMP_LACK_OF_FIT`] times
//!   the plateau's (a thermostat relaxing from a cold start is a curve, not a ramp).

/// Smallest rise of a heating ramp, K (common practice, no source).
pub const MIN_RISE_K: f64 = 20.0;
/// Fewest rows on a ramp (common practice, no source).
pub const MIN_RAMP_ROWS: usize = 10;
/// Fewest rows after a ramp for its end to start a new stage (common practice, no source).
pub const MIN_PLATEAU_ROWS: usize = 20;
/// Rise over residual SD a ramp needs (common practice, no source).
pub const MIN_RISE_NOISE: f64 = 10.0;
/// Largest ratio of the ramp's residual RMS to the plateau's (common practice, no source).
pub const MAX_RAMP_LACK_OF_FIT: f64 = 2.0;

/// A fitted ramp.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Ramp {
    /// First row after the ramp (the plateau's first row); the row count when the ramp
    /// lasts to the end.
    pub end_row: usize,
    /// Time and fitted temperature at the start of the ramp.
    pub start: (f64, f64),
    /// Time and fitted temperature where the ramp ends (the break).
    pub end: (f64, f64),
    /// Slope, K per ps.
    pub slope_per_ps: f64,
    /// SD of the residuals around the fit, K.
    pub residual_sd: f64,
}

impl Ramp {
    /// Total rise of the ramp, K.
    pub fn rise(&self) -> f64 {
        self.end.1 - self.start.1
    }

    /// The fitted temperature at time `t` (held after the end).
    pub fn at(&self, t: f64) -> f64 {
        self.start.1 + self.slope_per_ps * (t.min(self.end.0) - self.start.0).max(0.0)
    }
}

struct Fit {
    a: f64,
    b: f64,
    sse: f64,
}

/// Least squares of `y` on `x` from the sums.
fn ols_sums(n: f64, sx: f64, sxx: f64, sy: f64, sxy: f64, syy: f64) -> Option<Fit> {
    let sxx_c = sxx - sx * sx / n;
    if sxx_c.is_nan() || sxx_c <= 0.0 {
        return None;
    }
    let sxy_c = sxy - sx * sy / n;
    let syy_c = syy - sy * sy / n;
    let b = sxy_c / sxx_c;
    let a = (sy - b * sx) / n;
    let sse = (syy_c - b * sxy_c).max(0.0);
    Some(Fit { a, b, sse })
}

/// The best hinge fit of `temp` on `time` (both finite, same length; `None` otherwise or
/// under `MIN_RAMP_ROWS + 2` rows). The break row runs over every row from
/// [`MIN_RAMP_ROWS`] to the last (a break at the last row is a ramp to the end).
pub fn fit_hinge(time: &[f64], temp: &[f64]) -> Option<Ramp> {
    let n = time.len();
    if n != temp.len() || n < MIN_RAMP_ROWS + 2 {
        return None;
    }
    if time.iter().chain(temp).any(|v| !v.is_finite()) {
        return None;
    }
    // Centre for numerical stability.
    let t0 = time.first().copied()?;
    let y0 = temp.iter().sum::<f64>() / n as f64;
    let syy: f64 = temp.iter().map(|v| (v - y0) * (v - y0)).sum();
    let sy_all: f64 = temp.iter().map(|v| v - y0).sum();
    let nf = n as f64;
    // Sums over rows < k, grown one row at a time (no copy of the columns: a whole-file
    // report plans the stages of millions of rows).
    let (mut st, mut stt, mut sty, mut sy) = (0.0, 0.0, 0.0, 0.0);
    let mut best: Option<(usize, Fit)> = None;
    // Break at row k: rows < k on the line, rows >= k at x = t_k (the plateau).
    for (k, (&tk, &yk)) in time.iter().zip(temp).enumerate() {
        let (tau, yi) = (tk - t0, yk - y0);
        if k >= MIN_RAMP_ROWS {
            let after = (n - k) as f64;
            let sx = st + tau * after;
            let sxx = stt + tau * tau * after;
            let sxy = sty + tau * (sy_all - sy);
            if let Some(fit) = ols_sums(nf, sx, sxx, sy_all, sxy, syy) {
                if best.as_ref().is_none_or(|(_, b)| fit.sse < b.sse) {
                    best = Some((k, fit));
                }
            }
        }
        st += tau;
        stt += tau * tau;
        sty += tau * yi;
        sy += yi;
    }
    // A ramp to the very end: the plain line.
    let end_fit = ols_sums(nf, st, stt, sy_all, sty, syy);
    let (k, fit) = match (best, end_fit) {
        (Some((k, f)), Some(e)) if f.sse <= e.sse => (k, f),
        (_, Some(e)) => (n, e),
        (Some((k, f)), None) => (k, f),
        (None, None) => return None,
    };
    let tau = if k < n {
        time.get(k).copied()? - t0
    } else {
        time.last().copied()? - t0
    };
    let resid_sd = (fit.sse / (nf - 3.0).max(1.0)).sqrt();
    Some(Ramp {
        end_row: k,
        start: (t0, fit.a + y0),
        end: (tau + t0, fit.a + fit.b * tau + y0),
        slope_per_ps: fit.b,
        residual_sd: resid_sd,
    })
}

/// Root mean square of `temp − ramp(time)` over `rows`.
fn rms_residual(time: &[f64], temp: &[f64], ramp: &Ramp, rows: std::ops::Range<usize>) -> f64 {
    let (mut s, mut c) = (0.0, 0usize);
    for i in rows {
        if let (Some(&t), Some(&y)) = (time.get(i), temp.get(i)) {
            let r = y - ramp.at(t);
            s += r * r;
            c += 1;
        }
    }
    if c == 0 {
        0.0
    } else {
        (s / c as f64).sqrt()
    }
}

/// A heating ramp in `temp` (over `time`), by the rules of the module documentation.
pub fn find_heating(time: &[f64], temp: &[f64]) -> Option<Ramp> {
    let ramp = fit_hinge(time, temp)?;
    let n = temp.len();
    if ramp.end_row < MIN_RAMP_ROWS || ramp.rise() < MIN_RISE_K {
        return None;
    }
    if ramp.rise() < MIN_RISE_NOISE * ramp.residual_sd {
        return None;
    }
    if ramp.end_row < n {
        let on_ramp = rms_residual(time, temp, &ramp, 0..ramp.end_row);
        let plateau = rms_residual(time, temp, &ramp, ramp.end_row..n);
        // The plateau's noise, floored by the overall residual so a flat, quiet plateau
        // does not reject a clean ramp.
        let reference = plateau.max(ramp.residual_sd * 0.5);
        if on_ramp > MAX_RAMP_LACK_OF_FIT * reference {
            return None;
        }
    }
    Some(ramp)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn noise(i: usize) -> f64 {
        // Deterministic pseudo-noise in [-1, 1] (a Weyl sequence).
        ((i as f64 * 0.618_033_988_749_895).fract() - 0.5) * 2.0
    }

    /// Planted truth: a ramp from 10 K to 300 K over 50 ps then a hold; the end is found
    /// within two rows (rows every 0.5 ps).
    #[test]
    fn finds_the_end_of_a_planted_ramp() {
        let time: Vec<f64> = (0..300).map(|i| i as f64 * 0.5).collect();
        let temp: Vec<f64> = time
            .iter()
            .enumerate()
            .map(|(i, &t)| 10.0 + 5.8 * t.min(50.0) + 3.0 * noise(i))
            .collect();
        let r = find_heating(&time, &temp).unwrap();
        assert!((r.end_row as i64 - 100).abs() <= 2, "{r:?}");
        assert!((r.end.0 - 50.0).abs() <= 1.0);
        assert!((r.end.1 - 300.0).abs() < 3.0);
        assert!((r.start.1 - 10.0).abs() < 3.0);
    }

    #[test]
    fn a_ramp_to_the_end_has_no_plateau() {
        let time: Vec<f64> = (0..200).map(|i| i as f64).collect();
        let temp: Vec<f64> = (0..200).map(|i| 50.0 + i as f64 + noise(i)).collect();
        let r = find_heating(&time, &temp).unwrap();
        assert!(r.end_row >= 195, "{r:?}");
    }

    #[test]
    fn a_steady_temperature_is_no_ramp() {
        let time: Vec<f64> = (0..400).map(|i| i as f64).collect();
        let temp: Vec<f64> = (0..400).map(|i| 300.0 + 4.0 * noise(i)).collect();
        assert!(find_heating(&time, &temp).is_none());
    }

    /// A thermostat relaxing exponentially from a cold start is a curve, not a ramp.
    #[test]
    fn an_exponential_relaxation_is_no_ramp() {
        let time: Vec<f64> = (0..400).map(|i| i as f64).collect();
        let temp: Vec<f64> = (0..400)
            .map(|i| 300.0 - 290.0 * (-(i as f64) / 15.0).exp() + noise(i))
            .collect();
        assert!(find_heating(&time, &temp).is_none());
    }
}
