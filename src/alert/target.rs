//! Targets for temperature and pressure: one value, or a schedule of `(time, value)` points
//! (linear between points, held before the first and after the last), as the Contract's
//! `--target-temperature 0ps=10K,50ps=300K` syntax describes. Parsing the option text is the
//! units module's job; this type only evaluates the target.

/// A target value or schedule, in canonical units (time in ps).
#[derive(Debug, Clone, PartialEq)]
pub struct Target {
    /// Points sorted by time; never empty.
    points: Vec<(f64, f64)>,
}

impl Target {
    /// A constant target.
    pub fn constant(value: f64) -> Target {
        Target {
            points: vec![(0.0, value)],
        }
    }

    /// A schedule from `(time_ps, value)` points. Returns `None` when there is no point or a
    /// time or value is not finite. Points are sorted by time.
    pub fn schedule(mut points: Vec<(f64, f64)>) -> Option<Target> {
        if points.is_empty() || points.iter().any(|(t, v)| !t.is_finite() || !v.is_finite()) {
            return None;
        }
        points.sort_by(|a, b| a.0.total_cmp(&b.0));
        Some(Target { points })
    }

    /// The schedule's points.
    pub fn points(&self) -> &[(f64, f64)] {
        &self.points
    }

    /// True when the target changes with time (more than one distinct value).
    pub fn is_schedule(&self) -> bool {
        self.points.windows(2).any(|w| match w {
            [a, b] => a.1 != b.1,
            _ => false,
        })
    }

    /// The target at simulated time `t` (ps): linear between points, held outside them.
    pub fn value_at(&self, t: f64) -> f64 {
        let (first, last) = match (self.points.first(), self.points.last()) {
            (Some(f), Some(l)) => (*f, *l),
            _ => return f64::NAN,
        };
        if t <= first.0 {
            return first.1;
        }
        if t >= last.0 {
            return last.1;
        }
        for w in self.points.windows(2) {
            if let [(t0, v0), (t1, v1)] = *w {
                if t >= t0 && t <= t1 {
                    if t1 == t0 {
                        return v1;
                    }
                    return v0 + (v1 - v0) * (t - t0) / (t1 - t0);
                }
            }
        }
        last.1
    }

    /// Rate of change of the target at time `t` (value per ps; 0 outside the ramps).
    pub fn slope_at(&self, t: f64) -> f64 {
        for w in self.points.windows(2) {
            if let [(t0, v0), (t1, v1)] = *w {
                if t >= t0 && t < t1 && t1 > t0 {
                    return (v1 - v0) / (t1 - t0);
                }
            }
        }
        0.0
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn constant_target_is_flat() {
        let t = Target::constant(300.0);
        assert_eq!(t.value_at(-5.0), 300.0);
        assert_eq!(t.value_at(1e6), 300.0);
        assert!(!t.is_schedule());
    }

    #[test]
    fn schedule_is_linear_between_points_and_held_after_the_last() {
        // Contract example: 0ps=10K,50ps=300K.
        let t = Target::schedule(vec![(50.0, 300.0), (0.0, 10.0)]).unwrap();
        assert!(t.is_schedule());
        assert_eq!(t.value_at(0.0), 10.0);
        assert!((t.value_at(25.0) - 155.0).abs() < 1e-12);
        assert_eq!(t.value_at(50.0), 300.0);
        assert_eq!(t.value_at(500.0), 300.0);
        assert!((t.slope_at(10.0) - 5.8).abs() < 1e-12);
        assert_eq!(t.slope_at(60.0), 0.0);
    }

    #[test]
    fn rejects_empty_and_non_finite_points() {
        assert!(Target::schedule(vec![]).is_none());
        assert!(Target::schedule(vec![(0.0, f64::NAN)]).is_none());
    }
}
