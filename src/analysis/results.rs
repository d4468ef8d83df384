//! What the analysis says: per column and per run.

use super::FoldingSummary;
use crate::alert::RunStatus;
use crate::mapping::Role;
use crate::stats::{Ensemble, Equilibration, Estimator, FluctuationCheck, Mser, SlopeSeMethod};
use crate::table::Column;

/// Production statistics of one column.
#[derive(Debug, Clone, PartialEq)]
pub struct ProductionStats {
    pub first_row: usize,
    pub count: usize,
    pub mean: f64,
    pub std: Option<f64>,
    pub variance_population: Option<f64>,
    pub sem_block: Option<f64>,
    pub sem_from_g: Option<f64>,
    pub inefficiency: Option<f64>,
    pub estimator: Estimator,
    pub effective_samples: Option<f64>,
    pub min: f64,
    pub max: f64,
}

/// Trend after the onset.
#[derive(Debug, Clone, PartialEq)]
pub struct TrendSummary {
    /// Slope per ns (needs the time column).
    pub slope_per_ns: Option<f64>,
    /// Slope per row.
    pub slope_per_row: f64,
    /// Fitted change across the production window, in the column's unit.
    pub change: f64,
    /// Standard error of the production mean the change is compared with.
    pub sem: Option<f64>,
    /// Two-sided p-value of the block-means slope test (before Holm's correction).
    pub p_value: f64,
    /// Significant after Holm's correction across the run's quantities and larger than
    /// the practical size ([`super::TREND_MIN_CHANGE_SEM`]).
    pub still_changing: bool,
}

/// What a drift rate is per: ns (a time column, or `--timestep`), step (a step column
/// only) or row (neither).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum DriftPer {
    Ns,
    Step,
    Row,
}

impl DriftPer {
    /// The name (`ns`, `step`, `row`).
    pub fn name(self) -> &'static str {
        match self {
            DriftPer::Ns => "ns",
            DriftPer::Step => "step",
            DriftPer::Row => "row",
        }
    }
}

/// Drift fit after the run's onset. The `_per_ns` fields are per [`DriftSummary::per`].
#[derive(Debug, Clone, PartialEq)]
pub struct DriftSummary {
    /// What the rates are per.
    pub per: DriftPer,
    /// A conservation test: the conserved column, or the total energy in NVE. Otherwise
    /// the total energy's drift is shown ("conserved only in NVE") and raises no alert.
    pub conservation: bool,
    pub from_row: usize,
    pub slope_per_ns: f64,
    pub stderr_per_ns: f64,
    pub method: SlopeSeMethod,
    pub ci_low_per_ns: f64,
    pub ci_high_per_ns: f64,
    pub per_atom_per_ns: Option<f64>,
    pub kt_per_ns_per_dof: Option<f64>,
    pub normalisation: Option<&'static str>,
    pub significant: bool,
}

/// What the analysis says about one column of the last segment.
#[derive(Debug, Clone, PartialEq)]
pub struct ColumnAnalysis {
    pub name: String,
    pub role: Option<Role>,
    pub unit: String,
    pub source_unit: String,
    pub unit_assumed: bool,
    pub count: usize,
    pub nonfinite: u64,
    /// `None` for step and time columns (no statistics).
    pub equilibration: Option<Equilibration>,
    pub mser: Option<Mser>,
    pub production: Option<ProductionStats>,
    pub trend: Option<TrendSummary>,
    pub drift: Option<DriftSummary>,
    pub fluctuation: Option<FluctuationCheck>,
    pub spikes: u64,
    pub last: Option<f64>,
    /// Statistical inefficiency of the whole stable part (median `g` of 500-row blocks),
    /// for the off-target check while the column has no production `g`; computed only for
    /// a temperature or pressure column with a target and no production `g` (`None`
    /// otherwise: nothing else reads it).
    pub inefficiency_all: Option<f64>,
}

impl ColumnAnalysis {
    /// The column's name, role and units, with no rows and no statistics yet. The spike
    /// count is filled in by [`Analyzer::update`] after its scan.
    pub(super) fn described(c: &Column) -> ColumnAnalysis {
        ColumnAnalysis {
            name: c.spec.name.clone(),
            role: c.spec.role,
            unit: c.spec.unit.map(|u| u.to_string()).unwrap_or_default(),
            source_unit: c
                .spec
                .source_unit
                .map(|u| u.to_string())
                .or_else(|| c.spec.header_unit.clone())
                .unwrap_or_default(),
            unit_assumed: c.spec.assumed,
            count: 0,
            nonfinite: c.non_finite + c.overflow,
            equilibration: None,
            mser: None,
            production: None,
            trend: None,
            drift: None,
            fluctuation: None,
            spikes: 0,
            last: c.values().last().copied(),
            inefficiency_all: None,
        }
    }
}

/// How the ensemble was known.
#[derive(Debug, Clone, PartialEq)]
pub struct EnsembleChoice {
    pub ensemble: Ensemble,
    pub given: bool,
    pub reason: String,
}

/// Throughput and ETAs.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Progress {
    pub ns_per_day: Option<f64>,
    pub ps_per_second: Option<f64>,
    pub eta_seconds: Option<f64>,
    pub precision_eta_seconds: Option<f64>,
}

/// What the analysis says about the run.
#[derive(Debug, Clone, PartialEq)]
pub struct RunAnalysis {
    /// Index of the analysed (last) segment.
    pub segment: usize,
    /// Row (through the run) of the analysed segment's first row.
    pub first_row: usize,
    pub columns: Vec<ColumnAnalysis>,
    /// The run's equilibration (onset row is within the segment).
    pub equilibration: Option<Equilibration>,
    pub equilibration_from: Vec<String>,
    pub ensemble: Option<EnsembleChoice>,
    pub degrees_of_freedom: Option<f64>,
    pub progress: Progress,
    pub status: RunStatus,
    /// The rule that decided the status, in words.
    pub status_reason: String,
    /// Set when older rows were folded into block summaries (bounded memory).
    pub folding: Option<FoldingSummary>,
}

pub(super) fn empty_analysis(nseg: usize) -> RunAnalysis {
    RunAnalysis {
        segment: nseg.saturating_sub(1),
        first_row: 0,
        columns: Vec::new(),
        equilibration: None,
        equilibration_from: Vec::new(),
        ensemble: None,
        degrees_of_freedom: None,
        progress: Progress::default(),
        status: RunStatus::Settling,
        status_reason: String::new(),
        folding: None,
    }
}
