//! Run status: one word for the state of a run, decided from the analysis and the active
//! alerts by fixed rules, first match wins:
//!
//! 1. `unstable` — a critical alert of any kind is active in the run's last segment (a
//!    non-finite value, runaway growth, ... not cleared since).
//! 2. `finished` — the run is known to be over: while following, the `--until` time or step
//!    was reached, the process given by `--pid` exited or standard input ended. A file read
//!    whole by `report` or `check` is not "finished" by this rule (nothing says the writer
//!    is done); its status is one of the statistical ones below.
//! 3. `waiting` — no data row yet (the file is there, its first row is not).
//! 4. `stalled` — following a live file that is not known to be over, and no row arrived
//!    for the stall limit (an active `stalled` alert).
//! 5. `drifting` — an active `drift` alert (warning or critical) on the conserved energy.
//! 6. `settling` — the run is not equilibrated yet (its equilibration is `not-yet` or
//!    `too-short`), or the trend test on a quantity that matters still finds a trend after
//!    the onset.
//! 7. `steady` — everything else: equilibrated, no drift, nothing unstable.

use std::fmt;

use serde::{Deserialize, Serialize};

/// The status words (kebab-case in JSON).
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum RunStatus {
    Waiting,
    Settling,
    Steady,
    Drifting,
    Unstable,
    Stalled,
    Finished,
}

impl RunStatus {
    /// The kebab-case name.
    pub fn name(self) -> &'static str {
        match self {
            RunStatus::Waiting => "waiting",
            RunStatus::Settling => "settling",
            RunStatus::Steady => "steady",
            RunStatus::Drifting => "drifting",
            RunStatus::Unstable => "unstable",
            RunStatus::Stalled => "stalled",
            RunStatus::Finished => "finished",
        }
    }

    /// Decides the status from its inputs (rules in the module documentation).
    pub fn decide(inputs: &StatusInputs) -> RunStatus {
        if inputs.unstable {
            RunStatus::Unstable
        } else if inputs.finished {
            RunStatus::Finished
        } else if inputs.no_rows {
            RunStatus::Waiting
        } else if inputs.stalled {
            RunStatus::Stalled
        } else if inputs.drifting {
            RunStatus::Drifting
        } else if !inputs.equilibrated || inputs.still_changing {
            RunStatus::Settling
        } else {
            RunStatus::Steady
        }
    }
}

impl fmt::Display for RunStatus {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// Facts the status is decided from.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct StatusInputs {
    /// An active critical alert (of any kind) in the last segment.
    pub unstable: bool,
    /// An active `stalled` alert.
    pub stalled: bool,
    /// The run is known to be over (`--until` reached, `--pid` exited, end of input).
    pub finished: bool,
    /// No data row was read yet.
    pub no_rows: bool,
    /// An active `drift` alert.
    pub drifting: bool,
    /// The run's equilibration has an onset.
    pub equilibrated: bool,
    /// A trend test after the onset still finds a trend in a quantity that matters.
    pub still_changing: bool,
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn first_matching_rule_wins() {
        let all = StatusInputs {
            unstable: true,
            stalled: true,
            finished: true,
            no_rows: true,
            drifting: true,
            equilibrated: false,
            still_changing: true,
        };
        assert_eq!(RunStatus::decide(&all), RunStatus::Unstable);
        let s = StatusInputs {
            unstable: false,
            ..all
        };
        assert_eq!(RunStatus::decide(&s), RunStatus::Finished);
        let s = StatusInputs {
            finished: false,
            ..s
        };
        assert_eq!(RunStatus::decide(&s), RunStatus::Waiting);
        let s = StatusInputs {
            no_rows: false,
            ..s
        };
        assert_eq!(RunStatus::decide(&s), RunStatus::Stalled);
        let s = StatusInputs {
            stalled: false,
            ..s
        };
        assert_eq!(RunStatus::decide(&s), RunStatus::Drifting);
        let s = StatusInputs {
            drifting: false,
            ..s
        };
        assert_eq!(RunStatus::decide(&s), RunStatus::Settling);
        let s = StatusInputs {
            equilibrated: true,
            still_changing: false,
            ..s
        };
        assert_eq!(RunStatus::decide(&s), RunStatus::Steady);
        let s = StatusInputs {
            still_changing: true,
            ..s
        };
        assert_eq!(RunStatus::decide(&s), RunStatus::Settling);
    }
}
