//! Sustained-window and hysteresis logic shared by every alert kind.
//!
//! A condition is observed once per row (or once per evaluation of a summary). An alert is
//! *raised* only after the condition has held for `raise_after` consecutive observations and
//! *cleared* only after it has been false for `clear_after` consecutive observations, with
//! `clear_after >= raise_after`. One noisy row therefore neither raises an alert that needs a
//! window nor switches an active alert off and on again (a Schmitt trigger in time).

/// How many consecutive observations raise and clear an alert.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Sustain {
    /// Consecutive true observations before the alert is raised (at least 1).
    pub raise_after: u32,
    /// Consecutive false observations before an active alert is cleared (at least
    /// `raise_after`).
    pub clear_after: u32,
}

impl Sustain {
    /// A sustain rule; `raise_after` is at least 1 and `clear_after` at least `raise_after`.
    pub fn new(raise_after: u32, clear_after: u32) -> Sustain {
        let raise_after = raise_after.max(1);
        Sustain {
            raise_after,
            clear_after: clear_after.max(raise_after),
        }
    }

    /// Raise at the first true observation; clear after `clear_after` false ones.
    pub fn immediate(clear_after: u32) -> Sustain {
        Sustain::new(1, clear_after)
    }
}

/// What one observation changed.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Transition {
    /// Nothing changed.
    None,
    /// The alert was raised; the payload is the index (as passed to `observe`) at which the
    /// condition started to hold, so the alert can point at the first row of the episode.
    Raised { since: u64 },
    /// The active alert was cleared.
    Cleared,
}

/// State of one alert (one kind on one column).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Hysteresis {
    sustain: Sustain,
    active: bool,
    true_run: u32,
    false_run: u32,
    run_start: u64,
}

impl Hysteresis {
    /// A new, inactive state.
    pub fn new(sustain: Sustain) -> Hysteresis {
        Hysteresis {
            sustain,
            active: false,
            true_run: 0,
            false_run: 0,
            run_start: 0,
        }
    }

    /// Uses `sustain` from now on, keeping the current runs: a detector whose window is
    /// sized from the data (the off-target window of a new stage) holds and clears by the
    /// window in force, not by the one of its first call.
    pub fn set_sustain(&mut self, sustain: Sustain) {
        self.sustain = sustain;
    }

    /// Whether the alert is currently raised.
    pub fn is_active(&self) -> bool {
        self.active
    }

    /// Feeds `count` consecutive false observations at once: the same state as `count`
    /// calls of `observe(_, false)` (a false observation never raises). O(1). Returns the
    /// 0-based position within the run of the observation that cleared an active alert.
    pub fn observe_false_run(&mut self, count: u64) -> Option<u64> {
        if count == 0 {
            return None;
        }
        self.true_run = 0;
        let before = self.false_run;
        let count32 = u32::try_from(count).unwrap_or(u32::MAX);
        self.false_run = self.false_run.saturating_add(count32);
        if self.active && self.false_run >= self.sustain.clear_after {
            self.active = false;
            let needed = self.sustain.clear_after.saturating_sub(before).max(1);
            return Some(u64::from(needed) - 1);
        }
        None
    }

    /// Feeds one observation made at `index` (a row, or an evaluation counter).
    pub fn observe(&mut self, index: u64, condition: bool) -> Transition {
        if condition {
            if self.true_run == 0 {
                self.run_start = index;
            }
            self.true_run = self.true_run.saturating_add(1);
            self.false_run = 0;
            if !self.active && self.true_run >= self.sustain.raise_after {
                self.active = true;
                return Transition::Raised {
                    since: self.run_start,
                };
            }
        } else {
            self.true_run = 0;
            self.false_run = self.false_run.saturating_add(1);
            if self.active && self.false_run >= self.sustain.clear_after {
                self.active = false;
                return Transition::Cleared;
            }
        }
        Transition::None
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn run(sustain: Sustain, pattern: &str) -> Vec<Transition> {
        let mut h = Hysteresis::new(sustain);
        pattern
            .chars()
            .enumerate()
            .map(|(i, c)| h.observe(i as u64, c == '1'))
            .filter(|t| *t != Transition::None)
            .collect()
    }

    #[test]
    fn a_false_run_at_once_equals_one_by_one() {
        // Every split of a pattern into false runs fed at once ends in the same state.
        let patterns = [
            "0000",
            "1000001",
            "1110011000",
            "01",
            "111",
            "1001110000001",
        ];
        for sustain in [
            Sustain::immediate(3),
            Sustain::new(2, 4),
            Sustain::new(1, 1),
        ] {
            for p in patterns {
                let mut one = Hysteresis::new(sustain);
                let mut bulk = Hysteresis::new(sustain);
                let mut zeros = 0u64;
                for (i, c) in p.chars().enumerate() {
                    one.observe(i as u64, c == '1');
                    if c == '1' {
                        bulk.observe_false_run(zeros);
                        zeros = 0;
                        bulk.observe(i as u64, true);
                    } else {
                        zeros += 1;
                    }
                }
                bulk.observe_false_run(zeros);
                assert_eq!(one, bulk, "{p} {sustain:?}");
            }
        }
    }

    #[test]
    fn one_noisy_row_does_not_raise_a_windowed_alert() {
        assert!(run(Sustain::new(3, 6), "0010010110").is_empty());
    }

    #[test]
    fn raise_points_at_the_start_of_the_sustained_episode() {
        assert_eq!(
            run(Sustain::new(3, 6), "0001110"),
            vec![Transition::Raised { since: 3 }]
        );
    }

    #[test]
    fn one_clean_row_does_not_clear_and_reraise() {
        // Active from index 0; a single false row in the middle must not flap.
        let t = run(Sustain::new(2, 4), "11101111110000");
        assert_eq!(
            t,
            vec![Transition::Raised { since: 0 }, Transition::Cleared]
        );
    }

    #[test]
    fn clears_only_after_the_longer_window() {
        let mut h = Hysteresis::new(Sustain::new(1, 3));
        assert_eq!(h.observe(0, true), Transition::Raised { since: 0 });
        assert_eq!(h.observe(1, false), Transition::None);
        assert_eq!(h.observe(2, false), Transition::None);
        assert!(h.is_active());
        assert_eq!(h.observe(3, false), Transition::Cleared);
        assert!(!h.is_active());
    }

    #[test]
    fn clear_window_is_never_shorter_than_raise_window() {
        let s = Sustain::new(5, 2);
        assert_eq!(s.clear_after, 5);
        assert_eq!(Sustain::new(0, 0).raise_after, 1);
    }
}
