//! Each stage's kind and verdict: the pieces of [`super::plan`] analysed on their own.
//!
//! The whole run is analysed once with one segment per stage (statistics of the last
//! stage, per-row alerts on every stage, no runaway rule on a descent or a ramp), and each
//! earlier stage once more on its own for its onset and verdict:
//! - minimization: converged, not-converged, stalled or energy-rises ([`super::minimization`]);
//! - heating: followed-ramp or off-ramp: the mean offset of the temperature from the
//!   schedule (the user's `--target-temperature` schedule, else the ramp inferred from the
//!   data) within the temperature tolerance plus three standard errors of block means
//!   ([`HEATING_BLOCKS`] blocks);
//! - equilibration and production: equilibrated, not-yet or too-short (the stage's own
//!   onset), or unstable when a critical alert is raised in it. The last stage is
//!   production when it is equilibrated.

use serde::{Deserialize, Serialize};

use super::{Conditions, Piece, StageKind, StageOptions, StartReason};
use crate::alert::{Alert, Severity, Target};
use crate::analysis::{time_values, AnalysisOptions, Analyzer, RunAnalysis};
use crate::mapping::Role;
use crate::stats::Equilibration;
use crate::table::{RunTable, Segment};

/// Blocks of the heating check's standard error.
pub const HEATING_BLOCKS: usize = 10;

/// A minimization's numbers.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct MinimizationRecord {
    pub verdict: super::MinVerdict,
    /// Row (through the run) from which the tolerance holds.
    pub converged_row: Option<u64>,
    /// Its step, when the log has a step counter.
    pub converged_step: Option<f64>,
    pub energy_first: f64,
    pub energy_last: f64,
    /// Mean energy change per step (per row without a step counter), whole descent.
    pub energy_change_per_step: f64,
    /// The same over the last quarter of the rows.
    pub last_energy_change_per_step: f64,
    /// The force column's name, kind (`max` or `rms`) and last value (its own unit).
    pub force_column: Option<String>,
    pub force: Option<super::ForceKind>,
    pub force_last: Option<f64>,
    pub force_tolerance: f64,
    /// Relative energy change per step.
    pub energy_tolerance: f64,
}

/// A heating stage's numbers.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct HeatingRecord {
    /// `given` (the user's schedule) or `inferred` (the ramp fitted to the data).
    pub schedule: String,
    /// The inferred ramp, in the schedule syntax (`0ps=10K,50ps=300K`).
    pub inferred_schedule: String,
    pub rate_k_per_ps: f64,
    /// Mean of temperature − schedule over the stage, K, and its standard error.
    pub mean_offset: f64,
    pub offset_sem: Option<f64>,
    pub followed: bool,
}

/// Where a stage's onset is.
#[derive(Debug, Clone, Copy, PartialEq, Serialize, Deserialize)]
pub struct StageOnset {
    pub row: u64,
    pub time: Option<f64>,
}

/// One stage as reported.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct StageRecord {
    pub index: u64,
    pub kind: StageKind,
    /// `constant-volume` or `constant-pressure` (null without a volume or density).
    pub conditions: Option<Conditions>,
    pub started_by: StartReason,
    /// The file of a chain the stage comes from (null for one log).
    pub file: Option<String>,
    pub first_row: u64,
    pub rows: u64,
    pub first_line: Option<u64>,
    pub last_line: Option<u64>,
    pub start_time: Option<f64>,
    pub end_time: Option<f64>,
    /// A kebab-case word: converged, not-converged, stalled, energy-rises, followed-ramp,
    /// off-ramp, equilibrated, not-yet, too-short, unstable.
    pub verdict: String,
    /// The verdict in a sentence.
    pub detail: String,
    /// The stage's own onset (equilibration and production).
    pub equilibration: Option<StageOnset>,
    pub minimization: Option<MinimizationRecord>,
    pub heating: Option<HeatingRecord>,
}

/// A run cut into stages and analysed.
#[derive(Debug, Clone)]
pub struct StagedRun {
    /// One segment per stage.
    pub table: RunTable,
    pub stages: Vec<StageRecord>,
    /// The analysis of `table`: statistics of the last stage, alerts on all.
    pub analysis: RunAnalysis,
    /// The alerts, by row.
    pub alerts: Vec<Alert>,
    /// Alerts at or above each severity, for the exit code.
    pub all_alerts: Vec<Alert>,
}

fn schedule_text(points: &[(f64, f64)]) -> String {
    points
        .iter()
        .map(|(t, v)| {
            format!(
                "{}ps={}K",
                crate::alert::format_number(*t, ""),
                crate::alert::format_number(*v, "")
            )
        })
        .collect::<Vec<_>>()
        .join(",")
}

/// Mean and block-means standard error of `x` (`None` SE under two blocks).
fn mean_and_sem(x: &[f64]) -> (f64, Option<f64>) {
    let n = x.len();
    let mean = if n == 0 {
        0.0
    } else {
        x.iter().sum::<f64>() / n as f64
    };
    let per = n / HEATING_BLOCKS;
    if per == 0 {
        return (mean, None);
    }
    let means: Vec<f64> = x
        .chunks(per)
        .take(HEATING_BLOCKS)
        .map(|c| c.iter().sum::<f64>() / c.len() as f64)
        .collect();
    let sem = crate::stats::std_dev(&means).map(|s| s / (means.len() as f64).sqrt());
    (mean, sem)
}

fn heating_record(
    seg: &Segment,
    p: &Piece,
    ramp: &super::Ramp,
    opts: &AnalysisOptions,
) -> Option<HeatingRecord> {
    let t = time_values(seg)?;
    let temp = seg.column(Role::Temperature)?.values();
    let inferred = vec![ramp.start, ramp.end];
    let (schedule, target) = match opts.target_temperature.as_ref().filter(|t| t.is_schedule()) {
        Some(given) => ("given", given.clone()),
        None => ("inferred", Target::schedule(inferred.clone())?),
    };
    let offsets: Vec<f64> = t
        .iter()
        .zip(temp)
        .map(|(&ti, &yi)| yi - target.value_at(ti))
        .filter(|v| v.is_finite())
        .collect();
    let _ = p;
    let (mean, sem) = mean_and_sem(&offsets);
    let margin = opts.thresholds.temperature_tolerance + 3.0 * sem.unwrap_or(0.0);
    Some(HeatingRecord {
        schedule: schedule.to_string(),
        inferred_schedule: schedule_text(&inferred),
        rate_k_per_ps: ramp.slope_per_ps,
        mean_offset: mean,
        offset_sem: sem,
        followed: mean.abs() <= margin,
    })
}

fn critical_in(alerts: &[Alert], rows: std::ops::Range<u64>) -> bool {
    alerts
        .iter()
        .any(|a| a.severity == Severity::Critical && a.row.is_some_and(|r| rows.contains(&r)))
}

/// The verdict of an equilibration stage from its own analysis.
fn equilibration_verdict(a: &RunAnalysis, unstable: bool) -> (String, String) {
    let (v, d) = if unstable {
        (
            "unstable",
            "a critical alert was raised in this stage".to_string(),
        )
    } else {
        match a.equilibration {
            Some(Equilibration::Onset { .. }) => (
                "equilibrated",
                format!(
                    "equilibrated (onset of {})",
                    a.equilibration_from.join(", ")
                ),
            ),
            Some(Equilibration::TooShort) => ("too-short", "too few rows to judge".to_string()),
            _ => ("not-yet", "still relaxing at its end".to_string()),
        }
    };
    (v.to_string(), format!("{d}; status {}", a.status.name()))
}

/// The files of a chain: their names and where each file's segments begin (`None` for
/// one log).
pub type ChainFiles<'a> = Option<(&'a [String], &'a super::chain::Chain)>;

/// Cuts `table` into stages, analyses them and gives each its kind and verdict. `files`:
/// the chain's file names and the index of each file's first segment (`None` for one log).
pub fn judge(
    table: &RunTable,
    files: ChainFiles<'_>,
    opts: &AnalysisOptions,
    sopts: &StageOptions,
) -> StagedRun {
    let (pieces, split) = cut(table, files, sopts);
    let judged = judge_pieces(split.as_ref().unwrap_or(table), &pieces, files, opts);
    judged.into_run(split.unwrap_or_else(|| table.clone()))
}

/// [`judge`] on a table handed over: when every stage is a whole segment (one log of one
/// stage, most runs) the table is kept as it is, not copied.
pub fn judge_owned(
    table: RunTable,
    files: ChainFiles<'_>,
    opts: &AnalysisOptions,
    sopts: &StageOptions,
) -> StagedRun {
    let (pieces, split) = cut(&table, files, sopts);
    let judged = judge_pieces(split.as_ref().unwrap_or(&table), &pieces, files, opts);
    judged.into_run(split.unwrap_or(table))
}

/// The stage list alone (a followed run's: see `live::stages`), with no copy of the table
/// when every stage is a whole segment.
pub fn stage_list(
    table: &RunTable,
    files: ChainFiles<'_>,
    opts: &AnalysisOptions,
    sopts: &StageOptions,
) -> Vec<StageRecord> {
    let (pieces, split) = cut(table, files, sopts);
    judge_pieces(split.as_ref().unwrap_or(table), &pieces, files, opts).stages
}

/// The stage pieces of `table`, and the table with one segment per piece when that is not
/// the table itself (`None`: every piece is a whole segment, in order).
fn cut(
    table: &RunTable,
    files: ChainFiles<'_>,
    sopts: &StageOptions,
) -> (Vec<Piece>, Option<RunTable>) {
    let file_starts = files.map(|(_, c)| c.file_starts()).unwrap_or_default();
    let pieces = super::plan(table, &file_starts, sopts);
    let whole = pieces.len() == table.segments.len()
        && pieces.iter().enumerate().all(|(i, p)| {
            p.segment == i
                && p.rows.start == 0
                && table
                    .segments
                    .get(i)
                    .is_some_and(|s| p.rows.end == s.rows())
        });
    let split = (!whole).then(|| super::split_table(table, &pieces));
    (pieces, split)
}

/// What judging gives, before the table is attached.
struct Judged {
    stages: Vec<StageRecord>,
    analysis: RunAnalysis,
    alerts: Vec<Alert>,
    all_alerts: Vec<Alert>,
}

impl Judged {
    fn into_run(self, table: RunTable) -> StagedRun {
        StagedRun {
            table,
            stages: self.stages,
            analysis: self.analysis,
            alerts: self.alerts,
            all_alerts: self.all_alerts,
        }
    }
}

/// Judges the stages of `staged`: one segment per piece of `pieces`.
fn judge_pieces(
    staged: &RunTable,
    pieces: &[Piece],
    files: ChainFiles<'_>,
    opts: &AnalysisOptions,
) -> Judged {
    let directed: Vec<usize> = pieces
        .iter()
        .enumerate()
        .filter(|(_, p)| p.minimization.is_some() || p.ramp.is_some())
        .map(|(i, _)| i)
        .collect();
    let mut top = opts.clone();
    top.directed_segments = directed.clone();
    let mut analyzer = Analyzer::new(top);
    let analysis = analyzer.update(staged, true, None, false);
    let alerts = analyzer.engine().alerts_by_row();
    let all_alerts = analyzer.engine().alerts().to_vec();

    let mut stages = Vec::new();
    let mut first_row = 0u64;
    let last = staged.segments.len().saturating_sub(1);
    for (i, (seg, p)) in staged.segments.iter().zip(pieces).enumerate() {
        let rows = seg.rows() as u64;
        let times = time_values(seg);
        let file = files.and_then(|(names, chain)| {
            chain.file_of(p.segment).and_then(|k| names.get(k).cloned())
        });
        let mut rec = StageRecord {
            index: i as u64,
            kind: StageKind::Equilibration,
            conditions: p.conditions,
            started_by: p.start,
            file,
            first_row,
            rows,
            first_line: seg.lines.first(),
            last_line: seg.lines.last(),
            start_time: times.and_then(|t| t.first().copied()),
            end_time: times.and_then(|t| t.last().copied()),
            verdict: String::new(),
            detail: String::new(),
            equilibration: None,
            minimization: None,
            heating: None,
        };
        if let Some(m) = &p.minimization {
            let steps = seg.column(Role::Step).map(|c| c.values());
            let force = super::force_column(seg);
            rec.kind = StageKind::Minimization;
            rec.verdict = kebab(m.verdict.words());
            rec.detail = min_detail(m);
            rec.minimization = Some(MinimizationRecord {
                verdict: m.verdict,
                converged_row: m.converged_row.map(|r| first_row + r as u64),
                converged_step: m
                    .converged_row
                    .and_then(|r| steps.and_then(|s| s.get(r).copied())),
                energy_first: m.energy_first,
                energy_last: m.energy_last,
                energy_change_per_step: m.change_per_step,
                last_energy_change_per_step: m.last_change_per_step,
                force_column: force.map(|(_, c)| c.spec.name.clone()),
                force: m.force_last.map(|(k, _)| k),
                force_last: m.force_last.map(|(_, v)| v),
                force_tolerance: m.tolerances.force,
                energy_tolerance: m.tolerances.energy,
            });
        } else if let Some(r) = &p.ramp {
            rec.kind = StageKind::Heating;
            rec.heating = heating_record(seg, p, r, opts);
            match &rec.heating {
                Some(h) if h.followed => {
                    rec.verdict = "followed-ramp".into();
                    // Against its own fitted ramp the mean offset is zero by construction:
                    // say the rate instead.
                    rec.detail = if h.schedule == "inferred" {
                        format!(
                            "followed the inferred ramp {} ({} K/ps)",
                            h.inferred_schedule,
                            crate::alert::format_number(h.rate_k_per_ps, "")
                        )
                    } else {
                        format!(
                            "followed the given schedule (fitted ramp {}; mean offset {} K)",
                            h.inferred_schedule,
                            crate::report::value_with_error(h.mean_offset, h.offset_sem)
                        )
                    };
                }
                Some(h) => {
                    rec.verdict = "off-ramp".into();
                    rec.detail = format!(
                        "off the {} schedule by {} K on average",
                        h.schedule,
                        crate::alert::format_number(h.mean_offset, "")
                    );
                }
                None => {
                    rec.verdict = "followed-ramp".into();
                    rec.detail = "ramp found".into();
                }
            }
        } else {
            let own;
            let a = if i == last {
                &analysis
            } else {
                let mut o = opts.clone();
                o.directed_segments = Vec::new();
                let single = RunTable {
                    segments: vec![seg.clone()],
                    ..RunTable::default()
                };
                let mut an = Analyzer::new(o);
                own = an.update(&single, true, None, false);
                &own
            };
            let unstable = critical_in(&alerts, first_row..first_row + rows);
            let (v, d) = equilibration_verdict(a, unstable);
            rec.verdict = v;
            rec.detail = d;
            rec.equilibration = a.equilibration.and_then(|e| e.row()).map(|r| StageOnset {
                row: first_row + r as u64,
                time: times.and_then(|t| t.get(r).copied()),
            });
            if i == last && rec.verdict == "equilibrated" {
                rec.kind = StageKind::Production;
            }
        }
        stages.push(rec);
        first_row += rows;
    }
    Judged {
        stages,
        analysis,
        alerts,
        all_alerts,
    }
}

fn kebab(words: &str) -> String {
    words
        .split(' ')
        .take_while(|w| *w != "far")
        .collect::<Vec<_>>()
        .join("-")
}

fn min_detail(m: &super::minimization::MinSummary) -> String {
    let f = crate::alert::format_number;
    let force = match m.force_last {
        Some((k, v)) => format!(
            ", last {} force {} (tolerance {})",
            match k {
                super::ForceKind::Max => "max",
                super::ForceKind::Rms => "RMS",
            },
            f(v, ""),
            f(m.tolerances.force, "")
        ),
        None => String::new(),
    };
    format!(
        "{}: energy {} -> {} ({} per step at the end){force}",
        m.verdict.words(),
        f(m.energy_first, ""),
        f(m.energy_last, ""),
        f(m.last_change_per_step, "")
    )
}
