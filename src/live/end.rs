//! When following a run can end: the run reached a given simulated time or step, or the
//! process writing it exited.

use std::path::Path;

use crate::mapping::Role;
use crate::table::RunTable;
use crate::units::TimeSpec;

/// True when the run's last row reached `until`.
pub fn reached(table: &RunTable, until: TimeSpec, timestep_ps: Option<f64>) -> bool {
    let Some(seg) = table.segments.last() else {
        return false;
    };
    let last = |role: Role| seg.column(role).and_then(|c| c.values().last().copied());
    match until {
        TimeSpec::Ps(t) => last(Role::Time).is_some_and(|x| x >= t),
        TimeSpec::Steps(n) => match last(Role::Step) {
            Some(s) => s >= n,
            None => match (timestep_ps, last(Role::Time)) {
                (Some(dt), Some(x)) => x >= n * dt,
                _ => false,
            },
        },
    }
}

/// Whether process `pid` still runs (Linux `/proc`): gone when its folder is missing, and
/// a zombie (exited, not yet reaped by its parent) counts as exited.
pub fn process_alive(pid: u32) -> bool {
    let stat = Path::new("/proc").join(pid.to_string()).join("stat");
    match std::fs::read_to_string(stat) {
        Ok(text) => {
            // Format: "pid (comm) state ...": the state follows the last ')'.
            let state = text
                .rsplit_once(')')
                .and_then(|(_, rest)| rest.trim_start().chars().next());
            !matches!(state, Some('Z') | Some('X'))
        }
        Err(_) => false,
    }
}
