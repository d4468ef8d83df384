//! The report data model: what `plateau report` says about one log, as serde structs. The
//! JSON form (`--format json`) is versioned by [`SCHEMA_VERSION`] and documented in
//! `docs/report-schema.md`; text and markdown render the same structs.
//!
//! Conventions (Contract): snake_case keys, kebab-case values, times in ps, values in the
//! canonical unit of their column, non-finite numbers as the strings "nan", "inf", "-inf",
//! undefined values as `null`, counts as numbers, details as lists.

use serde::{Deserialize, Serialize};

use crate::alert::{Alert, AlertKind, RunStatus, Severity};

use super::number;

/// Version of the JSON layout. Raised when a key is removed or changes meaning; adding a
/// key does not raise it. 3: `stages`; `segments` are the pieces analysed on their own
/// (one per stage) and `columns` describe the last stage.
pub const SCHEMA_VERSION: u32 = 4;

/// How many skipped lines are listed in detail.
pub const SKIPPED_DETAIL_LIMIT: usize = 100;

/// The whole report of one log.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Report {
    pub schema_version: u32,
    /// Version of plateau that wrote the report.
    pub plateau_version: String,
    pub source: Source,
    /// Data rows in the run's series (after restarts replaced earlier rows).
    pub rows: u64,
    /// Data-like lines that could not be read (numeric first field, or tagged).
    pub skipped_lines: u64,
    /// The first hundred skipped lines, with line number and reason.
    pub skipped: Vec<SkippedLine>,
    /// Lines of free text between the rows (never alerts).
    pub free_text_lines: u64,
    /// Segments: a header with different columns starts a new one.
    pub segments: Vec<Segment>,
    /// Restarts: the step counter went back and later rows replaced earlier ones.
    pub restarts: Vec<Restart>,
    pub status: RunStatus,
    /// The rule that decided the status, in words.
    #[serde(default)]
    pub status_reason: String,
    /// The ensemble used by the fluctuation test and drift choice, and how it was known.
    pub ensemble: Option<EnsembleInfo>,
    /// Degrees of freedom used (from `--dof`, or `--atoms`/`--constraints`).
    #[serde(default, with = "number::opt")]
    pub degrees_of_freedom: Option<f64>,
    /// The run's equilibration: the latest onset of the quantities that matter.
    pub equilibration: Option<Onset>,
    pub equilibration_state: EquilibrationState,
    /// Columns whose onsets decided the run's equilibration.
    pub equilibration_from: Vec<String>,
    pub columns: Vec<ColumnReport>,
    /// Simulated ns per day from the rows' arrival times; null for a finished file.
    pub throughput: Option<Throughput>,
    /// Wall time to `--until`; null for a finished file or without `--until`.
    pub eta: Option<Eta>,
    /// Wall time until the standard error of `--precision-column` reaches `--target-sem`.
    pub precision_eta: Option<PrecisionEta>,
    pub alerts: Vec<AlertRecord>,
    /// Set when older rows were folded into block summaries to bound memory (following
    /// with `--keep-rows`); null otherwise.
    #[serde(default)]
    pub folding: Option<Folding>,
    /// The stages of the run (minimization, heating, equilibration, production), in order;
    /// `columns` describe the last one.
    #[serde(default)]
    pub stages: Vec<crate::stages::StageRecord>,
}

/// Older rows folded into block summaries: which statistics are approximate, from where.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Folding {
    /// The cap: rows kept at full resolution.
    pub keep_rows: u64,
    /// Rows of the analysed segment held only as block summaries.
    pub rows_folded: u64,
    /// Rows per block summary.
    pub block_rows: u64,
    /// First row (through the run) still kept at full resolution.
    pub full_resolution_from_row: u64,
    /// JSON names of the statistics that are approximate (the others stay exact).
    pub approximate: Vec<String>,
}

/// The file that was read.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Source {
    /// Path as given (or "-" for standard input).
    pub path: String,
    /// Bytes read.
    pub bytes: u64,
    /// Lines read.
    pub lines: u64,
    /// The last line had no newline and was ignored (it may be a row cut in half).
    pub last_line_ignored: bool,
}

/// One skipped line.
#[derive(Debug, Clone, PartialEq, Eq, Serialize, Deserialize)]
pub struct SkippedLine {
    pub line: u64,
    pub reason: String,
}

/// One segment of the run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Segment {
    pub index: u64,
    /// First row (0-based) of the segment in the run's series.
    pub first_row: u64,
    pub rows: u64,
    /// Source line of the segment's header, or of its first row.
    pub first_line: Option<u64>,
    pub columns: Vec<String>,
}

/// One restart.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Restart {
    /// Row from which later rows replaced earlier ones.
    pub row: u64,
    /// Line of the first replacing row.
    pub line: Option<u64>,
    /// Simulated time at the restart, ps.
    #[serde(default, with = "number::opt")]
    pub time: Option<f64>,
    /// Rows replaced.
    pub replaced: u64,
}

/// Ensemble and how it was known.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct EnsembleInfo {
    /// `nve`, `nvt` or `npt`.
    pub name: String,
    /// `given` (`--ensemble`) or `inferred`.
    pub how: String,
    /// Why, in words.
    pub reason: String,
}

/// An equilibration onset.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct Onset {
    /// First production row (0-based).
    pub row: u64,
    /// Simulated time of that row, ps.
    #[serde(default, with = "number::opt")]
    pub time: Option<f64>,
}

/// Whether a series (or the run) has equilibrated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum EquilibrationState {
    /// An onset was found; production statistics are given.
    Equilibrated,
    /// The best start sits at the end of the allowed range, or too little data follows it.
    NotYet,
    /// Too few rows to judge.
    TooShort,
    /// No statistics for this column (step and time counters).
    NotAnalysed,
}

/// What one column says.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct ColumnReport {
    pub name: String,
    /// The trade's quantity (`temperature`, `potential`, ...), or null for other columns.
    pub role: Option<String>,
    /// Canonical unit of the values.
    pub unit: String,
    /// Unit the log used (converted from), or "assumed" notes in `unit_assumed`.
    pub source_unit: String,
    /// The header gave no unit: taken as canonical.
    pub unit_assumed: bool,
    /// Values in the last segment that has this column.
    pub count: u64,
    /// Non-finite values among them.
    pub nonfinite: u64,
    /// Equilibration onset; null unless `equilibration_state` is `equilibrated`.
    pub equilibration: Option<Onset>,
    pub equilibration_state: EquilibrationState,
    /// MSER-5 truncation row, the cross-check of the onset (White 1997).
    pub mser_row: Option<u64>,
    /// Production statistics after the onset; null while not equilibrated.
    pub production: Option<Production>,
    /// Trend test after the onset.
    pub trend: Option<Trend>,
    /// Drift after the onset (conserved column, or total in NVE).
    pub drift: Option<DriftReport>,
    /// Fluctuation-size test (temperature, NVT/NPT with known degrees of freedom).
    pub fluctuation: Option<FluctuationReport>,
    /// Rows flagged as spikes (Hampel identifier).
    pub spikes: u64,
    /// Last value.
    #[serde(default, with = "number::opt")]
    pub last: Option<f64>,
}

/// Production statistics of a column.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Production {
    /// First production row.
    pub first_row: u64,
    pub count: u64,
    #[serde(with = "number")]
    pub mean: f64,
    /// Standard deviation with the n − 1 divisor.
    #[serde(default, with = "number::opt")]
    pub std: Option<f64>,
    /// Standard error of the mean by block averaging (Flyvbjerg–Petersen 1989).
    #[serde(default, with = "number::opt")]
    pub sem: Option<f64>,
    /// Standard error of the mean from g: sqrt(σ² g / N).
    #[serde(default, with = "number::opt")]
    pub sem_from_g: Option<f64>,
    /// Statistical inefficiency g.
    #[serde(default, with = "number::opt")]
    pub inefficiency: Option<f64>,
    /// Estimator of g (kebab-case name).
    pub inefficiency_estimator: String,
    /// N / g.
    #[serde(default, with = "number::opt")]
    pub effective_samples: Option<f64>,
    #[serde(default, with = "number::opt")]
    pub min: Option<f64>,
    #[serde(default, with = "number::opt")]
    pub max: Option<f64>,
}

/// Trend test after the onset.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Trend {
    /// Test used (kebab-case).
    pub test: String,
    /// Sen or least-squares slope, per ns.
    #[serde(default, with = "number::opt")]
    pub slope_per_ns: Option<f64>,
    /// Two-sided p-value (before Holm's correction across the run's quantities).
    #[serde(default, with = "number::opt")]
    pub p_value: Option<f64>,
    /// Fitted change across the window from the run's onset, in the column's unit.
    #[serde(default, with = "number::opt")]
    pub change: Option<f64>,
    /// Standard error of the mean the change is compared with.
    #[serde(default, with = "number::opt")]
    pub sem: Option<f64>,
    /// Significant after Holm's correction (1 % for the run) and a change above the
    /// practical size.
    pub still_changing: bool,
}

/// Drift of the conserved energy.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct DriftReport {
    /// What the `_per_ns` rates are per: `ns`, or `step` / `row` without a time column.
    pub per: String,
    /// A conservation test (the conserved column, or the total energy in NVE); otherwise
    /// shown only, "conserved only in NVE", with no alert.
    pub conservation: bool,
    /// First row of the fit.
    pub from_row: u64,
    /// Least-squares slope, unit per ns.
    #[serde(with = "number")]
    pub slope_per_ns: f64,
    /// Its autocorrelation-corrected standard error, per ns.
    #[serde(with = "number")]
    pub stderr_per_ns: f64,
    /// Method of the standard error (kebab-case).
    pub stderr_method: String,
    /// Confidence of the interval.
    #[serde(with = "number")]
    pub confidence: f64,
    #[serde(with = "number")]
    pub ci_low_per_ns: f64,
    #[serde(with = "number")]
    pub ci_high_per_ns: f64,
    /// Slope per atom per ns (with `--atoms`).
    #[serde(default, with = "number::opt")]
    pub per_atom_per_ns: Option<f64>,
    /// Slope in k_B·T per ns per degree of freedom (temperature and N_df known).
    #[serde(default, with = "number::opt")]
    pub kt_per_ns_per_dof: Option<f64>,
    /// How the k_B·T normalisation was obtained (kebab-case), when it was.
    pub normalisation: Option<String>,
    /// |slope| / stderr above the threshold.
    pub significant: bool,
}

/// Fluctuation-size verdict.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct FluctuationReport {
    /// Observed σ_T/⟨T⟩.
    #[serde(with = "number")]
    pub observed: f64,
    /// Canonical sqrt(2/N_df).
    #[serde(with = "number")]
    pub expected: f64,
    #[serde(with = "number")]
    pub low: f64,
    #[serde(with = "number")]
    pub high: f64,
    #[serde(with = "number")]
    pub coverage: f64,
    /// N_df used.
    #[serde(with = "number")]
    pub degrees_of_freedom: f64,
    /// `too-small`, `consistent` or `too-large`.
    pub verdict: String,
}

/// Throughput from arrival times.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Throughput {
    #[serde(with = "number")]
    pub ns_per_day: f64,
    #[serde(with = "number")]
    pub ps_per_second: f64,
}

/// Wall time to the end of the run.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct Eta {
    /// Simulated time to reach, ps.
    #[serde(with = "number")]
    pub until_ps: f64,
    #[serde(with = "number")]
    pub seconds: f64,
}

/// Wall time until a standard error reaches its target.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct PrecisionEta {
    pub column: String,
    #[serde(with = "number")]
    pub target_sem: f64,
    #[serde(default, with = "number::opt")]
    pub seconds: Option<f64>,
}

/// One alert as written in reports and the JSONL alert log.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AlertRecord {
    pub kind: AlertKind,
    pub severity: Severity,
    pub column: Option<String>,
    pub row: Option<u64>,
    pub line: Option<u64>,
    #[serde(default, with = "number::opt")]
    pub time: Option<f64>,
    #[serde(default, with = "number::opt")]
    pub value: Option<f64>,
    pub unit: Option<String>,
    pub message: String,
    /// Row at which the alert was raised (`row` is the episode's first row).
    #[serde(default)]
    pub raised_row: Option<u64>,
    /// Last row at which the episode's condition held.
    #[serde(default)]
    pub last_row: Option<u64>,
    /// The value at `last_row`.
    #[serde(default, with = "number::opt")]
    pub latest: Option<f64>,
    /// The value furthest from normal during the episode.
    #[serde(default, with = "number::opt")]
    pub peak: Option<f64>,
    /// Row at which the episode was cleared; null while it lasts.
    #[serde(default)]
    pub cleared_row: Option<u64>,
    /// Simulated time of `cleared_row`, ps.
    #[serde(default, with = "number::opt")]
    pub cleared_time: Option<f64>,
}

impl From<&Alert> for AlertRecord {
    fn from(a: &Alert) -> AlertRecord {
        AlertRecord {
            kind: a.kind,
            severity: a.severity,
            column: a.column.clone(),
            row: a.row,
            line: a.line,
            time: a.time,
            value: a.value,
            unit: a.unit.clone(),
            message: a.message.clone(),
            raised_row: a.raised_row,
            last_row: a.last_row,
            latest: a.latest,
            peak: a.peak,
            cleared_row: a.cleared_row,
            cleared_time: a.cleared_time,
        }
    }
}

impl AlertRecord {
    /// Back to the engine's alert type.
    pub fn to_alert(&self) -> Alert {
        Alert {
            kind: self.kind,
            severity: self.severity,
            column: self.column.clone(),
            row: self.row,
            line: self.line,
            time: self.time,
            value: self.value,
            unit: self.unit.clone(),
            message: self.message.clone(),
            raised_row: self.raised_row,
            last_row: self.last_row,
            latest: self.latest,
            peak: self.peak,
            cleared_row: self.cleared_row,
            cleared_time: self.cleared_time,
        }
    }
}

impl Report {
    /// The report as pretty JSON (stable key order: the struct order).
    pub fn to_json(&self) -> Result<String, serde_json::Error> {
        serde_json::to_string_pretty(self)
    }

    /// Highest alert severity, if any alert.
    pub fn worst_severity(&self) -> Option<Severity> {
        self.alerts.iter().map(|a| a.severity).max()
    }
}
