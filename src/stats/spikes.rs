//! Robust location/scale and spike detection (METHODS §8).
//!
//! - [`median`], [`mad`] (raw), [`robust_sd`] = 1.4826·MAD (normal consistency,
//!   `1/Φ⁻¹(3/4)`; Rousseeuw & Croux, JASA 88, 1273 (1993); R `stats::mad`).
//! - [`hampel`]: Hampel moving-window identifier (Hampel, JASA 69, 383 (1974); Pearson,
//!   IEEE TCST 10, 55 (2002)): flag i if `|x_i − m_i| > t0·S_i`, with `m_i` the median and
//!   `S_i = 1.4826·MAD` of the window `[i − k, i + k]` (truncated at the ends). Defaults
//!   k = 10, t0 = 5 (METHODS §8: exactly the injected spikes on autocorrelated noise,
//!   common practice). Non-finite values are never in a window and are reported by
//!   [`crate::stats::non_finite_positions`], not as spikes. `S_i` is floored at
//!   `floor_fraction` (default 0.05) of the global robust SD (from at most ~10⁵ strided values) (or of the global SD when
//!   the global MAD is 0), so flat windows do not flag rounding noise (common practice).
//!
//! Cost: `median`/`mad` O(N) (selection); `hampel` keeps a sorted window: each step finds
//! the leaving and the entering value's places with branch-free counts over the window and
//! moves the values between them by one. The window MAD, an order statistic of two sorted
//! runs of deviations (O(log k)), is computed only for rows that an O(1) lower bound on it
//! (four order statistics, see `SortedWindow::mad_lower_bound`) cannot already clear: an
//! exact prefilter, the flagged rows are the same. O(N·k) worst case with a small
//! constant, O(N) for fixed k, memory O(N + k).

use serde::{Deserialize, Serialize};

use super::descriptive::std_dev;
use super::finite;

/// Normal-consistency constant of the MAD (METHODS §8).
pub const MAD_SCALE: f64 = 1.4826;

pub(crate) fn median_mut(v: &mut [f64]) -> Option<f64> {
    let n = v.len();
    if n == 0 {
        return None;
    }
    let mid = n / 2;
    let (lo, m, _) = v.select_nth_unstable_by(mid, f64::total_cmp);
    let m = *m;
    if n % 2 == 1 {
        return Some(m);
    }
    let below = lo.iter().copied().max_by(f64::total_cmp)?;
    Some(0.5 * (below + m))
}

/// Median and raw MAD of `v`, reordering `v` in place (two selections, no allocation).
/// The same values as [`median`] and [`mad`] of the original slice. `None` if empty.
pub(crate) fn median_and_mad_mut(v: &mut [f64]) -> Option<(f64, f64)> {
    let m = median_mut(v).and_then(finite)?;
    for a in v.iter_mut() {
        *a = (*a - m).abs();
    }
    let raw = median_mut(v).and_then(finite)?;
    Some((m, raw))
}

/// Median (mean of the two middle values for even N). `None` if empty. O(N).
pub fn median(x: &[f64]) -> Option<f64> {
    let mut v = x.to_vec();
    median_mut(&mut v).and_then(finite)
}

/// Raw median absolute deviation `median|x − median(x)|`. `None` if empty. O(N).
pub fn mad(x: &[f64]) -> Option<f64> {
    let m = median(x)?;
    let mut d: Vec<f64> = x.iter().map(|v| (v - m).abs()).collect();
    median_mut(&mut d).and_then(finite)
}

/// Robust SD `1.4826·MAD`. `None` if empty. O(N).
pub fn robust_sd(x: &[f64]) -> Option<f64> {
    mad(x).map(|m| MAD_SCALE * m)
}

/// Hampel identifier settings.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct HampelOptions {
    /// Half window `k` (window `2k + 1`).
    pub half_window: usize,
    /// Threshold `t0` in robust SDs.
    pub threshold: f64,
    /// Floor on `S_i` as a fraction of the global robust SD.
    pub floor_fraction: f64,
}

impl Default for HampelOptions {
    fn default() -> Self {
        Self {
            half_window: 10,
            threshold: 5.0,
            floor_fraction: 0.05,
        }
    }
}

/// Sorted multiset window.
struct SortedWindow {
    v: Vec<f64>,
}

impl SortedWindow {
    /// Number of elements `< x`: a branch-free count for small windows (no mispredicted
    /// binary-search branches), binary search for large ones.
    fn position(&self, x: f64) -> usize {
        if self.v.len() <= 64 {
            self.v.iter().map(|a| usize::from(*a < x)).sum()
        } else {
            self.v.partition_point(|a| *a < x)
        }
    }
    fn insert(&mut self, x: f64) {
        let pos = self.position(x);
        self.v.insert(pos, x);
    }
    fn remove(&mut self, x: f64) {
        let pos = self.position(x);
        if self.v.get(pos).is_some_and(|a| *a == x) {
            self.v.remove(pos);
        }
    }
    /// Replace one occurrence of `old` by `new`, keeping the order: the values between
    /// the old slot and the new value's place (both from branch-free counts) move by one.
    fn replace(&mut self, old: f64, new: f64) {
        let p = self.position(old);
        if self.v.get(p).is_none_or(|a| *a != old) {
            self.insert(new);
            return;
        }
        let q = self.position(new);
        let dest = if q > p {
            self.v.copy_within(p + 1..q, p);
            q - 1
        } else {
            self.v.copy_within(q..p, q + 1);
            q
        };
        if let Some(slot) = self.v.get_mut(dest) {
            *slot = new;
        }
    }

    /// A lower bound on the raw MAD of a full odd window (`n = 2h + 1`, median `v[h]`),
    /// from four order statistics in O(1): for `p + q = h + 1`, at most `p + q − 1 = h`
    /// values lie strictly between `v[h−p]` and `v[h+q]`, so fewer than `h + 1`
    /// deviations are below `min(m − v[h−p], v[h+q] − m)` and the MAD (the `(h+1)`-th
    /// smallest deviation) is at least that. Rounding is monotone, so the bound also holds
    /// for the computed values. `None` for other window sizes.
    fn mad_lower_bound(&self, m: f64) -> Option<f64> {
        let n = self.v.len();
        if n.is_multiple_of(2) || n < 3 {
            return None;
        }
        let h = n / 2;
        let p = h.div_ceil(2);
        let q = h + 1 - p;
        let at = |i: usize| self.v.get(i).copied();
        let a = (m - at(h - p)?).min(at(h + q)? - m);
        let b = (m - at(h - q)?).min(at(h + p)? - m);
        Some(a.max(b))
    }

    fn median(&self) -> Option<f64> {
        let n = self.v.len();
        if n == 0 {
            return None;
        }
        let hi = *self.v.get(n / 2)?;
        if n % 2 == 1 {
            Some(hi)
        } else {
            Some(0.5 * (self.v.get(n / 2 - 1)? + hi))
        }
    }
    /// Raw MAD around `m`. The deviations below `m` (read leftwards from the split) and
    /// above it (read rightwards) are two sorted runs; the middle order statistic(s) of
    /// their union come from the classic binary search over how many are taken from the
    /// left run: O(log k) per call.
    fn mad(&self, m: f64) -> Option<f64> {
        let n = self.v.len();
        if n == 0 {
            return None;
        }
        // First index with v ≥ m: for an odd window the median is v[n/2] itself, so walk
        // down over equal values; otherwise count.
        let split = if n % 2 == 1 {
            let mut s = n / 2;
            while s > 0 && self.v.get(s - 1).is_some_and(|a| *a >= m) {
                s -= 1;
            }
            s
        } else {
            self.position(m)
        };
        let hi = self.kth_deviation(m, split, n / 2)?;
        if n % 2 == 1 {
            Some(hi)
        } else {
            Some(0.5 * (self.kth_deviation(m, split, n / 2 - 1)? + hi))
        }
    }

    /// k-th smallest (0-based) of `|v_j − m|`, with `v[..split] < m ≤ v[split..]`.
    fn kth_deviation(&self, m: f64, split: usize, k: usize) -> Option<f64> {
        let nl = split;
        let nr = self.v.len() - split;
        let left = |j: usize| self.v.get(split.checked_sub(j + 1)?).map(|a| m - a);
        let right = |j: usize| self.v.get(split + j).map(|a| a - m);
        let take = k + 1;
        let mut lo = take.saturating_sub(nr);
        let mut hi = take.min(nl);
        while lo < hi {
            let i = (lo + hi) / 2;
            let j = take - i;
            match (right(j - 1), left(i)) {
                (Some(r), Some(l)) if r > l => lo = i + 1,
                _ => hi = i,
            }
        }
        let i = lo;
        let j = take - i;
        let a = if i > 0 { left(i - 1) } else { None };
        let b = if j > 0 { right(j - 1) } else { None };
        match (a, b) {
            (Some(a), Some(b)) => Some(a.max(b)),
            (a, b) => a.or(b),
        }
    }
}

/// Positions flagged by the Hampel identifier (ascending). Empty for empty input.
/// See the module doc for the rule, the floor and the cost.
pub fn hampel(x: &[f64], opts: &HampelOptions) -> Vec<usize> {
    let n = x.len();
    let mut flags = Vec::new();
    if n == 0 {
        return flags;
    }
    // Global scale for the floor, from at most ~100 000 evenly strided finite values
    // (a floor heuristic; keeps its cost O(N) with a small constant).
    let stride = (n / 100_000).max(1);
    let finite_vals: Vec<f64> = x
        .iter()
        .step_by(stride)
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    let global = robust_sd(&finite_vals).unwrap_or(0.0);
    let global = if global > 0.0 {
        global
    } else {
        std_dev(&finite_vals).unwrap_or(0.0)
    };
    let floor = opts.floor_fraction.max(0.0) * global;
    let k = opts.half_window;
    // The prefilter's monotonicity argument needs a non-negative threshold.
    let prefilter = opts.threshold >= 0.0;
    let mut w = SortedWindow {
        v: Vec::with_capacity(2 * k + 2),
    };
    for v in x.iter().take(k.saturating_add(1)) {
        if v.is_finite() {
            w.insert(*v);
        }
    }
    for (i, &xi) in x.iter().enumerate() {
        let old = if i > k {
            x.get(i - k - 1).copied().filter(|v| v.is_finite())
        } else {
            None
        };
        let new = if i > 0 {
            x.get(i + k).copied().filter(|v| v.is_finite())
        } else {
            None
        };
        match (old, new) {
            (Some(o), Some(nw)) => w.replace(o, nw),
            (Some(o), None) => w.remove(o),
            (None, Some(nw)) => w.insert(nw),
            (None, None) => {}
        }
        if !xi.is_finite() {
            continue;
        }
        let Some(m) = w.median() else { continue };
        let dev = (xi - m).abs();
        // Exact prefilter: a lower bound on the scale that already keeps the row inside
        // the band proves the row is not flagged (the scale only grows with the MAD), so
        // the O(log k) window MAD is computed only for rows that may be flagged.
        if prefilter {
            if let Some(low) = w.mad_lower_bound(m) {
                if dev <= opts.threshold * (MAD_SCALE * low).max(floor) {
                    continue;
                }
            }
        }
        let Some(raw) = w.mad(m) else { continue };
        let s = (MAD_SCALE * raw).max(floor);
        if dev > opts.threshold * s {
            flags.push(i);
        }
    }
    flags
}

#[cfg(test)]
mod tests {
    use super::*;

    fn brute(x: &[f64], k: usize, t0: f64) -> Vec<usize> {
        let n = x.len();
        let mut out = vec![];
        for i in 0..n {
            let lo = i.saturating_sub(k);
            let hi = (i + k + 1).min(n);
            let w: Vec<f64> = x[lo..hi].to_vec();
            let m = median(&w).unwrap();
            let s = MAD_SCALE * mad(&w).unwrap();
            if (x[i] - m).abs() > t0 * s {
                out.push(i);
            }
        }
        out
    }

    /// The definition, window by window, with the module's floor and non-finite rules.
    fn brute_with_floor(x: &[f64], o: &HampelOptions) -> Vec<usize> {
        let finite_vals: Vec<f64> = x.iter().copied().filter(|v| v.is_finite()).collect();
        let global = robust_sd(&finite_vals).unwrap_or(0.0);
        let global = if global > 0.0 {
            global
        } else {
            std_dev(&finite_vals).unwrap_or(0.0)
        };
        let floor = o.floor_fraction.max(0.0) * global;
        let k = o.half_window;
        let mut out = vec![];
        for (i, xi) in x.iter().enumerate() {
            if !xi.is_finite() {
                continue;
            }
            let w: Vec<f64> = x[i.saturating_sub(k)..(i + k + 1).min(x.len())]
                .iter()
                .copied()
                .filter(|v| v.is_finite())
                .collect();
            let m = median(&w).unwrap();
            let s = (MAD_SCALE * mad(&w).unwrap()).max(floor);
            if (xi - m).abs() > o.threshold * s {
                out.push(i);
            }
        }
        out
    }

    #[test]
    fn prefilter_keeps_the_exact_flags_on_varied_series() {
        // The O(1) MAD lower bound only skips rows the exact rule would not flag: same
        // flags as the definition on correlated noise, trends, steps, constant stretches,
        // coarse rounding (many ties), changing scale, spikes, NaN and ±inf.
        let mut state = 0x2545_F491_4F6C_DD1Du64;
        let mut u = move || {
            state ^= state << 13;
            state ^= state >> 7;
            state ^= state << 17;
            (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5
        };
        let mut ar = 0.0;
        let x: Vec<f64> = (0..6000)
            .map(|i| {
                ar = 0.9 * ar + u();
                let base = match (i / 500) % 6 {
                    0 => ar,
                    1 => 0.01 * i as f64 + ar,
                    2 => (if i % 500 < 250 { 5.0 } else { -5.0 }) + 0.1 * ar,
                    3 => 2.0,
                    4 => (ar * 4.0).round() / 4.0,
                    _ => ar * (1.0 + (i % 7) as f64),
                };
                let spike = if i % 97 == 0 { 40.0 * u() } else { 0.0 };
                let bad = match i % 1231 {
                    0 => f64::NAN,
                    1 => f64::INFINITY,
                    2 => f64::NEG_INFINITY,
                    _ => 0.0,
                };
                base + spike + bad
            })
            .collect();
        let mut flagged_somewhere = 0;
        for k in [1, 2, 3, 5, 10, 20] {
            for threshold in [0.0, 1.0, 3.0, 5.0] {
                for floor_fraction in [0.0, 0.05] {
                    let o = HampelOptions {
                        half_window: k,
                        threshold,
                        floor_fraction,
                    };
                    let got = hampel(&x, &o);
                    assert_eq!(got, brute_with_floor(&x, &o), "{o:?}");
                    flagged_somewhere += got.len();
                }
            }
        }
        assert!(flagged_somewhere > 0);
    }

    #[test]
    fn mad_lower_bound_is_below_the_mad() {
        let mut state = 7u64;
        for n in [3usize, 5, 9, 21, 41] {
            for round in 0..200 {
                let mut v: Vec<f64> = (0..n)
                    .map(|_| {
                        state = state
                            .wrapping_mul(6364136223846793005)
                            .wrapping_add(1442695040888963407);
                        let r = (state >> 33) as f64 / (1u64 << 31) as f64;
                        if round % 3 == 0 {
                            (r * 4.0).floor()
                        } else {
                            r * r * 100.0
                        }
                    })
                    .collect();
                v.sort_by(f64::total_cmp);
                let w = SortedWindow { v };
                let m = w.median().unwrap();
                let low = w.mad_lower_bound(m).unwrap();
                assert!(low <= w.mad(m).unwrap(), "n = {n}");
            }
        }
        assert_eq!(
            SortedWindow { v: vec![1.0, 2.0] }.mad_lower_bound(1.5),
            None
        );
    }

    #[test]
    fn sliding_matches_brute_force() {
        // Definition check: sorted-window Hampel equals recomputing each window.
        let x: Vec<f64> = (0..300)
            .map(|i| ((i * 7919) % 101) as f64 / 10.0 + if i % 37 == 0 { 30.0 } else { 0.0 })
            .collect();
        for k in [1, 2, 5, 10] {
            let o = HampelOptions {
                half_window: k,
                threshold: 3.0,
                floor_fraction: 0.0,
            };
            assert_eq!(hampel(&x, &o), brute(&x, k, 3.0), "k = {k}");
        }
        assert!(hampel(&[], &HampelOptions::default()).is_empty());
        assert_eq!(median(&[]), None);
        assert_eq!(median(&[3.0, 1.0, 2.0, 10.0]), Some(2.5));
        assert_eq!(mad(&[1.0, 2.0, 3.0, 4.0, 100.0]), Some(1.0));
    }
}
