//! Run-level analysis: applies the statistics in `stats` to a mapped table (pure, no I/O,
//! no clock: arrival times and "now" are passed in) and feeds the alert engine.
//!
//! What is analysed:
//! - Every segment's rows go through the per-row detectors (non-finite, spikes, runaway,
//!   off-target). Rows are numbered through the run: a later segment's first row follows the
//!   previous segment's last.
//! - The statistics (onsets, production, trend, drift, fluctuation size, ensemble) describe
//!   the **last segment**, the one being written; a header with different columns starts a
//!   segment that is analysed on its own (Contract).
//! - Per column: onset by N_eff maximisation (Chodera 2016) with MSER-5 as the cross-check,
//!   production statistics after the onset. The run's onset is the latest onset of the
//!   potential energy, volume/density, temperature and pressure columns present (all
//!   analysed columns when none of these is mapped).
//! - Drift on the `conserved` column (or `total` in NVE) after the run's onset, per ns, per
//!   atom with `--atoms`, in k_B·T per ns per degree of freedom when N_df and the temperature
//!   are known (or, from the kinetic energy column, N_df·k_B·T = 2⟨K⟩).
//! - Fluctuation size of the temperature only for NVT/NPT with N_df known.
//!
//! Recomputation schedule (incremental use): per-row detectors look at each new row once
//! (O(rows) in total; spikes need `spike_window` rows after a row before judging it while
//! following). The full statistics are recomputed when the last segment has grown by 10 %
//! (and at least 50 rows) since the last computation, or when the input is finished, so
//! the total cost over a run of N rows is O(N log N) times a constant (a geometric series of
//! O(N log N) computations), never O(N²).
//!
//! Each update first finds the per-row flags (spikes, runaway) of the new rows, columns on
//! all cores, then computes the statistics when due (columns on all cores; when the flags
//! cover the whole segment their first runaway rows give the stable end without a second
//! pass), then feeds the engine in a fixed order (drift and fluctuation summaries, then per
//! segment: restarts, and per column non-finite, spike, runaway, off-target), so alerts and
//! output do not depend on the number of threads.

mod parallel;

use std::ops::Range;

use parallel::{map_in_order, PARALLEL_MIN_VALUES};

use crate::alert::{
    AlertEngine, AlertKind, DriftEvidence, FluctuationEvidence, OffTargetInput, RowLocator,
    RunStatus, Severity, StatusInputs, Sustain, Target, Thresholds, RUN,
};
use crate::config::Ensemble;
use crate::mapping::Role;
use crate::stats::{
    self, Equilibration, Estimator, FluctuationCheck, FluctuationVerdict, HampelOptions, Mser,
    RunawayOptions, SlopeSeMethod,
};
use crate::table::{Column, RunTable, Segment};

mod folded;
pub use crate::fold::{DEFAULT_KEEP_ROWS, MIN_KEEP_ROWS};
pub use folded::{FoldingSummary, APPROXIMATE_WHEN_FOLDED};

/// Confidence of the drift interval.
pub const DRIFT_CONFIDENCE: f64 = 0.95;
/// Trend test: p-value below which a quantity is "still changing" (1 %, common practice,
/// no source).
pub const TREND_P_VALUE: f64 = 0.01;
/// Points the O(n²) trend test (Mann–Kendall, Sen slope) runs on at most: block means
/// beyond (METHODS §5.2 suggests capping; 1000 keeps it a small part of the cost).
pub const TREND_MAX_POINTS: usize = 1000;
/// Rows before the checked window whose median and MAD are the runaway baseline
/// (common practice, no source).
pub const RUNAWAY_BASELINE_ROWS: usize = 200;
/// The runaway baseline is recomputed every this many rows (a median and a MAD of
/// [`RUNAWAY_BASELINE_ROWS`] values; recomputing it for every window would dominate the
/// cost on long runs).
pub const RUNAWAY_BASELINE_STEP: usize = 100;
/// Runaway growth factor across the window (stats default: tenfold).
pub const RUNAWAY_MIN_GROWTH: f64 = 10.0;
/// Far excursion in robust SDs of the baseline (METHODS §8).
pub const RUNAWAY_FAR_SIGMAS: f64 = 50.0;
/// Rows of arrival times used for the throughput fit.
pub const THROUGHPUT_WINDOW: usize = 200;

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
    fn described(c: &Column) -> ColumnAnalysis {
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

/// Row locator over a table: rows numbered through the run.
#[derive(Debug, Clone, Copy)]
pub struct TableLocator<'a> {
    segment: &'a Segment,
    offset: usize,
    time: Option<&'a [f64]>,
}

impl<'a> TableLocator<'a> {
    /// A locator for `segment`, whose first row is row `offset` of the run.
    pub fn new(segment: &'a Segment, offset: usize) -> TableLocator<'a> {
        TableLocator {
            segment,
            offset,
            time: time_values(segment),
        }
    }
}

impl RowLocator for TableLocator<'_> {
    fn line(&self, row: usize) -> Option<u64> {
        self.segment.lines.get(row.checked_sub(self.offset)?)
    }
    fn time(&self, row: usize) -> Option<f64> {
        self.time?.get(row.checked_sub(self.offset)?).copied()
    }
}

/// The time column's values (canonical ps), if the segment has one.
pub fn time_values(segment: &Segment) -> Option<&[f64]> {
    segment.column(Role::Time).map(|c| c.values())
}

fn has_statistics(role: Option<Role>) -> bool {
    !matches!(role, Some(Role::Step) | Some(Role::Time))
}

/// The rows of `v` before `stable_end`.
fn stable_part(v: &[f64], stable_end: usize) -> &[f64] {
    v.get(..stable_end.min(v.len())).unwrap_or(&[])
}

fn analysed_count(seg: &Segment) -> usize {
    seg.columns
        .iter()
        .filter(|c| has_statistics(c.spec.role))
        .count()
}

fn first_nonfinite(x: &[f64]) -> usize {
    x.iter().position(|v| !v.is_finite()).unwrap_or(x.len())
}

/// Per-column state of the per-row detectors.
#[derive(Debug, Clone, Default)]
struct ColumnCursor {
    /// Cached runaway baseline: (end row within segment, baseline).
    baseline: Option<(usize, Option<stats::Baseline>)>,
    spikes: u64,
}

/// A runaway baseline cache: (end row within segment, baseline).
type BaselineCache = Option<(usize, Option<stats::Baseline>)>;

/// What the per-row detectors of one segment look at in this update.
#[derive(Debug, Clone, Copy)]
struct ScanPlan {
    /// Rows of the segment.
    n: usize,
    /// First row not yet scanned (non-finite, runaway, off-target).
    start: usize,
    /// Rows judged by the spike detector: `spike_start..spike_end`.
    spike_start: usize,
    spike_end: usize,
    /// Rows scanned by the spike detector before this update, after new restarts (not
    /// clamped to `n`).
    spike_scanned: usize,
}

/// Per-row detector results of one analysed column over the rows of a [`ScanPlan`]
/// (segment rows, ascending). Pure, so columns are computed on all cores; the alert
/// engine then sees them column by column in order.
#[derive(Debug, Clone, Default)]
struct ColumnFlags {
    /// Hampel rows confirmed by the context test.
    spikes: Vec<usize>,
    /// Runaway rows with the growth's samples per decade (NaN for a far excursion).
    runaway: Vec<(usize, f64)>,
}

/// The incremental analyser: owns the alert engine and what was already looked at.
#[derive(Debug, Clone)]
pub struct Analyzer {
    opts: AnalysisOptions,
    engine: AlertEngine,
    /// Per segment: rows already scanned by the per-row detectors.
    scanned: Vec<usize>,
    /// Per segment: rows scanned by the spike detector.
    spike_scanned: Vec<usize>,
    /// Per segment: restarts already reported.
    restarts_seen: Vec<usize>,
    /// Per segment and column.
    cursors: Vec<Vec<ColumnCursor>>,
    /// Rows of the last segment at the last full computation, and which segment.
    full_at: Option<(usize, usize)>,
    evaluation: u64,
    cached: Option<RunAnalysis>,
    skipped_seen: u64,
    /// Rows forgotten and folded (bounded memory while following).
    folding: folded::FoldState,
}

impl Analyzer {
    /// A new analyser.
    pub fn new(opts: AnalysisOptions) -> Analyzer {
        let engine = AlertEngine::new(opts.thresholds.clone());
        Analyzer {
            opts,
            engine,
            scanned: Vec::new(),
            spike_scanned: Vec::new(),
            restarts_seen: Vec::new(),
            cursors: Vec::new(),
            full_at: None,
            evaluation: 0,
            cached: None,
            skipped_seen: 0,
            folding: folded::FoldState::default(),
        }
    }

    /// The alert engine (alerts raised so far).
    pub fn engine(&self) -> &AlertEngine {
        &self.engine
    }

    /// The options.
    pub fn options(&self) -> &AnalysisOptions {
        &self.opts
    }

    /// Analyses everything new in `table`. `finished`: no more rows will come (the file was
    /// read whole, or following ended): the last rows are judged with truncated windows.
    /// `arrivals`: wall-clock arrival second of each row of the last segment (following
    /// only), for throughput and ETAs. `ended`: the run is known to be over (status
    /// `finished`).
    pub fn update(
        &mut self,
        table: &RunTable,
        finished: bool,
        arrivals: Option<&[f64]>,
        ended: bool,
    ) -> RunAnalysis {
        let nseg = table.segments.len();
        self.scanned.resize(nseg, 0);
        self.spike_scanned.resize(nseg, 0);
        self.restarts_seen.resize(nseg, 0);
        self.cursors.resize_with(nseg, Vec::new);

        // Full statistics on the last segment when due.
        let last = nseg.checked_sub(1);
        let due = match (last, self.full_at) {
            (None, _) => false,
            (Some(s), Some((seg, rows))) if s == seg => {
                let now = self.segment_total_rows(table, s);
                (finished && now != rows)
                    || now >= rows.saturating_add(self.recompute_step(rows))
                    || now < rows
            }
            _ => true,
        };
        // Per-row detectors (pure) on every segment's new rows, before the statistics so
        // the runaway rows found here also give the statistics' stable end.
        let plans: Vec<ScanPlan> = table
            .segments
            .iter()
            .enumerate()
            .map(|(si, seg)| self.scan_plan(si, seg, finished))
            .collect();
        let flags: Vec<Vec<Option<ColumnFlags>>> = table
            .segments
            .iter()
            .zip(&plans)
            .enumerate()
            .map(|(si, (seg, plan))| self.detect(si, seg, plan))
            .collect();

        if due || self.cached.is_none() {
            if let Some(s) = last {
                let rows = self.segment_total_rows(table, s);
                // Runaway rows of the whole segment are known when this update scans it
                // from its first row (a whole file, or a new segment).
                let known = plans
                    .get(s)
                    .filter(|p| p.start == 0)
                    .and_then(|_| flags.get(s))
                    .map(Vec::as_slice);
                self.cached = Some(self.full_view(table, s, known));
                self.full_at = Some((s, rows));
                self.evaluation += 1;
                self.evaluate_summaries(table, s);
            }
        }

        // Per-row alerts on every segment's new rows, in order.
        let mut offset = 0usize;
        for (si, (seg, (plan, seg_flags))) in table
            .segments
            .iter()
            .zip(plans.iter().zip(&flags))
            .enumerate()
        {
            offset += self.forgotten_rows(si);
            self.scan_segment(table, si, seg, offset, plan, seg_flags);
            offset += seg.rows();
        }

        // Skipped lines.
        if table.skipped_count != self.skipped_seen {
            self.skipped_seen = table.skipped_count;
            let data_lines = table.rows() as u64 + self.rows_forgotten() + table.skipped_count;
            let first = table.skipped.first().map(|s| s.line);
            self.engine
                .evaluate_skipped(table.skipped_count, data_lines, first);
        }

        let mut analysis = self.cached.clone().unwrap_or_else(|| empty_analysis(nseg));
        // The statistics were computed before this update's scan counted its spikes.
        if let Some(cursors) = self.cursors.get(analysis.segment) {
            for (c, cursor) in analysis.columns.iter_mut().zip(cursors) {
                c.spikes = cursor.spikes;
            }
        }
        analysis.progress = self.progress(table, &analysis, arrivals);
        let no_rows = table.rows() == 0 && self.rows_forgotten() == 0;
        analysis.status = self.status(&analysis, ended, no_rows);
        analysis
    }

    /// Stall check while following: `now_s` and `arrivals` share an epoch (seconds).
    pub fn check_stall(&mut self, now_s: f64, arrivals: &[f64], last_row: Option<usize>) {
        let Some(&last) = arrivals.last() else {
            return;
        };
        let mut gaps: Vec<f64> = arrivals
            .windows(2)
            .filter_map(|w| match w {
                [a, b] => Some(b - a),
                _ => None,
            })
            .filter(|g| g.is_finite() && *g >= 0.0)
            .collect();
        let take = gaps.len().min(1000);
        let tail_start = gaps.len() - take;
        let mut recent = gaps.split_off(tail_start);
        let median = stats::median(&recent);
        recent.clear();
        self.evaluation += 1;
        let index = self.evaluation;
        self.engine.evaluate_stall(
            now_s,
            last,
            median,
            last_row,
            index,
            &crate::alert::NoLocator,
        );
    }

    fn status(&self, a: &RunAnalysis, ended: bool, no_rows: bool) -> RunStatus {
        let active = self.engine.active();
        let unstable = active.iter().any(|x| {
            matches!(x.kind, AlertKind::Nonfinite | AlertKind::Runaway)
                && x.severity == Severity::Critical
                && x.row.is_some_and(|r| r as usize >= a.first_row)
        });
        let stalled = active.iter().any(|x| x.kind == AlertKind::Stalled);
        let drifting = active
            .iter()
            .any(|x| x.kind == AlertKind::Drift && x.severity >= Severity::Warning);
        let equilibrated = matches!(a.equilibration, Some(Equilibration::Onset { .. }));
        let still_changing = a.columns.iter().any(|c| {
            a.equilibration_from.contains(&c.name)
                && c.trend.as_ref().is_some_and(|t| t.still_changing)
        });
        RunStatus::decide(&StatusInputs {
            unstable,
            stalled,
            finished: ended,
            no_rows,
            drifting,
            equilibrated,
            still_changing,
        })
    }

    fn progress(&self, table: &RunTable, a: &RunAnalysis, arrivals: Option<&[f64]>) -> Progress {
        let mut p = Progress::default();
        let Some(arr) = arrivals else {
            return p;
        };
        let Some(seg) = table.segments.get(a.segment) else {
            return p;
        };
        let Some(times) = time_values(seg) else {
            return p;
        };
        let n = arr.len().min(times.len());
        let (Some(arr), Some(times)) = (arr.get(arr.len() - n..), times.get(times.len() - n..))
        else {
            return p;
        };
        let Some(tp) = stats::throughput(arr, times, THROUGHPUT_WINDOW) else {
            return p;
        };
        p.ns_per_day = Some(tp.ns_per_day);
        p.ps_per_second = Some(tp.ps_per_second);
        let current = times.last().copied().unwrap_or(0.0);
        if let Some(until) = self.opts.until_ps {
            p.eta_seconds = stats::eta_seconds(current, until, tp.ps_per_second);
        }
        if let Some((col, target)) = &self.opts.target_sem {
            let interval = if n >= 2 {
                (times.last().copied().unwrap_or(0.0) - times.first().copied().unwrap_or(0.0))
                    / (n - 1) as f64
            } else {
                0.0
            };
            if let Some(prod) = a
                .columns
                .iter()
                .find(|c| &c.name == col || c.role.is_some_and(|r| r.name() == col))
                .and_then(|c| c.production.as_ref())
            {
                if let (Some(var), Some(g)) = (prod.variance_population, prod.inefficiency) {
                    p.precision_eta_seconds = stats::precision_eta(
                        var,
                        g,
                        prod.count,
                        *target,
                        interval,
                        tp.ps_per_second,
                    )
                    .map(|e| e.wall_seconds);
                }
            }
        }
        p
    }

    /// The full statistics of segment `si`. `known`: per-row detector results of this
    /// update covering the whole segment (their runaway rows give the stable end without a
    /// second pass). Columns are computed on all cores.
    fn full(
        &self,
        table: &RunTable,
        si: usize,
        known: Option<&[Option<ColumnFlags>]>,
    ) -> RunAnalysis {
        let Some(seg) = table.segments.get(si) else {
            return empty_analysis(si + 1);
        };
        let first_row: usize = table.segments.iter().take(si).map(Segment::rows).sum();
        let parallel = seg.rows() >= PARALLEL_MIN_VALUES / 4;
        // The statistics describe the run before it blew up: rows from the first non-finite
        // value or runaway growth in any analysed column on are left out.
        let ropts = runaway_options(&self.opts.thresholds);
        let analysed: Vec<(usize, &Column)> = seg
            .columns
            .iter()
            .enumerate()
            .filter(|(_, c)| has_statistics(c.spec.role))
            .collect();
        let stable_end = map_in_order(&analysed, parallel, |&(ci, c)| {
            let v = c.values();
            let end = first_nonfinite(v);
            let first_runaway = match known.and_then(|k| k.get(ci)).and_then(Option::as_ref) {
                Some(flags) => flags.runaway.first().map(|f| f.0),
                None => {
                    let mut cache = None;
                    runaway_flags(v, 0..end, &ropts, &mut cache, true)
                        .first()
                        .map(|f| f.0)
                }
            };
            first_runaway.map_or(end, |r| r.min(end))
        })
        .into_iter()
        .min()
        .unwrap_or(seg.rows());
        let opts = &self.opts;
        let mut columns: Vec<ColumnAnalysis> = map_in_order(&seg.columns, parallel, |c| {
            let values = c.values();
            let finite_end = first_nonfinite(values).min(stable_end);
            let x = values.get(..finite_end).unwrap_or(&[]);
            let (equilibration, mser, production, trend) = if has_statistics(c.spec.role) {
                let eq = stats::detect_equilibration(x);
                let mser = stats::mser5(x);
                let production = match eq {
                    Equilibration::Onset { row, g, n_eff } => production(x, row, g, n_eff),
                    _ => None,
                };
                let trend = eq
                    .row()
                    .and_then(|row| trend(x.get(row..).unwrap_or(&[]), seg, row));
                (Some(eq), mser, production, trend)
            } else {
                (None, None, None, None)
            };
            // Only the off-target check reads it, and only without a production g.
            let needs_inefficiency_all = has_statistics(c.spec.role)
                && production.as_ref().and_then(|p| p.inefficiency).is_none()
                && match c.spec.role {
                    Some(Role::Temperature) => opts.target_temperature.is_some(),
                    Some(Role::Pressure) => opts.target_pressure.is_some(),
                    _ => false,
                };
            ColumnAnalysis {
                count: values.len(),
                equilibration,
                mser,
                production,
                trend,
                last: values.last().copied(),
                inefficiency_all: if needs_inefficiency_all {
                    blockwise_inefficiency(x)
                } else {
                    None
                },
                ..ColumnAnalysis::described(c)
            }
        });

        // The run's onset.
        let matters = [
            Role::Potential,
            Role::Volume,
            Role::Density,
            Role::Temperature,
            Role::Pressure,
        ];
        let mut from: Vec<String> = Vec::new();
        let mut onsets = Vec::new();
        for c in &columns {
            if c.role.is_some_and(|r| matters.contains(&r)) {
                if let Some(e) = c.equilibration {
                    onsets.push(e);
                    from.push(c.name.clone());
                }
            }
        }
        if onsets.is_empty() {
            for c in &columns {
                if let Some(e) = c.equilibration {
                    onsets.push(e);
                    from.push(c.name.clone());
                }
            }
        }
        let run_eq = stats::combine_onsets(&onsets);
        let run_row = run_eq.and_then(|e| e.row());

        // Ensemble.
        let ensemble = match self.opts.ensemble {
            Some(e) => Some(EnsembleChoice {
                ensemble: e,
                given: true,
                reason: "given with --ensemble".to_string(),
            }),
            None => {
                let part = |role: Role| -> Option<&[f64]> {
                    let v = seg.column(role)?.values();
                    let end = first_nonfinite(v).min(stable_end);
                    v.get(run_row.unwrap_or(0).min(end)..end)
                };
                stats::infer_ensemble(part(Role::Total), part(Role::Kinetic), part(Role::Volume))
                    .map(|g| EnsembleChoice {
                        ensemble: match g.ensemble {
                            stats::Ensemble::Nve => Ensemble::Nve,
                            stats::Ensemble::Nvt => Ensemble::Nvt,
                            stats::Ensemble::Npt => Ensemble::Npt,
                        },
                        given: false,
                        reason: g.reason,
                    })
            }
        };
        let n_df = self.opts.degrees_of_freedom();

        // Drift on the conserved column (or total in NVE), after the run's onset.
        let drift_role = if seg.column(Role::Conserved).is_some() {
            Some(Role::Conserved)
        } else if ensemble
            .as_ref()
            .is_some_and(|e| e.ensemble == Ensemble::Nve)
        {
            Some(Role::Total)
        } else {
            None
        };
        let times = time_values(seg);
        // After the run's onset; from the segment's start while the run has no onset (a
        // drift strong enough to keep the run from settling is still a drift).
        let drift_from =
            run_row.or_else(|| matches!(run_eq, Some(Equilibration::NotYet)).then_some(0));
        let drift_task = || -> Option<(Role, DriftSummary)> {
            let (role, row, times) = (drift_role?, drift_from?, times?);
            let temperature_mean = seg
                .column(Role::Temperature)
                .and_then(|c| finite_part_mean(stable_part(c.values(), stable_end), row));
            let kinetic_mean = seg
                .column(Role::Kinetic)
                .and_then(|c| finite_part_mean(stable_part(c.values(), stable_end), row));
            let c = columns.iter().find(|c| c.role == Some(role))?;
            let col = seg.column(role)?;
            let d = drift_summary(
                stable_part(col.values(), stable_end),
                times,
                row,
                &self.opts,
                n_df,
                temperature_mean,
                kinetic_mean,
                c.unit == "kJ/mol",
            )?;
            Some((role, d))
        };
        // Fluctuation size: NVT/NPT with N_df known, after the run's onset.
        let canonical = ensemble
            .as_ref()
            .is_some_and(|e| matches!(e.ensemble, Ensemble::Nvt | Ensemble::Npt));
        let fluctuation_task = || -> Option<FluctuationCheck> {
            let (true, Some(n_df), Some(row)) = (canonical, n_df, run_row) else {
                return None;
            };
            columns.iter().find(|c| c.role == Some(Role::Temperature))?;
            let v = seg.column(Role::Temperature)?.values();
            let end = first_nonfinite(v).min(stable_end);
            let part = v.get(row.min(end)..end)?;
            stats::temperature_fluctuation(part, n_df, None, self.opts.thresholds.fluctuation_band)
        };
        // One after the other: each needs a whole-column working copy (residuals, squared
        // deviations), and run side by side the two copies would raise the peak memory.
        let drift = drift_task();
        let fluctuation = fluctuation_task();
        if let Some((role, d)) = drift {
            if let Some(c) = columns.iter_mut().find(|c| c.role == Some(role)) {
                c.drift = Some(d);
            }
        }
        if let Some(f) = fluctuation {
            if let Some(c) = columns
                .iter_mut()
                .find(|c| c.role == Some(Role::Temperature))
            {
                c.fluctuation = Some(f);
            }
        }

        RunAnalysis {
            segment: si,
            first_row,
            columns,
            equilibration: run_eq,
            equilibration_from: from,
            ensemble,
            degrees_of_freedom: n_df,
            progress: Progress::default(),
            status: RunStatus::Settling,
            folding: None,
        }
    }

    /// Drift and fluctuation alerts from the last full computation.
    fn evaluate_summaries(&mut self, table: &RunTable, si: usize) {
        let Some(a) = self.cached.clone() else {
            return;
        };
        let Some(seg) = table.segments.get(si) else {
            return;
        };
        let loc = self.folding.locator(seg, si, a.first_row);
        let index = self.evaluation;
        for c in &a.columns {
            if let Some(d) = &c.drift {
                let ev = DriftEvidence {
                    column: &c.name,
                    unit: &c.unit,
                    slope_per_ns: d.slope_per_ns,
                    stderr_per_ns: d.stderr_per_ns,
                    kt_per_ns_per_dof: d.kt_per_ns_per_dof,
                    from_row: a.first_row + d.from_row,
                };
                self.engine.evaluate_drift(&ev, index, &loc);
            }
            if let (Some(f), Some(row)) = (&c.fluctuation, a.equilibration.and_then(|e| e.row())) {
                let ev = FluctuationEvidence {
                    column: &c.name,
                    observed: f.observed,
                    expected: f.expected,
                    low: f.low,
                    high: f.high,
                    degrees_of_freedom: f.n_df,
                    from_row: a.first_row + row,
                };
                let wrong = f.verdict != FluctuationVerdict::Consistent;
                self.engine.evaluate_fluctuation(&ev, wrong, index, &loc);
            }
        }
    }

    /// The rows the per-row detectors of segment `si` look at in this update: from the
    /// first row not yet scanned (or the first row a new restart replaced). Pure; the
    /// restarts are reported and the counters moved by [`Analyzer::scan_segment`].
    fn scan_plan(&self, si: usize, seg: &Segment, finished: bool) -> ScanPlan {
        let n = seg.rows();
        let mut start = self.scanned.get(si).copied().unwrap_or(0);
        let mut spike_start = self.spike_scanned.get(si).copied().unwrap_or(0);
        let seen = self.restarts_seen.get(si).copied().unwrap_or(0);
        for r in seg.restarts.iter().skip(seen) {
            let row_in_seg = seg.lines.row_at_or_after(r.line);
            start = start.min(row_in_seg);
            spike_start = spike_start.min(row_in_seg);
        }
        let k = self.opts.thresholds.spike_window.max(1);
        ScanPlan {
            n,
            start: start.min(n),
            spike_start: spike_start.min(n),
            spike_end: if finished { n } else { n.saturating_sub(k) },
            spike_scanned: spike_start,
        }
    }

    /// Spike and runaway rows of every analysed column of segment `si` over `plan`,
    /// columns on all cores (pure but for the runaway baseline caches, which only memoise).
    fn detect(&mut self, si: usize, seg: &Segment, plan: &ScanPlan) -> Vec<Option<ColumnFlags>> {
        let t = &self.opts.thresholds;
        let k = t.spike_window.max(1);
        let context_sigmas = spike_threshold(
            t.spike_sigmas,
            (plan.n + self.forgotten_rows(si)).saturating_mul(analysed_count(seg)),
        );
        let ropts = runaway_options(t);
        let hopts = HampelOptions {
            half_window: k,
            threshold: t.spike_sigmas,
            ..HampelOptions::default()
        };
        let Some(cursors) = self.cursors.get_mut(si) else {
            return Vec::new();
        };
        cursors.resize_with(seg.columns.len(), ColumnCursor::default);
        let jobs: Vec<(&Column, BaselineCache)> = seg
            .columns
            .iter()
            .zip(cursors.iter())
            .map(|(c, cur)| (c, cur.baseline))
            .collect();
        let new_rows = plan.n - plan.start.min(plan.spike_start);
        let parallel = new_rows.saturating_mul(analysed_count(seg)) >= PARALLEL_MIN_VALUES;
        let done = map_in_order(&jobs, parallel, |&(col, cache)| {
            if !has_statistics(col.spec.role) {
                return None;
            }
            let values = col.values();
            // Spikes (Hampel), rows whose full window is available.
            let spikes = if plan.spike_end > plan.spike_start {
                let lo = plan.spike_start.saturating_sub(k);
                let hi = (plan.spike_end + k).min(plan.n);
                values
                    .get(lo..hi)
                    .map(|w| stats::hampel(w, &hopts))
                    .unwrap_or_default()
                    .into_iter()
                    .map(|i| i + lo)
                    .filter(|i| (plan.spike_start..plan.spike_end).contains(i))
                    .filter(|&i| beyond_context(values, i, k, context_sigmas))
                    .collect()
            } else {
                Vec::new()
            };
            let mut cache = cache;
            let runaway = runaway_flags(values, plan.start..plan.n, &ropts, &mut cache, false);
            Some((ColumnFlags { spikes, runaway }, cache))
        });
        done.into_iter()
            .zip(cursors.iter_mut())
            .map(|(d, cur)| {
                d.map(|(flags, cache)| {
                    cur.baseline = cache;
                    flags
                })
            })
            .collect()
    }

    /// Per-row alerts on the new rows of segment `si` (`plan`, with the spike and runaway
    /// rows already found by [`Analyzer::detect`]), fed to the engine column by column.
    fn scan_segment(
        &mut self,
        table: &RunTable,
        si: usize,
        seg: &Segment,
        offset: usize,
        plan: &ScanPlan,
        flags: &[Option<ColumnFlags>],
    ) {
        let loc = TableLocator::new(seg, offset);
        // Restarts: rows from the restart on were replaced; report and rescan them.
        let seen = self.restarts_seen.get(si).copied().unwrap_or(0);
        for r in seg.restarts.iter().skip(seen) {
            let row_in_seg = seg.lines.row_at_or_after(r.line);
            self.engine
                .restart(offset + row_in_seg, r.rows_replaced, &loc);
        }
        if let Some(s) = self.restarts_seen.get_mut(si) {
            *s = seg.restarts.len();
        }
        let ScanPlan {
            n,
            start,
            spike_start,
            spike_end,
            ..
        } = *plan;
        if let Some(c) = self.cursors.get_mut(si) {
            c.resize_with(seg.columns.len(), ColumnCursor::default);
        }
        let t = self.opts.thresholds.clone();
        let is_last = si + 1 == table.segments.len();
        let analysis = if is_last { self.cached.clone() } else { None };
        let run_row = analysis
            .as_ref()
            .and_then(|a| a.equilibration.and_then(|e| e.row()));

        let context_sigmas = spike_threshold(
            t.spike_sigmas,
            (n + self.forgotten_rows(si)).saturating_mul(analysed_count(seg)),
        );
        for (ci, col) in seg.columns.iter().enumerate() {
            let name = col.spec.name.as_str();
            let unit = col.spec.unit.map(|u| u.to_string()).unwrap_or_default();
            let values = col.values();
            // Non-finite.
            self.engine
                .scan_nonfinite(name, &unit, values, start..n, offset, &loc);
            if !has_statistics(col.spec.role) {
                continue;
            }
            let Some(found) = flags.get(ci).and_then(Option::as_ref) else {
                continue;
            };
            // Spikes (Hampel), rows whose full window is available.
            if spike_end > spike_start {
                let flagged = &found.spikes;
                if let Some(cur) = self.cursors.get_mut(si).and_then(|c| c.get_mut(ci)) {
                    cur.spikes += flagged.len() as u64;
                }
                let clear = t.spike_clear_rows;
                let unit_s = unit.clone();
                self.engine.scan_flagged(
                    AlertKind::Spike,
                    name,
                    Sustain::immediate(clear),
                    offset + spike_start..offset + spike_end,
                    flagged.iter().map(|r| r + offset),
                    |since, _| {
                        let v = values.get(since - offset).copied().unwrap_or(f64::NAN);
                        crate::alert::Alert::new(
                            AlertKind::Spike,
                            Severity::Warning,
                            format!(
                                "{name} jumps to {} at this row, far outside its neighbours \
                                 (more than {} robust SDs from the moving median); look at this \
                                 step in the simulation's output",
                                crate::alert::format_number(v, &unit_s),
                                crate::alert::format_number(context_sigmas, "")
                            ),
                        )
                        .column(name)
                        .value(v, &unit_s)
                        .at(since, &loc)
                    },
                );
            }
            // Runaway growth.
            self.scan_runaway(name, &unit, values, &found.runaway, start..n, offset, &loc);
            // Off-target temperature / pressure.
            let (kind, target, tolerance) = match col.spec.role {
                Some(Role::Temperature) => (
                    AlertKind::TemperatureOffTarget,
                    self.opts.target_temperature.clone(),
                    t.temperature_tolerance,
                ),
                Some(Role::Pressure) => (
                    AlertKind::PressureOffTarget,
                    self.opts.target_pressure.clone(),
                    t.pressure_tolerance,
                ),
                _ => continue,
            };
            let Some(target) = target else { continue };
            let Some(times) = time_values(seg) else {
                continue;
            };
            // Along a schedule: from the first row. A constant target: after the run's
            // onset; while the run has none, after the column's MSER-5 truncation point (the
            // usual warm-up cut), so a thermostat that leaves its target, which itself keeps
            // the run from settling, is still reported.
            let column = analysis
                .as_ref()
                .and_then(|a| a.columns.iter().find(|c| c.name == name));
            let start_row = if target.is_schedule() {
                Some(0)
            } else {
                run_row.or_else(|| column.and_then(|c| c.mser.map(|m| m.row)))
            };
            let Some(start_row) = start_row else { continue };
            let g = column
                .and_then(|c| {
                    c.production
                        .as_ref()
                        .and_then(|p| p.inefficiency)
                        .or(c.inefficiency_all)
                })
                .unwrap_or(1.0);
            let input = OffTargetInput {
                kind,
                column: name,
                unit: &unit,
                values,
                times,
                target: &target,
                tolerance,
                inefficiency: g,
                start_row: start_row.saturating_sub(self.forgotten_rows(si)),
                row_offset: offset,
            };
            self.engine.scan_off_target(&input, start..n, &loc);
        }
        if let Some(s) = self.scanned.get_mut(si) {
            *s = n;
        }
        if let Some(s) = self.spike_scanned.get_mut(si) {
            *s = plan.spike_scanned.max(spike_end);
        }
    }

    #[allow(clippy::too_many_arguments)]
    fn scan_runaway(
        &mut self,
        name: &str,
        unit: &str,
        values: &[f64],
        flagged: &[(usize, f64)],
        rows: Range<usize>,
        offset: usize,
        loc: &TableLocator<'_>,
    ) {
        let w = runaway_options(&self.opts.thresholds).window;
        let unit_s = unit.to_string();
        self.engine.scan_flagged(
            AlertKind::Runaway,
            name,
            Sustain::immediate(u32::try_from(w).unwrap_or(20)),
            offset + rows.start..offset + rows.end,
            flagged.iter().map(|p| p.0 + offset),
            |since, _| {
                let x = values.get(since - offset).copied().unwrap_or(f64::NAN);
                let rate = flagged
                    .iter()
                    .find(|p| p.0 == since - offset)
                    .map_or(f64::NAN, |p| p.1);
                let how = if rate.is_finite() {
                    format!(
                        "grows exponentially (tenfold every {} rows)",
                        crate::alert::format_number(rate, "")
                    )
                } else {
                    format!(
                        "is more than {RUNAWAY_FAR_SIGMAS} robust SDs away from its recent values"
                    )
                };
                crate::alert::Alert::new(
                    AlertKind::Runaway,
                    Severity::Critical,
                    format!(
                        "{name} {how}: the run is blowing up; stop it and check the time step, \
                         bad contacts and the last restart"
                    ),
                )
                .column(name)
                .value(x, &unit_s)
                .at(since, loc)
            },
        );
    }
}

/// Rows around a spike whose robust SD is the spike's yardstick besides the Hampel
/// window's own (common practice, no source).
pub const SPIKE_CONTEXT_ROWS: usize = 250;

/// Family-wise false-alarm probability of the spike test over a whole segment (all its
/// analysed columns): 1 % (common practice, no source).
pub const SPIKE_FAMILY_ALPHA: f64 = 0.01;

/// Threshold of the second spike test, in robust SDs: at least `sigmas`, and at least the
/// Bonferroni bound z with P(|Z| > z) = α / tests for `tests` Gaussian values (textbook
/// multiple-testing correction), so a healthy run of any length raises a spike alert with
/// probability about α at most. 5 SD for 2·10⁴ values, about 6.1 for 10⁷; capped at 8.
pub fn spike_threshold(sigmas: f64, tests: usize) -> f64 {
    use statrs::distribution::{ContinuousCDF, Normal};
    let p = SPIKE_FAMILY_ALPHA / (2.0 * tests.max(1) as f64);
    let z = Normal::new(0.0, 1.0)
        .ok()
        .map(|n| -n.inverse_cdf(p))
        .filter(|z| z.is_finite())
        .unwrap_or(sigmas);
    sigmas.max(z.min(8.0))
}

/// Second spike test: the value must also lie `sigmas` robust SDs of its wider context
/// (the 2·[`SPIKE_CONTEXT_ROWS`] rows around it) from the Hampel window's median. The MAD of
/// 2k+1 = 21 correlated rows is itself noisy (relative error about a quarter), so the
/// Hampel identifier alone flags about one healthy row in a thousand; the wider scale and
/// [`spike_threshold`] keep false alarms rare however long the run.
fn beyond_context(values: &[f64], i: usize, k: usize, sigmas: f64) -> bool {
    let Some(&x) = values.get(i) else {
        return false;
    };
    let window: Vec<f64> = values
        .get(i.saturating_sub(k)..(i + k + 1).min(values.len()))
        .unwrap_or(&[])
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    let context: Vec<f64> = values
        .get(i.saturating_sub(SPIKE_CONTEXT_ROWS)..(i + SPIKE_CONTEXT_ROWS).min(values.len()))
        .unwrap_or(&[])
        .iter()
        .copied()
        .filter(|v| v.is_finite())
        .collect();
    match (stats::median(&window), stats::robust_sd(&context)) {
        (Some(m), Some(sd)) => (x - m).abs() > sigmas * sd,
        _ => false,
    }
}

/// Rows per block of [`blockwise_inefficiency`] (common practice, no source).
pub const INEFFICIENCY_BLOCK_ROWS: usize = 500;

/// Statistical inefficiency of a series that may not be stationary: the median of g over
/// blocks of [`INEFFICIENCY_BLOCK_ROWS`] rows (g of the whole would grow with any trend or
/// step, METHODS §1.3). Used for the off-target window's standard error while the run has
/// no onset. O(N log block).
fn blockwise_inefficiency(x: &[f64]) -> Option<f64> {
    if x.len() < 2 * INEFFICIENCY_BLOCK_ROWS {
        return stats::inefficiency(x).map(|i| i.g);
    }
    let mut gs: Vec<f64> = x
        .chunks_exact(INEFFICIENCY_BLOCK_ROWS)
        .filter_map(|c| stats::inefficiency(c).map(|i| i.g))
        .collect();
    gs.sort_by(f64::total_cmp);
    stats::median(&gs)
}

/// Runaway options from the thresholds.
pub fn runaway_options(t: &Thresholds) -> RunawayOptions {
    RunawayOptions {
        window: t.runaway_window.max(3),
        min_r_squared: t.runaway_min_r2,
        min_growth: RUNAWAY_MIN_GROWTH,
        min_sigmas: t.runaway_min_sigmas,
        far_sigmas: RUNAWAY_FAR_SIGMAS,
    }
}

/// Rows in `rows` that grow exponentially or sit far out (with the growth's samples per
/// decade, NaN for a far excursion), judged against the median and MAD of the
/// [`RUNAWAY_BASELINE_ROWS`] rows that end at the last multiple of
/// [`RUNAWAY_BASELINE_STEP`] before the checked window (`cache` keeps the last baseline).
/// O(rows) plus O(window) per row that passes the cheap size test. With `first_only` it
/// stops at the first flagged row.
fn runaway_flags(
    values: &[f64],
    rows: Range<usize>,
    opts: &RunawayOptions,
    cache: &mut Option<(usize, Option<stats::Baseline>)>,
    first_only: bool,
) -> Vec<(usize, f64)> {
    let w = opts.window.max(3);
    let mut flagged: Vec<(usize, f64)> = Vec::new();
    let mut scratch = Vec::with_capacity(RUNAWAY_BASELINE_ROWS);
    // The baseline's end changes every RUNAWAY_BASELINE_STEP rows: one division per
    // step, not per row.
    let mut base_end = 0;
    let mut next_step = 0;
    for r in rows.start.max(2 * w - 1)..rows.end {
        let Some(&x) = values.get(r) else { break };
        if !x.is_finite() {
            continue;
        }
        if r >= next_step {
            let steps = (r + 1 - w) / RUNAWAY_BASELINE_STEP;
            base_end = steps * RUNAWAY_BASELINE_STEP;
            next_step = (steps + 1) * RUNAWAY_BASELINE_STEP + w - 1;
        }
        let base = match *cache {
            Some((end, b)) if end == base_end => b,
            _ => {
                let b = values
                    .get(base_end.saturating_sub(RUNAWAY_BASELINE_ROWS)..base_end)
                    .and_then(|part| stats::Baseline::from_slice_with(part, &mut scratch));
                *cache = Some((base_end, b));
                b
            }
        };
        let Some(base) = base else { continue };
        let dev = (x - base.median).abs();
        if dev <= opts.min_sigmas * base.scale {
            continue;
        }
        let far = dev > opts.far_sigmas * base.scale;
        let growth = values
            .get(..=r)
            .and_then(|v| stats::runaway::exponential_growth(v, &base, opts));
        if far || growth.is_some() {
            flagged.push((r, growth.map_or(f64::NAN, |g| g.samples_per_decade)));
            if first_only {
                break;
            }
        }
    }
    flagged
}

fn empty_analysis(nseg: usize) -> RunAnalysis {
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

fn finite_part_mean(values: &[f64], from: usize) -> Option<f64> {
    let end = first_nonfinite(values);
    stats::mean(values.get(from.min(end)..end)?)
}

/// Production statistics of `x[row..]`; `g` and `n_eff` are the onset's, computed on the
/// same full-resolution tail by the onset search (not recomputed).
fn production(x: &[f64], row: usize, g: f64, n_eff: f64) -> Option<ProductionStats> {
    let tail = x.get(row..)?;
    let (summary, var_pop) = stats::summarize_with_variance(tail)?;
    let block = stats::blocking::block_average_with_variance(tail, var_pop);
    Some(ProductionStats {
        first_row: row,
        count: tail.len(),
        mean: summary.mean,
        std: summary.std,
        variance_population: var_pop,
        sem_block: block.map(|b| b.sem),
        sem_from_g: var_pop.and_then(|v| stats::sem_from_g(v, g, tail.len())),
        inefficiency: Some(g),
        estimator: Estimator::FirstNegative,
        effective_samples: Some(n_eff),
        min: summary.min,
        max: summary.max,
    })
}

fn row_interval_ps(seg: &Segment) -> Option<f64> {
    let t = time_values(seg)?;
    let n = t.len();
    if n < 2 {
        return None;
    }
    let dt = (t.last()? - t.first()?) / (n - 1) as f64;
    (dt.is_finite() && dt > 0.0).then_some(dt)
}

fn trend(tail: &[f64], seg: &Segment, _row: usize) -> Option<TrendSummary> {
    let tt = stats::trend_test(tail, TREND_MAX_POINTS)?;
    let p = tt
        .hamed_rao
        .map(|h| h.p_value)
        .unwrap_or(tt.mann_kendall.p_value);
    let slope_per_ns = match (tt.sen_slope_per_sample, row_interval_ps(seg)) {
        (Some(s), Some(dt)) => Some(s / dt * 1000.0),
        _ => None,
    };
    Some(TrendSummary {
        slope_per_ns,
        p_value: p,
        still_changing: p < TREND_P_VALUE,
    })
}

#[allow(clippy::too_many_arguments)]
fn drift_summary(
    values: &[f64],
    times: &[f64],
    row: usize,
    opts: &AnalysisOptions,
    n_df: Option<f64>,
    temperature_mean: Option<f64>,
    kinetic_mean: Option<f64>,
    is_energy: bool,
) -> Option<DriftSummary> {
    let end = first_nonfinite(values).min(first_nonfinite(times));
    let y = values.get(row..end)?;
    let t = times.get(row..end)?;
    let d = stats::drift(t, y, SlopeSeMethod::SqrtG, DRIFT_CONFIDENCE)?;
    let slope = stats::per_ns(d.fit.slope);
    let se = stats::per_ns(d.se);
    let (kt, how) = if !is_energy {
        (None, None)
    } else if let (Some(n), Some(temp)) = (n_df, temperature_mean) {
        (
            stats::kt_per_ns_per_dof(slope, n, temp),
            Some("dof-and-temperature"),
        )
    } else if let Some(k) = kinetic_mean.filter(|k| *k > 0.0) {
        // <K> = N_df k_B T / 2 (equipartition), so N_df k_B T = 2<K>.
        (Some(slope / (2.0 * k)), Some("kinetic-energy"))
    } else {
        (None, None)
    };
    Some(DriftSummary {
        from_row: row,
        slope_per_ns: slope,
        stderr_per_ns: se,
        method: d.method,
        ci_low_per_ns: stats::per_ns(d.ci_low),
        ci_high_per_ns: stats::per_ns(d.ci_high),
        per_atom_per_ns: opts.atoms.and_then(|a| stats::per_atom(slope, a)),
        kt_per_ns_per_dof: kt,
        normalisation: how.filter(|_| kt.is_some()),
        significant: se > 0.0 && (slope / se).abs() > opts.thresholds.drift_sigmas,
    })
}

/// Used by callers that only need the key for run-wide alerts.
pub const RUN_KEY: &str = RUN;
