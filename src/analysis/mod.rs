//! Run-level analysis: applies the statistics in `stats` to a mapped table (pure, no I/O,
//! no clock: arrival times and "now" are passed in) and feeds the alert engine.
//!
//! What is analysed:
//! - Every observable column (every column but the counters: step and time roles, or any
//!   strictly monotonic column, whatever its name) goes through the per-row detectors
//!   (non-finite, spikes, runaway at three window lengths, off-target); the name only picks
//!   the wording. Rows are numbered through the run: a later segment's first row follows
//!   the previous segment's last.
//! - The statistics (onsets, production, trend, drift, fluctuation size, ensemble) describe
//!   the **last segment**, the one being written; a header with different columns starts a
//!   segment that is analysed on its own (Contract).
//! - Per column: onset by N_eff maximisation (Chodera 2016) with MSER-5 as the cross-check,
//!   production statistics after the onset. The run's onset is the latest onset of the
//!   potential energy, volume/density, temperature and pressure columns present (all
//!   observable columns when none of these is mapped).
//! - Trend ("still changing") on every observable column from the run's onset: a slope
//!   test on block means (`stats::block_trend`), Holm's correction across the run's
//!   quantities at 1 % and a practical size ([`TREND_MIN_CHANGE_SEM`]).
//! - Drift whenever an energy is logged: the `conserved` column, else `total` (a
//!   conservation test, with alerts, only in NVE, given or inferred; otherwise shown as
//!   "conserved only in NVE"), after the run's onset (or from the first row while it has
//!   none), per ns (per step or row without a time column), per atom with `--atoms`, in
//!   k_B·T per ns per degree of freedom when N_df and the temperature are known (or, from
//!   the kinetic energy column, N_df·k_B·T = 2⟨K⟩).
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

mod analyzer;
mod column;
mod detectors;
mod folded;
mod locate;
mod options;
mod parallel;
mod present;
mod results;
mod run;
mod scan;

use crate::alert::RUN;

pub use crate::fold::{DEFAULT_KEEP_ROWS, MIN_KEEP_ROWS};
pub use analyzer::{Analyzer, THROUGHPUT_WINDOW};
pub use column::{
    COUNTER_CHECK_ROWS, INEFFICIENCY_BLOCK_ROWS, TREND_MAX_POINTS, TREND_MIN_CHANGE_SEM,
    TREND_P_VALUE,
};
pub use detectors::{
    runaway_lookback, runaway_options, runaway_windows, spike_threshold, RUNAWAY_BASELINE_ROWS,
    RUNAWAY_BASELINE_STEP, RUNAWAY_FAR_ROWS, RUNAWAY_FAR_SIGMAS, RUNAWAY_MIN_GROWTH,
    RUNAWAY_SCALES, RUNAWAY_SCALE_FACTOR, SPIKE_CONTEXT_ROWS, SPIKE_FAMILY_ALPHA,
};
pub use folded::{FoldingSummary, APPROXIMATE_WHEN_FOLDED};
pub use locate::{time_values, TableLocator};
pub use options::AnalysisOptions;
pub use results::{
    ColumnAnalysis, DriftPer, DriftSummary, EnsembleChoice, ProductionStats, Progress, RunAnalysis,
    TrendSummary,
};
pub use run::DRIFT_CONFIDENCE;

// Shared inside the analysis (the submodules import them through `super`).
use column::{
    analysed_count, blockwise_inefficiency, finite_part_mean, first_nonfinite, judge_trends,
    observable, production, stable_part, trend, trend_of_means,
};
use detectors::{
    beyond_context, runaway_flags, BaselineCache, ColumnCursor, ColumnFlags, ScanPlan,
};
use locate::row_interval_ps;
use results::empty_analysis;
use run::drift_summary;

/// Used by callers that only need the key for run-wide alerts.
pub const RUN_KEY: &str = RUN;
