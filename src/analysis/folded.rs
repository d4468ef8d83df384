//! Bounded memory for endless runs: past a cap on the rows kept at full resolution
//! (`plateau check --follow --keep-rows N`, `keep-rows` in plateau.toml), the oldest rows
//! of the last segment are folded into block summaries ([`FoldedSeries`], one per column,
//! plus one for the source lines) and forgotten from the table; the full statistics are
//! then computed from the folded view: the blocks of `b = 2^k` rows followed by the recent
//! rows at full resolution.
//!
//! Memory per followed run: at most `keep_rows` rows at full resolution per column (8 bytes
//! a value, plus 8 bytes a row for its line) and at most `keep_rows / 8` blocks of 40 bytes
//! per column, whatever the run's length.
//!
//! What stays exact once folded (tested against the unfolded analysis):
//! - row numbers and line numbers of alerts (rows are numbered through the run; the line of
//!   a folded row is known at block starts, which is where folded onsets fall);
//! - the per-row detectors (non-finite, spike, runaway): they only look at recent rows,
//!   and enough are kept behind their cursors (Hampel window, the spike context, the
//!   runaway baseline, the off-target window); the off-target detector also looks at
//!   recent rows but starts at the run's onset with its `g`, which are approximate;
//! - count, and for the production part from the reported first row: mean, std, min, max;
//! - the block-averaging levels at or above the block length (Flyvbjerg–Petersen), hence
//!   `sem` whenever the plateau lies at or above the block length.
//!
//! What becomes approximate ([`APPROXIMATE_WHEN_FOLDED`], told to the user):
//! - the onset (N_eff maximisation) and MSER: searched on block means, so the onset is a
//!   multiple of the block length;
//! - `inefficiency` (g) and with it `sem_from_g` and `effective_samples`: from the block
//!   means, `g ≈ b·s²_B·g_B/s²` (the variance of the mean written two ways);
//! - `sem` when the correlation time exceeds what the levels at or above `b` resolve;
//! - the trend test and the drift fit: on block means at their mean times;
//! - the fluctuation-size band: σ_T/⟨T⟩ is exact, the `g` of the squared deviations that
//!   sets the band's width comes from the recent rows;
//! - the ensemble inference: from the recent rows after the onset.
//!
//! A restart that goes back before the kept rows replaces only the kept rows: the folded
//! rows stay in the statistics.

use crate::alert::{RowLocator, RunStatus};
use crate::fold::{FoldedSeries, DEFAULT_KEEP_ROWS, MIN_KEEP_ROWS};
use crate::mapping::Role;
use crate::stats::Ensemble;
use crate::stats::{self, Equilibration, Estimator, FluctuationCheck, Moments};
use crate::table::{RunTable, Segment};

use super::results::DriftPer;
use super::{
    blockwise_inefficiency, drift_summary, empty_analysis, first_nonfinite, judge_trends,
    observable, runaway_flags, runaway_options, runaway_windows, time_values, trend_of_means,
    AnalysisOptions, Analyzer, ColumnAnalysis, ColumnFlags, EnsembleChoice, ProductionStats,
    Progress, RunAnalysis, TableLocator, TrendSummary, RUNAWAY_BASELINE_ROWS,
    RUNAWAY_BASELINE_STEP, SPIKE_CONTEXT_ROWS,
};

/// Folded blocks kept per column: at most `keep_rows / BLOCKS_DIVISOR`.
const BLOCKS_DIVISOR: usize = 8;

/// The capacity given to a folded series under a cap of `keep_rows` rows: a series keeps at
/// most a quarter of its capacity as blocks, `keep_rows / BLOCKS_DIVISOR`.
fn blocks_cap(keep_rows: usize) -> usize {
    (keep_rows / BLOCKS_DIVISOR) * 4
}

/// Statistics that are approximate once a run is folded (the JSON names of the report).
pub const APPROXIMATE_WHEN_FOLDED: [&str; 10] = [
    "equilibration",
    "mser_row",
    "sem",
    "sem_from_g",
    "inefficiency",
    "effective_samples",
    "trend",
    "drift",
    "fluctuation",
    "ensemble",
];

/// What the user is told about folding.
#[derive(Debug, Clone, PartialEq)]
pub struct FoldingSummary {
    /// The cap: rows kept at full resolution.
    pub keep_rows: usize,
    /// Rows of the analysed segment no longer kept at full resolution: held as block
    /// summaries (rows after a blow-up are dropped, as the statistics stop there anyway).
    pub rows_folded: u64,
    /// Rows forgotten from the table in all segments (earlier segments keep their last
    /// rows only).
    pub rows_forgotten: u64,
    /// Rows per folded block.
    pub block_rows: usize,
    /// First row (through the run) still kept at full resolution.
    pub full_resolution_from_row: u64,
    /// The names of the statistics that are approximate now.
    pub approximate: Vec<&'static str>,
}

impl FoldingSummary {
    /// One sentence for the user.
    pub fn describe(&self) -> String {
        format!(
            "memory cap of {} rows reached: rows before row {} are kept as block summaries of \
             {} rows; count, mean, std, min and max stay exact, approximate from now on: {}",
            self.keep_rows,
            self.full_resolution_from_row,
            self.block_rows,
            self.approximate.join(", ")
        )
    }
}

/// The folded part of the analysed segment.
#[derive(Debug, Clone)]
struct FoldedSegment {
    segment: usize,
    columns: Vec<FoldedSeries>,
    lines: FoldedSeries,
    /// Row (from the segment's start) of the first row in the summaries: the start of the
    /// stage being written (rows before it are forgotten unfolded), else 0.
    from: usize,
    /// Rows folded into the summaries (the stable part before a blow-up).
    folded: usize,
    /// Rows (from the segment's start) known to be before any blow-up: the runaway check
    /// starts after them, where its baseline is whole.
    clean_until: usize,
    /// Row (from the segment's start) where the statistics stop, once found: the first
    /// non-finite value or runaway growth. Fixed once found (it depends on earlier rows
    /// only), and rows after it are forgotten unfolded.
    stable_end: Option<usize>,
}

impl FoldedSegment {
    /// Empty summaries of segment `segment` (`columns` columns, `blocks_cap` blocks each)
    /// from row `from` on.
    fn empty(segment: usize, columns: usize, blocks_cap: usize, from: usize) -> FoldedSegment {
        FoldedSegment {
            segment,
            columns: (0..columns)
                .map(|_| FoldedSeries::with_cap(blocks_cap))
                .collect(),
            lines: FoldedSeries::with_cap(blocks_cap),
            from,
            folded: 0,
            clean_until: 0,
            stable_end: None,
        }
    }

    /// End of the stable part within the kept rows (`forgotten` rows before them).
    fn stable_kept(&self, seg: &Segment, forgotten: usize, opts: &AnalysisOptions) -> usize {
        match self.stable_end {
            Some(end) => end.saturating_sub(forgotten),
            None => stable_end(seg, opts, self.clean_until.saturating_sub(forgotten)),
        }
    }
}

/// Folding state of an [`Analyzer`].
#[derive(Debug, Clone, Default)]
pub(super) struct FoldState {
    /// Per segment: rows forgotten from the front of the table's segment.
    forgotten: Vec<usize>,
    last: Option<FoldedSegment>,
    keep_rows: Option<usize>,
}

impl FoldState {
    /// Makes the summaries of the folded segment start at a new stage start (`None`: the
    /// segment's start): empty again from that row, or from the first kept row when the
    /// start was already forgotten (its rows are then left out, not mixed with the stage
    /// before). Summaries that already start there, or that cannot reach back to an earlier
    /// start, are kept.
    pub(super) fn restart_summaries_at(&mut self, start: Option<(usize, usize)>) {
        let Some(f) = self.last.as_mut() else {
            return;
        };
        let row = match start {
            Some((seg, row)) if seg == f.segment => row,
            Some(_) => return,
            None => 0,
        };
        let forgotten = self.forgotten.get(f.segment).copied().unwrap_or(0);
        let from = row.max(forgotten);
        if from == f.from || (row < f.from && f.folded > 0) {
            return;
        }
        let cap = blocks_cap(self.keep_rows.unwrap_or(DEFAULT_KEEP_ROWS));
        let fresh = FoldedSegment::empty(f.segment, f.columns.len(), cap, from);
        *f = FoldedSegment {
            clean_until: f.clean_until,
            stable_end: f.stable_end,
            ..fresh
        };
    }

    /// The locator for rows of segment `si` (row `first_row` is its first row).
    pub(super) fn locator<'a>(
        &'a self,
        seg: &'a Segment,
        si: usize,
        first_row: usize,
    ) -> FoldedLocator<'a> {
        let kept_first_row = first_row + self.forgotten.get(si).copied().unwrap_or(0);
        let time_column = seg
            .columns
            .iter()
            .position(|c| c.spec.role == Some(Role::Time));
        FoldedLocator {
            kept: TableLocator::new(seg, kept_first_row),
            folded: self
                .last
                .as_ref()
                .filter(|f| f.segment == si)
                .map(|f| (f, time_column)),
            segment_first_row: first_row,
            kept_first_row,
        }
    }
}

/// The longest runaway growth window whose look-back fits in `room` rows (the shortest
/// when none does): with a small `--keep-rows`, the slowest-growth window (2,500 rows) is
/// not used on folded rows, whose look-back the cap cannot hold.
fn runaway_window_within(opts: &AnalysisOptions, room: usize) -> usize {
    let windows = runaway_windows(opts.thresholds.runaway_window);
    windows
        .iter()
        .copied()
        .filter(|w| w + RUNAWAY_BASELINE_ROWS + RUNAWAY_BASELINE_STEP <= room)
        .max()
        .unwrap_or(windows[0])
}

/// Rows the per-row detectors need behind the newest row, whatever their cursors say,
/// with the runaway look-back of window `w`.
fn detector_margin(opts: &AnalysisOptions, w: usize) -> usize {
    let t = &opts.thresholds;
    let k = t.spike_window.max(1);
    2 * k
        + SPIKE_CONTEXT_ROWS
        + w
        + RUNAWAY_BASELINE_ROWS
        + RUNAWAY_BASELINE_STEP
        + t.off_target_window.max(2)
}

/// First row of `seg` (kept rows) where the statistics stop: the first non-finite value or
/// runaway growth in any analysed column (as in the unfolded analysis), with the runaway
/// check from row `clean` on (earlier rows were checked before, with their whole baseline).
fn stable_end(seg: &Segment, opts: &AnalysisOptions, clean: usize) -> usize {
    let ropts = runaway_options(&opts.thresholds);
    seg.columns
        .iter()
        .filter(|c| observable(c))
        .map(|c| {
            let v = c.values();
            let end = first_nonfinite(v);
            let mut state = Default::default();
            runaway_flags(v, clean.min(end)..end, &ropts, &mut state, true)
                .first()
                .map_or(end, |f| f.0)
        })
        .min()
        .unwrap_or(seg.rows())
}

/// Block view of one column: blocks of `b` rows over folded and kept rows.
struct ColumnView {
    b: usize,
    blocks: Vec<Moments>,
    rest: Moments,
    means: Vec<f64>,
}

impl ColumnView {
    fn new(folded: &FoldedSeries, kept: &[f64]) -> ColumnView {
        let (blocks, rest) = folded.blocks_with_tail(kept);
        let means: Vec<Option<f64>> = blocks.iter().map(Moments::mean).collect();
        let means = crate::fold::fill_empty_means(&means);
        ColumnView {
            b: folded.block_len(),
            blocks,
            rest,
            means,
        }
    }

    /// Exact moments of the rows from block `from` on.
    fn moments_from(&self, from: usize) -> Moments {
        let mut m = Moments::new();
        for block in self.blocks.get(from..).unwrap_or_default() {
            m.merge(block);
        }
        m.merge(&self.rest);
        m
    }

    /// Statistical inefficiency of the rows from block `from` on, from the block means:
    /// the variance of the mean is `s²·g/N` in rows and `s²_B·g_B/M` in blocks, so
    /// `g = b·s²_B·g_B/s²` (at least 1).
    fn inefficiency_from(&self, from: usize, g_blocks: Option<f64>) -> Option<f64> {
        let tail = self.means.get(from..)?;
        let g_b = match g_blocks {
            Some(g) => g,
            None => stats::inefficiency(tail)?.g,
        };
        let var_b = stats::variance_population(tail)?;
        let m = self.moments_from(from);
        let var = m.m2()? / m.count() as f64;
        if var <= 0.0 {
            return Some(1.0);
        }
        let g = self.b as f64 * var_b * g_b / var;
        g.is_finite().then_some(g.max(1.0))
    }

    fn onset(&self) -> Equilibration {
        match stats::detect_equilibration(&self.means) {
            Equilibration::Onset { row, g, .. } => {
                let count = self.moments_from(row).count() as f64;
                match self.inefficiency_from(row, Some(g)) {
                    Some(g) => Equilibration::Onset {
                        row: row * self.b,
                        g,
                        n_eff: count / g,
                    },
                    None => Equilibration::NotYet,
                }
            }
            other => other,
        }
    }

    /// MSER-5 on block means: batches of about 5 rows (one block once blocks are longer).
    fn mser(&self) -> Option<stats::Mser> {
        let batch = (5 + self.b / 2) / self.b.max(1);
        let batch = batch.max(1);
        stats::equilibration::mser_batched(&self.means, batch).map(|m| stats::Mser {
            row: m.d * batch * self.b,
            batch_size: batch * self.b,
            ..m
        })
    }

    fn production(&self, row: usize) -> Option<ProductionStats> {
        let from = row / self.b;
        let m = self.moments_from(from);
        let count = m.count() as usize;
        let var_pop = m.m2().map(|m2| m2 / count as f64);
        let g = self.inefficiency_from(from, None);
        let block = stats::block_average(self.means.get(from..)?);
        Some(ProductionStats {
            first_row: from * self.b,
            count,
            mean: m.mean()?,
            std: m.std_dev(),
            variance_population: var_pop,
            sem_block: block.map(|b| b.sem),
            sem_from_g: match (var_pop, g) {
                (Some(v), Some(g)) => stats::sem_from_g(v, g, count),
                _ => None,
            },
            inefficiency: g,
            estimator: Estimator::FirstNegative,
            effective_samples: g.map(|g| count as f64 / g),
            min: m.min()?,
            max: m.max()?,
        })
    }

    fn trend(
        &self,
        row: usize,
        seg: &Segment,
        p: Option<&ProductionStats>,
    ) -> Option<TrendSummary> {
        let g = p.and_then(|p| p.inefficiency).unwrap_or(self.b as f64);
        let sem = p.and_then(|p| p.sem_block.or(p.sem_from_g));
        trend_of_means(self.means.get(row / self.b..)?, self.b, seg, g, sem)
    }
}

/// A row locator that knows the folded rows' lines and times at block starts.
pub(super) struct FoldedLocator<'a> {
    kept: TableLocator<'a>,
    folded: Option<(&'a FoldedSegment, Option<usize>)>,
    /// Row (through the run) of the segment's first row.
    segment_first_row: usize,
    /// Row (through the run) of the first kept row.
    kept_first_row: usize,
}

fn block_start(series: &FoldedSeries, row: usize, folded_rows: usize) -> Option<f64> {
    let b = series.block_len();
    if row >= folded_rows || !row.is_multiple_of(b) {
        return None;
    }
    match series.blocks().get(row / b) {
        Some(block) => block.min(),
        None => series.partial().min(),
    }
}

impl RowLocator for FoldedLocator<'_> {
    fn line(&self, row: usize) -> Option<u64> {
        if row >= self.kept_first_row {
            return self.kept.line(row);
        }
        let (f, _) = self.folded?;
        let r = row.checked_sub(self.segment_first_row + f.from)?;
        block_start(&f.lines, r, f.folded).map(|l| l as u64)
    }
    fn time(&self, row: usize) -> Option<f64> {
        if row >= self.kept_first_row {
            return self.kept.time(row);
        }
        let (f, time_column) = self.folded?;
        let r = row.checked_sub(self.segment_first_row + f.from)?;
        block_start(f.columns.get(time_column?)?, r, f.folded)
    }
}

impl Analyzer {
    /// Folds the oldest rows of the last segment when it holds more than `keep_rows` rows
    /// (at least [`MIN_KEEP_ROWS`]): their values go into block summaries kept here, and the
    /// caller must then forget them from its table with
    /// `LogParser::forget_all_but_last(keep)` (or `Segment::forget_all_but_last` on every
    /// segment) for the returned `keep`, before the next [`update`](Analyzer::update).
    /// Call it after `update`, so that the per-row detectors have seen the rows. Keeps
    /// enough rows behind the detectors' cursors, and folds in multiples of
    /// [`RUNAWAY_BASELINE_STEP`] rows so that the runaway baselines stay aligned as they
    /// would be unfolded. O(rows folded) plus one pass over the kept rows.
    pub fn fold_past(&mut self, table: &RunTable, keep_rows: usize) -> Option<usize> {
        let keep_rows = keep_rows.max(MIN_KEEP_ROWS);
        let last = table.segments.len().checked_sub(1)?;
        let seg = table.segments.get(last)?;
        let rows = seg.rows();
        if rows <= keep_rows {
            return None;
        }
        let t = &self.opts.thresholds;
        let k = t.spike_window.max(1);
        // The longest runaway window that half the cap can hold behind the newest rows.
        let w = runaway_window_within(&self.opts, keep_rows / 2);
        let scanned = self.scanned.get(last).copied().unwrap_or(0).min(rows);
        let spiked = self.spike_scanned.get(last).copied().unwrap_or(0).min(rows);
        let limits = [
            rows - keep_rows / 2,
            rows.saturating_sub(detector_margin(&self.opts, w)),
            spiked.saturating_sub(k.max(SPIKE_CONTEXT_ROWS) + k),
            ((scanned + 1).saturating_sub(w) / RUNAWAY_BASELINE_STEP * RUNAWAY_BASELINE_STEP)
                .saturating_sub(RUNAWAY_BASELINE_ROWS),
            scanned.saturating_sub(t.off_target_window.max(2)),
        ];
        let fold = limits.iter().copied().min().unwrap_or(0) / RUNAWAY_BASELINE_STEP
            * RUNAWAY_BASELINE_STEP;
        if fold == 0 {
            return None;
        }
        let keep = rows - fold;

        // The last segment's values go into the summaries (the stable part only).
        let stage_start = self.stage_start_in(last).unwrap_or(0);
        let state = &mut self.folding;
        let forgotten = state.forgotten.get(last).copied().unwrap_or(0);
        if state.last.as_ref().is_none_or(|f| f.segment != last) {
            let from = stage_start.max(forgotten);
            state.last = Some(FoldedSegment::empty(
                last,
                seg.columns.len(),
                blocks_cap(keep_rows),
                from,
            ));
        }
        if let Some(f) = state.last.as_mut() {
            let stable = f.stable_kept(seg, forgotten, &self.opts);
            if stable < rows {
                f.stable_end = Some(forgotten + stable);
            } else {
                f.clean_until = forgotten + rows;
            }
            // Only while every forgotten row from the summaries' first row on was folded (no
            // blow-up among them); rows before that first row (an earlier stage) are not.
            let n = fold.min(stable);
            let skip = f.from.saturating_sub(forgotten).min(n);
            if f.from + f.folded == forgotten + skip {
                for (series, column) in f.columns.iter_mut().zip(&seg.columns) {
                    series.fold_values(column.values().get(skip..n).unwrap_or_default());
                }
                let lines: Vec<f64> = seg
                    .lines
                    .iter()
                    .skip(skip)
                    .take(n - skip)
                    .map(|l| l as f64)
                    .collect();
                f.lines.fold_values(&lines);
                f.folded += n - skip;
            }
        }
        state.keep_rows = Some(keep_rows);

        // Every segment forgets all but `keep` rows: shift the detectors' cursors.
        state.forgotten.resize(table.segments.len(), 0);
        for (si, s) in table.segments.iter().enumerate() {
            let drop = s.rows().saturating_sub(keep);
            if drop == 0 {
                continue;
            }
            if let Some(x) = state.forgotten.get_mut(si) {
                *x += drop;
            }
            if let Some(x) = self.scanned.get_mut(si) {
                *x = x.saturating_sub(drop);
            }
            if let Some(x) = self.spike_scanned.get_mut(si) {
                *x = x.saturating_sub(drop);
            }
            for cursor in self.cursors.get_mut(si).into_iter().flatten() {
                // A multiple of the baseline step keeps the cached baseline's rows; any
                // other drop (earlier segments, already scanned) recomputes it.
                cursor.baseline.forget_rows(drop);
            }
        }
        Some(keep)
    }

    /// Rows forgotten from the front of all segments so far.
    pub fn rows_forgotten(&self) -> u64 {
        self.folding.forgotten.iter().map(|&r| r as u64).sum()
    }

    /// Rows of segment `si` forgotten from the table's front.
    pub(super) fn forgotten_rows(&self, si: usize) -> usize {
        self.folding.forgotten.get(si).copied().unwrap_or(0)
    }

    /// Rows of segment `si` through its whole length (forgotten and kept).
    pub(super) fn segment_total_rows(&self, table: &RunTable, si: usize) -> usize {
        self.forgotten_rows(si) + table.segments.get(si).map_or(0, Segment::rows)
    }

    /// Rows the last segment must grow by before the full statistics are recomputed: 10 %
    /// (at least 50) while unfolded, a geometric schedule; once folded a computation costs
    /// O(keep_rows) whatever the run's length, so also every `keep_rows / 4` rows, which
    /// keeps the statistics fresh at a bounded cost per row.
    pub(super) fn recompute_step(&self, rows: usize) -> usize {
        let geometric = (rows / 10).max(50);
        match (&self.folding.last, self.folding.keep_rows) {
            (Some(_), Some(cap)) => geometric.min(cap / 4),
            _ => geometric,
        }
    }

    /// The full statistics of segment `si`: from the folded view when it was folded, else
    /// [`Analyzer::full`] (with rows numbered after the forgotten rows of earlier segments).
    ///
    /// With a stage start in the segment ([`Analyzer::set_stage_start`]), only the rows from
    /// it on are analysed, and the rows found are still numbered from the segment's start.
    pub(super) fn full_view(
        &self,
        table: &RunTable,
        si: usize,
        known: Option<&[Option<ColumnFlags>]>,
    ) -> RunAnalysis {
        let before: usize = (0..si).map(|j| self.forgotten_rows(j)).sum();
        let forgotten = self.forgotten_rows(si);
        let stage_start = self.stage_start_in(si);
        let folded = self.folding.last.as_ref().filter(|f| f.segment == si);
        // The stage starts within the kept rows, and no row of it is folded.
        let cut =
            stage_start.filter(|&start| start > forgotten && folded.is_none_or(|f| f.folded == 0));
        match (folded, cut, table.segments.get(si)) {
            (_, Some(start), Some(seg)) if start - forgotten < seg.rows() => {
                let first_row: usize = before
                    + table
                        .segments
                        .iter()
                        .take(si)
                        .map(Segment::rows)
                        .sum::<usize>();
                let stage = crate::stages::sub_segment(seg, &(start - forgotten..seg.rows()));
                let mut a = self.full_segment(&stage, si, first_row, None);
                shift_rows(&mut a, start);
                a
            }
            (Some(f), _, _) => self.folded_full(table, si, f),
            _ => {
                let mut a = self.full(table, si, known);
                a.first_row += before;
                a
            }
        }
    }

    fn folded_full(&self, table: &RunTable, si: usize, f: &FoldedSegment) -> RunAnalysis {
        let Some(seg) = table.segments.get(si) else {
            return empty_analysis(si + 1);
        };
        let first_row: usize = (0..si).map(|j| self.segment_total_rows(table, j)).sum();
        let forgotten = self.forgotten_rows(si);
        let kept_stable = f.stable_kept(seg, forgotten, &self.opts);
        // Rows below are numbered from the summaries' first row (`f.from`, the start of the
        // stage being written), then shifted to the segment's numbering at the end.
        let folded_rows = forgotten.saturating_sub(f.from);
        let kept_part = |values: &'_ [f64]| -> Vec<f64> {
            let end = first_nonfinite(values).min(kept_stable);
            values.get(..end).unwrap_or_default().to_vec()
        };
        let views: Vec<Option<ColumnView>> = seg
            .columns
            .iter()
            .zip(&f.columns)
            .map(|(c, folded)| {
                observable(c).then(|| ColumnView::new(folded, &kept_part(c.values())))
            })
            .collect();
        let mut columns: Vec<ColumnAnalysis> = seg
            .columns
            .iter()
            .zip(&views)
            .map(|(c, view)| {
                let values = c.values();
                let (equilibration, mser, production, trend) = match view {
                    Some(v) => {
                        let eq = v.onset();
                        let production = eq.row().and_then(|row| v.production(row));
                        let trend = eq
                            .row()
                            .and_then(|row| v.trend(row, seg, production.as_ref()));
                        (Some(eq), v.mser(), production, trend)
                    }
                    None => (None, None, None, None),
                };
                ColumnAnalysis {
                    count: folded_rows + values.len(),
                    equilibration,
                    mser,
                    production,
                    trend,
                    inefficiency_all: view
                        .as_ref()
                        .and_then(|_| blockwise_inefficiency(&kept_part(values))),
                    ..ColumnAnalysis::described(c)
                }
            })
            .collect();

        let (run_eq, from) = run_onset(&columns);
        let run_row = run_eq.and_then(|e| e.row());
        let kept_from = |row: usize| row.saturating_sub(folded_rows);

        // Ensemble: from the recent rows after the onset.
        let ensemble = match self.opts.ensemble {
            Some(e) => Some(EnsembleChoice {
                ensemble: e,
                given: true,
                reason: "given with --ensemble".to_string(),
            }),
            None => {
                let part = |role: Role| -> Option<Vec<f64>> {
                    let v = kept_part(seg.column(role)?.values());
                    v.get(kept_from(run_row.unwrap_or(0)).min(v.len())..)
                        .map(<[f64]>::to_vec)
                };
                let (total, kinetic, volume) =
                    (part(Role::Total), part(Role::Kinetic), part(Role::Volume));
                stats::infer_ensemble(total.as_deref(), kinetic.as_deref(), volume.as_deref()).map(
                    |g| EnsembleChoice {
                        ensemble: g.ensemble,
                        given: false,
                        reason: format!("{} (recent rows)", g.reason),
                    },
                )
            }
        };
        let n_df = self.opts.degrees_of_freedom();
        let view_of = |role: Role| -> Option<&ColumnView> {
            let ci = seg.columns.iter().position(|c| c.spec.role == Some(role))?;
            views.get(ci)?.as_ref()
        };

        // Drift: on block means at their mean times, after the run's onset.
        let nve = ensemble
            .as_ref()
            .is_some_and(|e| e.ensemble == Ensemble::Nve);
        let (drift_role, conservation) = if seg.column(Role::Conserved).is_some() {
            (Some(Role::Conserved), true)
        } else if seg.column(Role::Total).is_some() {
            (Some(Role::Total), nve)
        } else {
            (None, false)
        };
        let drift_from =
            run_row.or_else(|| matches!(run_eq, Some(Equilibration::NotYet)).then_some(0));
        let time_view = seg
            .columns
            .iter()
            .position(|c| c.spec.role == Some(Role::Time))
            .and_then(|ti| {
                Some(ColumnView::new(
                    f.columns.get(ti)?,
                    &kept_part(time_values(seg)?),
                ))
            });
        if let (Some(role), Some(row), Some(tv)) = (drift_role, drift_from, &time_view) {
            if let Some(v) = view_of(role) {
                let from = row / v.b;
                let mean_from = |r: Role| view_of(r).and_then(|x| x.moments_from(from).mean());
                let n = v.means.len().min(tv.means.len());
                let y = v.means.get(from..n).unwrap_or_default();
                let t = tv.means.get(from..n).unwrap_or_default();
                if let Some(c) = columns.iter_mut().find(|c| c.role == Some(role)) {
                    c.drift = drift_summary(
                        y,
                        t,
                        0,
                        &self.opts,
                        n_df,
                        mean_from(Role::Temperature),
                        mean_from(Role::Kinetic),
                        c.unit == "kJ/mol",
                        DriftPer::Ns,
                        conservation,
                    )
                    .map(|mut d| {
                        d.from_row = from * v.b;
                        d
                    });
                }
            }
        }

        let conserved_name = columns
            .iter()
            .find(|c| c.drift.as_ref().is_some_and(|d| d.conservation))
            .map(|c| c.name.clone());
        judge_trends(&mut columns, conserved_name.as_deref());

        // Fluctuation size: σ_T/⟨T⟩ exact from the moments; the band's g from recent rows.
        let canonical = ensemble
            .as_ref()
            .is_some_and(|e| matches!(e.ensemble, Ensemble::Nvt | Ensemble::Npt));
        if let (true, Some(n_df), Some(row), Some(v)) =
            (canonical, n_df, run_row, view_of(Role::Temperature))
        {
            let recent = seg
                .column(Role::Temperature)
                .map(|c| kept_part(c.values()))
                .unwrap_or_default();
            let recent = recent
                .get(kept_from(row).min(recent.len())..)
                .unwrap_or_default();
            let band = self.opts.thresholds.fluctuation_band;
            let g = stats::temperature_fluctuation(recent, n_df, None, band).map(|x| x.g);
            if let Some(c) = columns
                .iter_mut()
                .find(|c| c.role == Some(Role::Temperature))
            {
                c.fluctuation = g.and_then(|g| {
                    fluctuation_from_moments(&v.moments_from(row / v.b), n_df, g, band)
                });
            }
        }

        let block_rows = f.columns.first().map_or(1, FoldedSeries::block_len);
        let mut a = RunAnalysis {
            segment: si,
            first_row,
            columns,
            equilibration: run_eq,
            equilibration_from: from,
            ensemble,
            degrees_of_freedom: n_df,
            progress: Progress::default(),
            status: RunStatus::Settling,
            status_reason: String::new(),
            folding: Some(FoldingSummary {
                keep_rows: self.folding.keep_rows.unwrap_or(DEFAULT_KEEP_ROWS),
                rows_folded: forgotten as u64,
                rows_forgotten: self.rows_forgotten(),
                block_rows,
                full_resolution_from_row: (first_row + forgotten) as u64,
                approximate: APPROXIMATE_WHEN_FOLDED.to_vec(),
            }),
        };
        shift_rows(&mut a, f.from);
        a
    }
}

/// Adds `by` to every row an analysis found (onsets, MSER, production, drift), for an
/// analysis made on a part of a segment that starts `by` rows into it.
fn shift_rows(a: &mut RunAnalysis, by: usize) {
    if by == 0 {
        return;
    }
    let shift = |e: &mut Option<Equilibration>| {
        if let Some(Equilibration::Onset { row, .. }) = e {
            *row += by;
        }
    };
    shift(&mut a.equilibration);
    for c in &mut a.columns {
        shift(&mut c.equilibration);
        if let Some(m) = c.mser.as_mut() {
            m.row += by;
        }
        if let Some(p) = c.production.as_mut() {
            p.first_row += by;
        }
        if let Some(d) = c.drift.as_mut() {
            d.from_row += by;
        }
    }
}

/// The run's onset: the latest onset of the quantities that matter (all analysed columns
/// when none of them is mapped), as in the unfolded analysis.
fn run_onset(columns: &[ColumnAnalysis]) -> (Option<Equilibration>, Vec<String>) {
    let matters = [
        Role::Potential,
        Role::Volume,
        Role::Density,
        Role::Temperature,
        Role::Pressure,
    ];
    let pick = |all: bool| -> (Vec<Equilibration>, Vec<String>) {
        columns
            .iter()
            .filter(|c| all || c.role.is_some_and(|r| matters.contains(&r)))
            .filter_map(|c| Some((c.equilibration?, c.name.clone())))
            .unzip()
    };
    let (mut onsets, mut from) = pick(false);
    if onsets.is_empty() {
        (onsets, from) = pick(true);
    }
    (stats::combine_onsets(&onsets), from)
}

/// The fluctuation-size test from exact moments and a given `g` of the squared deviations
/// (the same band as [`stats::temperature_fluctuation`]: a χ² band on the variance with
/// `ν_eff = 2/(2/ν + 12/(N_df·N_eff))`, METHODS §6).
fn fluctuation_from_moments(
    m: &Moments,
    n_df: f64,
    g: f64,
    coverage: f64,
) -> Option<FluctuationCheck> {
    let n = m.count() as usize;
    if n < 3 {
        return None;
    }
    let mean = m.mean().filter(|x| *x > 0.0)?;
    stats::fluctuation_band(m.std_dev()? / mean, n, g, n_df, coverage)
}

#[cfg(test)]
mod tests {
    use super::*;

    /// A deterministic AR(1) series x_i = φ·x_{i−1} + u_i with uniform noise, plus a
    /// relaxation at the start (an exponential decay over `relax` rows).
    fn series(n: usize, phi: f64, relax: f64) -> Vec<f64> {
        let mut state = 0x9E37_79B9_7F4A_7C15u64;
        let mut x = 0.0;
        (0..n)
            .map(|i| {
                state ^= state << 13;
                state ^= state >> 7;
                state ^= state << 17;
                let u = (state >> 11) as f64 / (1u64 << 53) as f64 - 0.5;
                x = phi * x + u;
                let decay = if relax > 0.0 {
                    5.0 * (-(i as f64) / relax).exp()
                } else {
                    0.0
                };
                100.0 + x + decay
            })
            .collect()
    }

    fn view(data: &[f64], folded_rows: usize, cap: usize) -> ColumnView {
        let mut f = FoldedSeries::with_cap(cap);
        f.fold_values(&data[..folded_rows]);
        ColumnView::new(&f, &data[folded_rows..])
    }

    #[test]
    fn with_blocks_of_one_row_the_folded_view_equals_the_unfolded_analysis() {
        // Blocks of one row hold every value: onset, production and trend must be those of
        // the plain functions on the raw rows (the folded code adds only the mapping).
        let data = series(6_000, 0.8, 400.0);
        let v = view(&data, 3_000, 1 << 16);
        assert_eq!(v.b, 1);
        let eq = stats::detect_equilibration(&data);
        assert_eq!(v.onset().row(), eq.row());
        let row = eq.row().unwrap();
        let got = v.production(row).unwrap();
        let ineff = stats::inefficiency(&data[row..]).unwrap();
        let want = super::super::production(&data, row, ineff.g, ineff.n_eff).unwrap();
        assert_eq!(got.first_row, want.first_row);
        assert_eq!(got.count, want.count);
        assert!((got.mean - want.mean).abs() < 1e-12 * want.mean.abs());
        assert!((got.std.unwrap() / want.std.unwrap() - 1.0).abs() < 1e-9);
        assert_eq!((got.min, got.max), (want.min, want.max));
        assert!((got.sem_block.unwrap() / want.sem_block.unwrap() - 1.0).abs() < 1e-9);
        assert!((got.inefficiency.unwrap() / want.inefficiency.unwrap() - 1.0).abs() < 1e-9);
        assert_eq!(v.mser().map(|m| m.row), stats::mser5(&data).map(|m| m.row));
    }

    #[test]
    fn inefficiency_from_blocks_matches_the_ar1_closed_form() {
        // AR(1): g = (1 + φ)/(1 − φ) (textbook result, METHODS §0):
        // φ = 0.9 gives g = 19. Folded into blocks of 64 rows and more, the block-means
        // estimate b·s²_B·g_B/s² must find it within 15 %.
        let data = series(400_000, 0.9, 0.0);
        let v = view(&data, 390_000, 4_096);
        assert!(v.b >= 64, "block length {}", v.b);
        let g = v.inefficiency_from(0, None).unwrap();
        assert!((g / 19.0 - 1.0).abs() < 0.15, "g = {g}");
        // The mean and spread of everything stay exact.
        let m = v.moments_from(0);
        assert_eq!(m.count(), data.len() as u64);
        assert!((m.mean().unwrap() / stats::mean(&data).unwrap() - 1.0).abs() < 1e-12);
        assert!((m.variance().unwrap() / stats::variance(&data).unwrap() - 1.0).abs() < 1e-9);
    }

    #[test]
    fn fluctuation_from_moments_equals_the_slice_test() {
        // Same T series, same g: the band test from moments equals the one on the slice.
        let temps: Vec<f64> = series(5_000, 0.5, 0.0)
            .iter()
            .map(|x| 200.0 + 3.0 * x)
            .collect();
        let want = stats::temperature_fluctuation(&temps, 8997.0, Some(2.0), 0.999).unwrap();
        let got =
            fluctuation_from_moments(&Moments::from_slice(&temps), 8997.0, 2.0, 0.999).unwrap();
        assert!((got.observed / want.observed - 1.0).abs() < 1e-9);
        assert!((got.low / want.low - 1.0).abs() < 1e-12);
        assert!((got.high / want.high - 1.0).abs() < 1e-12);
        assert_eq!(got.verdict, want.verdict);
    }
}
