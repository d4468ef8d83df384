//! The stages of a followed run (minimization, heating, equilibration, production), judged
//! from the rows it holds, as `report` judges a finished file ([`crate::stages::judge`]).
//!
//! The stage list is judged again when the rows seen grew by a tenth (at least
//! [`MIN_NEW_ROWS`]) since the last judgement, as the run's full statistics are
//! ([`crate::analysis::Analyzer`]), when no row came for [`QUIET_SECONDS`] after rows
//! that were not judged yet, and always once the run is over: the work stays a small
//! multiple of reading the rows once. Once older rows are folded away for memory, the plan
//! is made on the rows kept, and [`LiveStages::rows_folded`] says how many came before them.
//! While the plan finds one stage only (most runs), nothing more is done until the run is
//! over: the plan is cheap, the judgement analyses the whole table once more.

use crate::analysis::AnalysisOptions;
use crate::stages::{self, chain::Chain, StageKind, StageOptions, StageRecord};
use crate::table::RunTable;

/// New rows, at least, before the stages are judged again.
pub const MIN_NEW_ROWS: u64 = 50;

/// Seconds without a new row after which the rows that came since the last judgement are
/// judged too (so a quiet run's list covers every row read).
pub const QUIET_SECONDS: f64 = 1.0;

/// The stage list of a followed run, as last judged.
#[derive(Debug, Clone, PartialEq)]
pub struct LiveStages {
    /// The stages, in order; the last is the one being written. Empty while a run that
    /// is still written holds one plain stage only (it is judged once over).
    pub stages: Vec<StageRecord>,
    /// Rows seen through the run when judged.
    pub rows_seen: u64,
    /// Rows folded away for memory before the rows planned on (0: every row was planned on).
    pub rows_folded: u64,
    /// Judged after the run's input was over.
    pub final_judgement: bool,
}

impl LiveStages {
    /// The stage being written (the last one).
    pub fn current(&self) -> Option<&StageRecord> {
        self.stages.last()
    }

    /// Whether there are stages to tell: more than one, or a minimization or a heating
    /// (the start of a preparation).
    pub fn staged(&self) -> bool {
        self.stages.len() > 1
            || self
                .stages
                .first()
                .is_some_and(|s| matches!(s.kind, StageKind::Minimization | StageKind::Heating))
    }

    /// Says that the plan covers only the rows kept, when older rows were folded away.
    pub fn folding_note(&self) -> Option<String> {
        (self.rows_folded > 0).then(|| {
            format!(
                "stages judged on the rows kept; the {} rows before them were folded away for \
                 memory",
                self.rows_folded
            )
        })
    }
}

/// A chain being followed: its file names and where each file's segments begin.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct ChainFiles {
    pub names: Vec<String>,
    /// Index of each file's first segment (files not reached yet have no entry).
    pub first_segment: Vec<usize>,
}

/// When and how a run's stages are judged.
#[derive(Debug, Clone)]
pub(crate) struct StageHook {
    options: StageOptions,
    latest: Option<LiveStages>,
}

impl StageHook {
    pub(crate) fn new(options: StageOptions) -> StageHook {
        StageHook {
            options,
            latest: None,
        }
    }

    pub(crate) fn options(&self) -> StageOptions {
        self.options
    }

    pub(crate) fn latest(&self) -> Option<&LiveStages> {
        self.latest.as_ref()
    }

    /// Whether a judgement is due with `rows_seen` rows seen (`ended`: the input is over).
    pub(crate) fn due(&self, rows_seen: u64, ended: bool) -> bool {
        let Some(last) = &self.latest else {
            return rows_seen > 0;
        };
        if ended {
            return !last.final_judgement || last.rows_seen != rows_seen;
        }
        rows_seen < last.rows_seen
            || rows_seen >= last.rows_seen + (last.rows_seen / 10).max(MIN_NEW_ROWS)
    }

    /// Judges the stages of `table` (the rows kept; `rows_folded` came before them).
    pub(crate) fn judge(
        &mut self,
        table: &RunTable,
        chain: Option<&ChainFiles>,
        opts: &AnalysisOptions,
        rows_folded: u64,
        ended: bool,
    ) {
        let rows_seen = table.rows() as u64 + rows_folded;
        let file_starts: Vec<usize> = chain
            .map(|c| c.first_segment.iter().skip(1).copied().collect())
            .unwrap_or_default();
        let pieces = stages::plan(table, &file_starts, &self.options);
        let plain = pieces.len() < 2
            && pieces
                .iter()
                .all(|p| p.minimization.is_none() && p.ramp.is_none());
        if !ended && plain {
            // One plain stage so far: nothing to list while the run goes on (most runs);
            // the plan alone is cheap, the judgement analyses the whole table again.
            self.latest = Some(LiveStages {
                stages: Vec::new(),
                rows_seen,
                rows_folded,
                final_judgement: false,
            });
            return;
        }
        let list = match chain {
            Some(files) if files.names.len() > 1 => {
                let c = Chain {
                    table: RunTable::default(),
                    file_first_segment: files.first_segment.clone(),
                    time_shift_ps: Vec::new(),
                };
                stages::stage_list(table, Some((&files.names, &c)), opts, &self.options)
            }
            _ => stages::stage_list(table, None, opts, &self.options),
        };
        self.latest = Some(LiveStages {
            stages: list,
            rows_seen,
            rows_folded,
            final_judgement: ended,
        });
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn judged_again_after_a_tenth_more_rows_and_once_at_the_end() {
        let mut h = StageHook::new(StageOptions::default());
        assert!(!h.due(0, false));
        assert!(h.due(1, false));
        h.latest = Some(LiveStages {
            stages: Vec::new(),
            rows_seen: 1000,
            rows_folded: 0,
            final_judgement: false,
        });
        assert!(!h.due(1099, false));
        assert!(h.due(1100, false));
        assert!(h.due(900, false), "rows cut by a restart");
        assert!(h.due(1000, true), "the end is judged once");
        if let Some(l) = h.latest.as_mut() {
            l.final_judgement = true;
        }
        assert!(!h.due(1000, true));
        assert!(h.due(1001, true));
    }
}
