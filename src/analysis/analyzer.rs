//! The incremental analyser: what was already looked at, when the statistics are due,
//! the run's status and progress.

use super::{
    empty_analysis, folded, time_values, AnalysisOptions, ColumnCursor, ColumnFlags, DriftPer,
    Progress, RunAnalysis, ScanPlan,
};
use crate::alert::{
    AlertEngine, AlertKind, DriftEvidence, FluctuationEvidence, RunStatus, Severity, StatusInputs,
};
use crate::stats::{self, Equilibration, FluctuationVerdict};
use crate::table::RunTable;

/// Rows of arrival times used for the throughput fit.
pub const THROUGHPUT_WINDOW: usize = 200;

/// The incremental analyser: owns the alert engine and what was already looked at.
#[derive(Debug, Clone)]
pub struct Analyzer {
    pub(super) opts: AnalysisOptions,
    pub(super) engine: AlertEngine,
    /// Per segment: rows already scanned by the per-row detectors.
    pub(super) scanned: Vec<usize>,
    /// Per segment: rows scanned by the spike detector.
    pub(super) spike_scanned: Vec<usize>,
    /// Per segment: restarts already reported.
    pub(super) restarts_seen: Vec<usize>,
    /// Per segment and column.
    pub(super) cursors: Vec<Vec<ColumnCursor>>,
    /// Rows of the last segment at the last full computation, and which segment.
    pub(super) full_at: Option<(usize, usize)>,
    pub(super) evaluation: u64,
    pub(super) cached: Option<RunAnalysis>,
    pub(super) skipped_seen: u64,
    /// Rows forgotten and folded (bounded memory while following).
    pub(super) folding: folded::FoldState,
    /// Segment and row (from the segment's start, forgotten rows included) where the stage
    /// being written starts: the full statistics leave out the rows before it.
    pub(super) stage_start: Option<(usize, usize)>,
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
            stage_start: None,
        }
    }

    /// Cuts the full statistics at the start of the stage being written: row `row` of
    /// segment `segment` (numbered from the segment's start, forgotten rows included), as a
    /// finished file's report cuts them at its last stage. `None`, or row 0: the whole
    /// segment. The per-row detectors are not cut. The statistics are computed again at the
    /// next update when the start moved. Returns whether it moved.
    pub fn set_stage_start(&mut self, start: Option<(usize, usize)>) -> bool {
        let start = start.filter(|&(_, row)| row > 0);
        if start == self.stage_start {
            return false;
        }
        self.stage_start = start;
        self.full_at = None;
        self.folding.restart_summaries_at(start);
        true
    }

    /// The stage start within segment `si`, when the stage does not start with it.
    pub(super) fn stage_start_in(&self, si: usize) -> Option<usize> {
        self.stage_start
            .filter(|&(seg, row)| seg == si && row > 0)
            .map(|(_, row)| row)
    }

    /// Whether the full statistics were computed before the newest rows of `table`'s last
    /// segment (they are computed again once it grew by a tenth).
    pub fn statistics_behind(&self, table: &RunTable) -> bool {
        let Some(last) = table.segments.len().checked_sub(1) else {
            return false;
        };
        self.full_at
            .is_none_or(|(seg, rows)| seg != last || rows != self.segment_total_rows(table, last))
    }

    /// Makes the next [`update`](Self::update) compute the full statistics, whatever rows
    /// came since the last computation.
    pub fn recompute_at_next_update(&mut self) {
        self.full_at = None;
    }

    /// Rows of segment `si` forgotten from the table's front so far (folded for memory).
    pub fn segment_rows_forgotten(&self, si: usize) -> usize {
        self.forgotten_rows(si)
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
        let (status, reason) = self.status(&analysis, ended, no_rows);
        analysis.status = status;
        analysis.status_reason = reason;
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

    /// The run's status and the rule that decided it (rules of [`RunStatus`]): an active
    /// critical alert of any kind makes the run unstable.
    fn status(&self, a: &RunAnalysis, ended: bool, no_rows: bool) -> (RunStatus, String) {
        let active = self.engine.active();
        let where_ = |x: &crate::alert::Alert| {
            let col = x
                .column
                .as_deref()
                .map(|c| format!(" on {c}"))
                .unwrap_or_default();
            let row = x.row.map(|r| format!(" from row {r}")).unwrap_or_default();
            format!("{}{col}{row}", x.kind.name())
        };
        let critical = active.iter().find(|x| x.severity == Severity::Critical);
        let stalled = active.iter().find(|x| x.kind == AlertKind::Stalled);
        let drifting = active
            .iter()
            .find(|x| x.kind == AlertKind::Drift && x.severity >= Severity::Warning);
        let equilibrated = matches!(a.equilibration, Some(Equilibration::Onset { .. }));
        let changing: Vec<&str> = a
            .columns
            .iter()
            .filter(|c| c.trend.as_ref().is_some_and(|t| t.still_changing))
            .map(|c| c.name.as_str())
            .collect();
        let status = RunStatus::decide(&StatusInputs {
            unstable: critical.is_some(),
            stalled: stalled.is_some(),
            finished: ended,
            no_rows,
            drifting: drifting.is_some(),
            equilibrated,
            still_changing: !changing.is_empty(),
        });
        let reason = match status {
            RunStatus::Unstable => format!(
                "a critical alert is not cleared: {}",
                critical.map(|x| where_(x)).unwrap_or_default()
            ),
            RunStatus::Finished => "the run is over".to_string(),
            RunStatus::Waiting => "no data row yet".to_string(),
            RunStatus::Stalled => "no new row for the stall limit".to_string(),
            RunStatus::Drifting => format!(
                "a drift alert is active: {}",
                drifting.map(|x| where_(x)).unwrap_or_default()
            ),
            RunStatus::Settling if !equilibrated => match a.equilibration {
                Some(Equilibration::TooShort) => "too few rows to judge equilibration".to_string(),
                _ => "not equilibrated yet".to_string(),
            },
            RunStatus::Settling => format!(
                "still changing after the run's onset: {}",
                changing.join(", ")
            ),
            RunStatus::Steady => {
                "equilibrated, no trend, no drift and no critical alert".to_string()
            }
        };
        (status, reason)
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

    /// Drift and fluctuation alerts from the last full computation.
    pub(super) fn evaluate_summaries(&mut self, table: &RunTable, si: usize) {
        let Some(a) = self.cached.clone() else {
            return;
        };
        let Some(seg) = table.segments.get(si) else {
            return;
        };
        let loc = self.folding.locator(seg, si, a.first_row);
        let index = self.evaluation;
        // The row each evaluation speaks for: the newest row analysed.
        let last_row = (a.first_row + self.segment_total_rows(table, si)).saturating_sub(1);
        for c in &a.columns {
            if let Some(d) = c
                .drift
                .as_ref()
                .filter(|d| d.conservation && d.per == DriftPer::Ns)
            {
                let ev = DriftEvidence {
                    column: &c.name,
                    unit: &c.unit,
                    slope_per_ns: d.slope_per_ns,
                    stderr_per_ns: d.stderr_per_ns,
                    kt_per_ns_per_dof: d.kt_per_ns_per_dof,
                    from_row: a.first_row + d.from_row,
                    to_row: last_row,
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
                    to_row: last_row,
                };
                let wrong = f.verdict != FluctuationVerdict::Consistent;
                self.engine.evaluate_fluctuation(&ev, wrong, index, &loc);
            }
        }
    }
}
