//! Ordinary least squares for one regressor, with centred sums (METHODS §4.1), and the
//! no-intercept fit (NIST StRD NoInt1/NoInt2 model `y = B1 x`).
//!
//! `b = Σ(t − t̄)(y − ȳ)/S_tt`, `a = ȳ − b t̄`, `s² = Σ r²/(N − 2)`,
//! `SE(b) = s/sqrt(S_tt)`, `SE(a) = s·sqrt(1/N + t̄²/S_tt)`, `R² = 1 − RSS/S_yy`
//! (standard OLS formulas; checked against NIST StRD Norris). Cost O(N), two passes.

use serde::{Deserialize, Serialize};

use super::descriptive::mean;
use super::finite;

/// Straight-line fit `y = intercept + slope·t`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct LinearFit {
    /// Number of points.
    pub n: usize,
    /// Intercept `a`.
    pub intercept: f64,
    /// Slope `b` (units of y per unit of t).
    pub slope: f64,
    /// Standard error of the intercept (`None` when N ≤ 2).
    pub se_intercept: Option<f64>,
    /// OLS standard error of the slope, independent residuals assumed (`None` when N ≤ 2).
    pub se_slope: Option<f64>,
    /// Residual standard deviation `s` (`None` when N ≤ 2).
    pub residual_sd: Option<f64>,
    /// Coefficient of determination (`None` when y is constant).
    pub r_squared: Option<f64>,
    /// Mean of t (for residuals and corrections).
    pub t_mean: f64,
    /// `S_tt = Σ(t − t̄)²`.
    pub s_tt: f64,
}

impl LinearFit {
    /// Fitted value at `t`.
    pub fn predict(&self, t: f64) -> f64 {
        self.intercept + self.slope * t
    }

    /// Residuals `y_i − ŷ_i` (empty if lengths differ). Cost O(N).
    pub fn residuals(&self, t: &[f64], y: &[f64]) -> Vec<f64> {
        if t.len() != y.len() {
            return Vec::new();
        }
        t.iter()
            .zip(y)
            .map(|(ti, yi)| yi - self.predict(*ti))
            .collect()
    }

    /// Residuals of `y` on its row numbers 0, 1, …, N−1 (a fit of [`ols_on_rows`]).
    pub fn residuals_on_rows(&self, y: &[f64]) -> Vec<f64> {
        y.iter()
            .enumerate()
            .map(|(i, yi)| yi - self.predict(i as f64))
            .collect()
    }
}

/// OLS fit of `y` on `t`. `None` if the lengths differ, N < 2, `t` is constant or the
/// result is not finite. Cost O(N).
pub fn ols(t: &[f64], y: &[f64]) -> Option<LinearFit> {
    if t.len() != y.len() || t.len() < 2 {
        return None;
    }
    ols_from(t.iter().copied(), mean(t)?, y)
}

/// [`ols`] of `y` on its row numbers 0, 1, …, N−1, without a column of them: the same
/// fit to the last bit (their mean, (N−1)/2, is exact in floating point).
pub fn ols_on_rows(y: &[f64]) -> Option<LinearFit> {
    let n = y.len();
    if n < 2 {
        return None;
    }
    ols_from((0..n).map(|i| i as f64), (n - 1) as f64 / 2.0, y)
}

/// The fit of `y` on the abscissas `t` (as many as `y`), whose mean is `tm`.
fn ols_from(t: impl Iterator<Item = f64> + Clone, tm: f64, y: &[f64]) -> Option<LinearFit> {
    let n = y.len();
    let ym = mean(y)?;
    let (mut stt, mut sty, mut syy) = (0.0, 0.0, 0.0);
    for (ti, yi) in t.clone().zip(y) {
        let dt = ti - tm;
        let dy = yi - ym;
        stt += dt * dt;
        sty += dt * dy;
        syy += dy * dy;
    }
    if stt <= 0.0 || !stt.is_finite() {
        return None;
    }
    let slope = finite(sty / stt)?;
    let intercept = finite(ym - slope * tm)?;
    let rss: f64 = t
        .zip(y)
        .map(|(ti, yi)| {
            let r = (yi - ym) - slope * (ti - tm);
            r * r
        })
        .sum();
    let nf = n as f64;
    let (residual_sd, se_slope, se_intercept) = if n > 2 {
        let s = (rss / (nf - 2.0)).sqrt();
        (
            finite(s),
            finite(s / stt.sqrt()),
            finite(s * (1.0 / nf + tm * tm / stt).sqrt()),
        )
    } else {
        (None, None, None)
    };
    let r_squared = if syy > 0.0 {
        finite(1.0 - rss / syy)
    } else {
        None
    };
    Some(LinearFit {
        n,
        intercept,
        slope,
        se_intercept,
        se_slope,
        residual_sd,
        r_squared,
        t_mean: tm,
        s_tt: stt,
    })
}

/// Fit through the origin, `y = slope·x`.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct NoInterceptFit {
    /// Number of points.
    pub n: usize,
    /// Slope `B1 = Σxy/Σx²`.
    pub slope: f64,
    /// Standard error `s/sqrt(Σx²)`, `s² = RSS/(N − 1)` (`None` when N < 2).
    pub se_slope: Option<f64>,
    /// Residual standard deviation (`None` when N < 2).
    pub residual_sd: Option<f64>,
    /// Uncentred R² `1 − RSS/Σy²` (NIST convention for models without intercept).
    pub r_squared: Option<f64>,
}

/// Least-squares fit through the origin (NIST StRD NoInt1/NoInt2 model). `None` if the
/// lengths differ, the slice is empty or `x` is all zero. Cost O(N).
pub fn ols_no_intercept(x: &[f64], y: &[f64]) -> Option<NoInterceptFit> {
    let n = x.len();
    if n != y.len() || n == 0 {
        return None;
    }
    let sxx: f64 = x.iter().map(|v| v * v).sum();
    let sxy: f64 = x.iter().zip(y).map(|(a, b)| a * b).sum();
    let syy: f64 = y.iter().map(|v| v * v).sum();
    if sxx <= 0.0 || !sxx.is_finite() {
        return None;
    }
    let slope = finite(sxy / sxx)?;
    let rss: f64 = x
        .iter()
        .zip(y)
        .map(|(a, b)| {
            let r = b - slope * a;
            r * r
        })
        .sum();
    let (residual_sd, se_slope) = if n >= 2 {
        let s = (rss / (n - 1) as f64).sqrt();
        (finite(s), finite(s / sxx.sqrt()))
    } else {
        (None, None)
    };
    let r_squared = if syy > 0.0 {
        finite(1.0 - rss / syy)
    } else {
        None
    };
    Some(NoInterceptFit {
        n,
        slope,
        se_slope,
        residual_sd,
        r_squared,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// On row numbers the fit needs no column of them: bit for bit the fit on the column.
    #[test]
    fn the_fit_on_row_numbers_is_the_fit_on_a_column_of_them() {
        for n in [2usize, 3, 1001, 4096, 100_003] {
            let y: Vec<f64> = (0..n)
                .map(|i| ((i as f64 * 0.618_033_988_749_895).fract() - 0.5) * 3.0 + 1e-3 * i as f64)
                .collect();
            let rows: Vec<f64> = (0..n).map(|i| i as f64).collect();
            let (a, b) = (ols(&rows, &y).unwrap(), ols_on_rows(&y).unwrap());
            assert_eq!(a, b, "n = {n}");
            assert_eq!(a.residuals(&rows, &y), b.residuals_on_rows(&y));
        }
        assert!(ols_on_rows(&[1.0]).is_none());
    }

    #[test]
    fn exact_line_and_edges() {
        // y = 2 + 3t exactly: slope 3, intercept 2, zero residual (hand arithmetic).
        let t = [0.0, 1.0, 2.0, 3.0];
        let y = [2.0, 5.0, 8.0, 11.0];
        let f = ols(&t, &y).unwrap();
        assert!((f.slope - 3.0).abs() < 1e-14 && (f.intercept - 2.0).abs() < 1e-14);
        assert_eq!(f.residual_sd, Some(0.0));
        assert!(ols(&[1.0, 1.0], &[1.0, 2.0]).is_none());
        assert!(ols(&[1.0], &[1.0]).is_none());
        assert!(ols(&[1.0, 2.0], &[1.0]).is_none());
        assert_eq!(ols(&[1.0, 2.0], &[1.0, 2.0]).unwrap().se_slope, None);
        assert!(ols_no_intercept(&[0.0], &[1.0]).is_none());
    }
}
