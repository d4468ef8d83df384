//! Stage boundaries inside one segment (pure, on slices): a change of the output interval,
//! and a volume (or density) that starts or stops varying.
//!
//! - **Output interval.** The differences of the step counter (else of the time) are
//!   grouped into runs of equal spacing (relative tolerance [`INTERVAL_TOLERANCE`]); two
//!   neighbouring runs of at least [`MIN_INTERVAL_ROWS`] differences each with different
//!   spacings mark a boundary at the first row written at the new spacing. A single long
//!   gap between rows at the same spacing is a gap, not a new interval.
//! - **Ensemble.** A volume or density that holds exactly the same value for at least
//!   [`MIN_CONSTANT_ROWS`] rows is under constant volume; the first row that differs starts
//!   a new stage (constant pressure starts), and a constant run after a varying part starts
//!   one too. Printed values of a varying volume hardly ever repeat that long (common
//!   practice, no source).
//! - **Columns present.** In rows that carry their own names (JSON objects, `name=value`
//!   pairs) a quantity may be written only from some row on (the pressure once the barostat
//!   is on) or only up to some row: a column without a value in its first (or last)
//!   [`MIN_CONSTANT_ROWS`] rows or more, and in more than [`PRESENCE_GAP_FACTOR`] times its
//!   usual gap between values, starts a stage where its values start (or after they stop). A
//!   quantity written every k-th row only is no boundary.

/// Relative tolerance on equal spacings (printed times carry rounding).
pub const INTERVAL_TOLERANCE: f64 = 1e-3;
/// Fewest differences at one spacing for it to count as an output interval (common
/// practice, no source).
pub const MIN_INTERVAL_ROWS: usize = 5;
/// Fewest rows of an exactly constant volume to call it constant (common practice, no
/// source).
pub const MIN_CONSTANT_ROWS: usize = 20;

/// How many times its median gap between values a column's leading (or trailing) stretch
/// without values must be to count as not written there (ours).
pub const PRESENCE_GAP_FACTOR: usize = 4;

/// Rows at which column `v` starts to be written after a leading stretch without values,
/// or after which it is no longer written ([`crate::table::ABSENT`] marks a row without a
/// value).
pub fn presence_changes(v: &[f64]) -> Vec<usize> {
    let present: Vec<usize> = (0..v.len())
        .filter(|&i| v.get(i).is_some_and(|x| !crate::table::is_absent(*x)))
        .collect();
    let (Some(&first), Some(&last)) = (present.first(), present.last()) else {
        return Vec::new();
    };
    let mut gaps: Vec<usize> = present.windows(2).map(|w| w[1] - w[0]).collect();
    gaps.sort_unstable();
    let usual = gaps.get(gaps.len() / 2).copied().unwrap_or(1).max(1);
    let long =
        |stretch: usize| stretch >= MIN_CONSTANT_ROWS && stretch > PRESENCE_GAP_FACTOR * usual;
    let mut out = Vec::new();
    if long(first) {
        out.push(first);
    }
    let after = v.len() - 1 - last;
    if long(after) {
        out.push(last + 1);
    }
    out
}

/// Rows at which the output interval of `counter` (step or time) changes.
pub fn interval_changes(counter: &[f64]) -> Vec<usize> {
    // Runs of equal differences: (first difference index, length, spacing).
    let mut runs: Vec<(usize, usize, f64)> = Vec::new();
    for (i, w) in counter.windows(2).enumerate() {
        let d = w[1] - w[0];
        if !(d.is_finite() && d > 0.0) {
            runs.push((i, 1, f64::NAN));
            continue;
        }
        match runs.last_mut() {
            Some((_, len, s)) if (d - *s).abs() <= INTERVAL_TOLERANCE * s.abs() => *len += 1,
            _ => runs.push((i, 1, d)),
        }
    }
    let mut out = Vec::new();
    let long: Vec<&(usize, usize, f64)> = runs
        .iter()
        .filter(|(_, len, s)| *len >= MIN_INTERVAL_ROWS && s.is_finite())
        .collect();
    for pair in long.windows(2) {
        let (&&(_, _, a), &&(start, _, b)) = (&pair[0], &pair[1]);
        if (a - b).abs() > INTERVAL_TOLERANCE * a.abs().max(b.abs()) {
            // Difference `start` is between rows start and start + 1: row start + 1 is the
            // first written at the new spacing.
            out.push(start + 1);
        }
    }
    out
}

/// What changed at an ensemble boundary.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum VolumeChange {
    /// A constant volume starts to vary.
    StartsToVary,
    /// A varying volume becomes constant.
    BecomesConstant,
}

/// Rows at which a volume (or density) column starts or stops varying.
pub fn volume_changes(v: &[f64]) -> Vec<(usize, VolumeChange)> {
    // Maximal runs of exactly equal values.
    let mut runs: Vec<(usize, usize)> = Vec::new(); // (start, len)
    let mut i = 0;
    while i < v.len() {
        let mut j = i + 1;
        while j < v.len() && v.get(j) == v.get(i) {
            j += 1;
        }
        if j - i >= MIN_CONSTANT_ROWS {
            runs.push((i, j - i));
        }
        i = j;
    }
    let mut out = Vec::new();
    for (start, len) in runs {
        if start > 0 {
            out.push((start, VolumeChange::BecomesConstant));
        }
        if start + len < v.len() {
            out.push((start + len, VolumeChange::StartsToVary));
        }
    }
    out
}

/// True when `v` holds one value from start to end (at least two rows).
pub fn is_constant(v: &[f64]) -> bool {
    v.len() >= 2 && v.iter().all(|x| Some(x) == v.first())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn interval_change_row() {
        // Planted: every 100 steps up to row 50, every 500 after.
        let mut s: Vec<f64> = (0..=50).map(|i| i as f64 * 100.0).collect();
        s.extend((1..=40).map(|i| 5000.0 + i as f64 * 500.0));
        assert_eq!(interval_changes(&s), vec![51]);
    }

    #[test]
    fn a_gap_is_not_an_interval_change() {
        let mut s: Vec<f64> = (0..=50).map(|i| i as f64 * 10.0).collect();
        s.extend((0..50).map(|i| 10_000.0 + i as f64 * 10.0));
        assert!(interval_changes(&s).is_empty());
    }

    #[test]
    fn rounded_times_keep_one_interval() {
        let t: Vec<f64> = (0..300)
            .map(|i| (i as f64 * 0.002 * 1e3).round() / 1e3)
            .collect();
        assert!(interval_changes(&t).is_empty());
    }

    #[test]
    fn volume_starts_to_vary() {
        let mut v = vec![27.0; 120];
        v.extend((0..200).map(|i| 27.0 + 0.01 * ((i * 37 % 11) as f64 - 5.0)));
        assert_eq!(volume_changes(&v), vec![(120, VolumeChange::StartsToVary)]);
    }

    /// Planted: a pressure written from row 300 on (and every row after), a potential
    /// written up to row 499 of 700; a pressure written only every 50th row, from row 49,
    /// is no boundary.
    #[test]
    fn a_column_written_only_from_or_up_to_a_row() {
        use crate::table::ABSENT;
        let from: Vec<f64> = (0..700)
            .map(|i| {
                if i < 300 {
                    ABSENT
                } else {
                    1.0 + (i % 7) as f64
                }
            })
            .collect();
        assert_eq!(presence_changes(&from), vec![300]);
        let until: Vec<f64> = (0..700)
            .map(|i| {
                if i < 500 {
                    -4.0e4 + (i % 5) as f64
                } else {
                    ABSENT
                }
            })
            .collect();
        assert_eq!(presence_changes(&until), vec![500]);
        let sparse: Vec<f64> = (0..700)
            .map(|i| if i % 50 == 49 { 1.0 } else { ABSENT })
            .collect();
        assert!(presence_changes(&sparse).is_empty());
        assert!(presence_changes(&[ABSENT; 40]).is_empty());
        let every_row: Vec<f64> = (0..700).map(|i| i as f64).collect();
        assert!(presence_changes(&every_row).is_empty());
    }

    #[test]
    fn varying_volume_has_no_boundary() {
        let v: Vec<f64> = (0..500)
            .map(|i| 27.0 + 0.01 * ((i * 37 % 11) as f64 - 5.0))
            .collect();
        assert!(volume_changes(&v).is_empty());
    }
}
