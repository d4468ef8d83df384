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
    pub slope_per_ns: Option<f64>,
    pub p_value: f64,
    pub still_changing: bool,
}

/// Drift fit after the run's onset.
#[derive(Debug, Clone, PartialEq)]
pub struct DriftSummary {
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
        folding: None,
    }
}
