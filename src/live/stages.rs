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
//!
//! The plan also says where the stage being written starts ([`LiveStages::current_start`]):
//! the run's full statistics are cut there ([`crate::analysis::Analyzer::set_stage_start`]),
//! as `report` cuts a finished file's at its last stage. Once older rows are folded, the
//! stage start and the stages before the rows kept are remembered from earlier judgements:
//! a stage is judged at least every quarter of the rows kept, so its start is seen before
//! it is folded.

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
    /// Segment and row (from the segment's start, folded rows included) where the stage
    /// being written starts, when not at its segment's start.
    pub current_start: Option<(usize, usize)>,
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

    /// Says that stages before the rows kept were judged before their rows were folded.
    pub fn folding_note(&self) -> Option<String> {
        (self.rows_folded > 0).then(|| {
            format!(
                "{} older rows are folded for memory: stages before the rows kept are shown \
                 as last judged",
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

    /// Whether a judgement is due with `rows_seen` rows seen (`ended`: the input is over),
    /// `keep_rows` rows kept at most (a stage's start must be seen before it is folded).
    pub(crate) fn due(&self, rows_seen: u64, ended: bool, keep_rows: usize) -> bool {
        let Some(last) = &self.latest else {
            return rows_seen > 0;
        };
        if ended {
            return !last.final_judgement || last.rows_seen != rows_seen;
        }
        let step = (last.rows_seen / 10)
            .max(MIN_NEW_ROWS)
            .min((keep_rows as u64 / 4).max(MIN_NEW_ROWS));
        rows_seen < last.rows_seen || rows_seen >= last.rows_seen + step
    }

    /// Judges the stages of `table`: the rows kept, after `forgotten[i]` rows of segment
    /// `i` were folded away.
    pub(crate) fn judge(
        &mut self,
        table: &RunTable,
        chain: Option<&ChainFiles>,
        opts: &AnalysisOptions,
        forgotten: &[usize],
        ended: bool,
    ) {
        let rows_folded: u64 = forgotten.iter().map(|&r| r as u64).sum();
        let rows_seen = table.rows() as u64 + rows_folded;
        let file_starts: Vec<usize> = chain
            .map(|c| c.first_segment.iter().skip(1).copied().collect())
            .unwrap_or_default();
        let pieces = stages::plan(table, &file_starts, &self.options);
        let folded_before = |segment: usize| forgotten.get(segment).copied().unwrap_or(0);
        let current_start = match pieces.last() {
            // A stage that starts with the rows kept began before them (or with its
            // segment): its start is the one judged before.
            Some(p) if p.rows.start == 0 && folded_before(p.segment) > 0 => self
                .latest
                .as_ref()
                .and_then(|l| l.current_start)
                .filter(|&(segment, _)| segment == p.segment),
            Some(p) if p.rows.start > 0 => {
                Some((p.segment, folded_before(p.segment) + p.rows.start))
            }
            _ => None,
        };
        let plain = pieces.len() < 2
            && pieces
                .iter()
                .all(|p| p.minimization.is_none() && p.ramp.is_none());
        let listed_before = self.latest.as_ref().is_some_and(|l| !l.stages.is_empty());
        if !ended && plain && !listed_before {
            // One plain stage so far: nothing to list while the run goes on (most runs);
            // the plan alone is cheap, the judgement analyses the whole table again.
            self.latest = Some(LiveStages {
                stages: Vec::new(),
                rows_seen,
                rows_folded,
                final_judgement: false,
                current_start,
            });
            return;
        }
        let mut list = match chain {
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
        // Rows numbered through the run: the rows folded before each stage's own come first.
        let segment_start = |segment: usize| -> u64 {
            table
                .segments
                .iter()
                .take(segment)
                .enumerate()
                .map(|(j, s)| (folded_before(j) + s.rows()) as u64)
                .sum()
        };
        let mut continues = Vec::with_capacity(list.len());
        for (rec, p) in list.iter_mut().zip(&pieces) {
            let before: u64 = forgotten
                .iter()
                .take(p.segment + 1)
                .map(|&r| r as u64)
                .sum();
            renumber(rec, before);
            continues.push(
                (p.rows.start == 0 && folded_before(p.segment) > 0)
                    .then(|| segment_start(p.segment)),
            );
        }
        if rows_folded > 0 {
            if let Some(earlier) = &self.latest {
                list = keep_earlier_stages(&earlier.stages, list, &continues);
            }
        }
        self.latest = Some(LiveStages {
            stages: list,
            rows_seen,
            rows_folded,
            final_judgement: ended,
            current_start,
        });
    }
}

/// Moves the rows of a stage record `by` rows on (rows folded before it).
fn renumber(rec: &mut StageRecord, by: u64) {
    rec.first_row += by;
    if let Some(e) = rec.equilibration.as_mut() {
        e.row += by;
    }
    if let Some(row) = rec
        .minimization
        .as_mut()
        .and_then(|m| m.converged_row.as_mut())
    {
        *row += by;
    }
}

/// The stage list once older rows were folded. `kept` was judged on the rows kept;
/// `continues[i]` is, for a stage of `kept` that starts at the first kept row of a segment
/// whose older rows were folded, that segment's first row (through the run). Before such a
/// stage come the stages of `earlier` (the list judged before) that began in the folded
/// rows of its segment; the last of them, when it runs on into the rows kept, is the same
/// stage: it keeps its start, with the judgement made on the rows kept.
fn keep_earlier_stages(
    earlier: &[StageRecord],
    kept: Vec<StageRecord>,
    continues: &[Option<u64>],
) -> Vec<StageRecord> {
    let mut out = Vec::with_capacity(earlier.len().max(kept.len()));
    for (i, rec) in kept.into_iter().enumerate() {
        let Some(segment_start) = continues.get(i).copied().flatten() else {
            out.push(rec);
            continue;
        };
        let mut folded: Vec<StageRecord> = earlier
            .iter()
            .filter(|s| s.first_row >= segment_start && s.first_row < rec.first_row)
            .cloned()
            .collect();
        match folded.pop() {
            Some(start) if start.first_row + start.rows > rec.first_row => {
                out.extend(folded);
                out.push(StageRecord {
                    first_row: start.first_row,
                    rows: rec.first_row + rec.rows - start.first_row,
                    first_line: start.first_line,
                    start_time: start.start_time,
                    started_by: start.started_by,
                    file: start.file.or(rec.file.clone()),
                    ..rec
                });
            }
            Some(ended) => {
                out.extend(folded);
                out.push(ended);
                out.push(rec);
            }
            None => out.push(rec),
        }
    }
    for (i, s) in out.iter_mut().enumerate() {
        s.index = i as u64;
    }
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn judged_again_after_a_tenth_more_rows_and_once_at_the_end() {
        let mut h = StageHook::new(StageOptions::default());
        assert!(!h.due(0, false, 1_000_000));
        assert!(h.due(1, false, 1_000_000));
        h.latest = Some(LiveStages {
            stages: Vec::new(),
            rows_seen: 1000,
            rows_folded: 0,
            final_judgement: false,
            current_start: None,
        });
        let keep = 1_000_000;
        assert!(!h.due(1099, false, keep));
        assert!(h.due(1100, false, keep));
        assert!(h.due(900, false, keep), "rows cut by a restart");
        assert!(h.due(1000, true, keep), "the end is judged once");
        if let Some(l) = h.latest.as_mut() {
            l.final_judgement = true;
        }
        assert!(!h.due(1000, true, keep));
        assert!(h.due(1001, true, keep));
    }

    #[test]
    fn judged_at_least_every_quarter_of_the_rows_kept() {
        let mut h = StageHook::new(StageOptions::default());
        h.latest = Some(LiveStages {
            stages: Vec::new(),
            rows_seen: 100_000,
            rows_folded: 90_000,
            final_judgement: false,
            current_start: None,
        });
        assert!(!h.due(102_499, false, 10_000));
        assert!(h.due(102_500, false, 10_000));
        assert!(!h.due(102_500, false, 1_000_000));
    }
}
