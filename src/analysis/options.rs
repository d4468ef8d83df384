//! What the analysis needs to know besides the table.

use crate::alert::{Target, Thresholds};
use crate::stats::{self, Ensemble};

/// What the analysis needs to know besides the table.
#[derive(Debug, Clone, Default)]
pub struct AnalysisOptions {
    pub atoms: Option<u64>,
    pub constraints: Option<u64>,
    /// Degrees of freedom given directly.
    pub dof: Option<u64>,
    /// Ensemble given by the user (otherwise inferred).
    pub ensemble: Option<Ensemble>,
    pub target_temperature: Option<Target>,
    pub target_pressure: Option<Target>,
    pub thresholds: Thresholds,
    /// Simulated time the run ends at (`--until`), ps.
    pub until_ps: Option<f64>,
    /// Column and standard error for the precision ETA (`--target-sem`).
    pub target_sem: Option<(String, f64)>,
    /// Segments that are directed changes (a minimization's descent, a heating ramp, found
    /// by `crate::stages`): the runaway detector does not run on them, as a descent or a
    /// ramp is not a blow-up (non-finite values and spikes are still reported).
    pub directed_segments: Vec<usize>,
}

impl AnalysisOptions {
    /// N_df from `--dof`, or 3·atoms − constraints − 3.
    pub fn degrees_of_freedom(&self) -> Option<f64> {
        match (self.dof, self.atoms) {
            (Some(d), _) if d > 0 => Some(d as f64),
            (_, Some(n)) => stats::degrees_of_freedom(n, self.constraints.unwrap_or(0), None),
            _ => None,
        }
    }
}
