//! Stages of a run: minimization, heating, equilibration and production, found from the
//! evidence in one log or in a chain of logs (pure, no I/O).
//!
//! A system is prepared in stages, each with its own question: has the minimization
//! converged? did the heating follow its ramp? has this stage equilibrated? is production
//! healthy? [`plan`] cuts a table into stage pieces, [`split_table`] turns the pieces into
//! segments (so every later step, which analyses segments on their own, analyses each stage
//! on its own), and [`judge`] gives each stage its kind and verdict.
//!
//! Boundaries (in order of evidence):
//! - a segment boundary: the columns present changed (a new header), or a new file of a
//!   chain ([`chain`]);
//! - inside a segment: a change of the output interval, a volume or density that starts
//!   (constant pressure starts) or stops varying ([`boundaries`]);
//! - the end of a heating ramp followed by a plateau ([`ramp`]).
//!
//! Kinds: a piece with no time column read from the log whose energy descends, or that
//! writes a force column, is a **minimization** ([`minimization`]); a piece whose
//! temperature follows a ramp is **heating**; the others are **equilibration** (constant
//! volume when the volume or density is constant, constant pressure when it varies), and
//! the last piece is **production** when it is equilibrated.
//!
//! Adding a stage kind: a detector (pure, on slices) in its own file, a field on [`Piece`]
//! set in [`plan`], a [`StageKind`] variant, its verdict in `judge.rs`, and its line in the
//! report renderers (see DEVELOPERS.md).

pub mod boundaries;
pub mod chain;
mod judge;
pub mod minimization;
pub mod ramp;

use std::ops::Range;

use serde::{Deserialize, Serialize};

use crate::mapping::Role;
use crate::table::{Column, RunTable, Segment};

pub use judge::{
    judge, judge_owned, stage_list, HeatingRecord, MinimizationRecord, StageRecord, StagedRun,
};
pub use minimization::{ForceKind, MinVerdict, Tolerances};
pub use ramp::Ramp;

/// What a stage is.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum StageKind {
    Minimization,
    Heating,
    Equilibration,
    Production,
}

impl StageKind {
    /// The plain word.
    pub fn name(self) -> &'static str {
        match self {
            StageKind::Minimization => "minimization",
            StageKind::Heating => "heating",
            StageKind::Equilibration => "equilibration",
            StageKind::Production => "production",
        }
    }
}

/// What the volume did during a stage.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Conditions {
    /// The volume (or density) held one value.
    ConstantVolume,
    /// The volume varied: a barostat held the pressure.
    ConstantPressure,
}

impl Conditions {
    /// In words.
    pub fn words(self) -> &'static str {
        match self {
            Conditions::ConstantVolume => "constant volume",
            Conditions::ConstantPressure => "constant pressure",
        }
    }
}

/// Why a stage starts where it does.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum StartReason {
    /// The first row of the run.
    RunStart,
    /// A header with other columns.
    NewColumns,
    /// The next file of a chain.
    NewFile,
    /// The output interval changed.
    OutputInterval,
    /// A constant volume started to vary.
    VolumeStartsToVary,
    /// A varying volume became constant.
    VolumeBecomesConstant,
    /// A heating ramp ended.
    RampEnded,
}

impl StartReason {
    /// In words.
    pub fn words(self) -> &'static str {
        match self {
            StartReason::RunStart => "start of the run",
            StartReason::NewColumns => "new columns",
            StartReason::NewFile => "next file",
            StartReason::OutputInterval => "output interval changed",
            StartReason::VolumeStartsToVary => "volume starts to vary",
            StartReason::VolumeBecomesConstant => "volume becomes constant",
            StartReason::RampEnded => "heating ramp ended",
        }
    }
}

/// Options of the stage finder.
#[derive(Debug, Clone, Copy, PartialEq, Default)]
pub struct StageOptions {
    /// Tolerances of the minimization verdict.
    pub tolerances: Tolerances,
}

/// One stage piece of a table: rows of one segment.
#[derive(Debug, Clone, PartialEq)]
pub struct Piece {
    /// Segment of the table it comes from.
    pub segment: usize,
    /// Rows within that segment.
    pub rows: Range<usize>,
    /// Why it starts here.
    pub start: StartReason,
    /// A minimization: its summary.
    pub minimization: Option<minimization::MinSummary>,
    /// A heating ramp (times in ps).
    pub ramp: Option<Ramp>,
    /// What the volume did (`None` without a volume or density column).
    pub conditions: Option<Conditions>,
}

/// The time column read from the log (not derived from the step), if any.
fn logged_time(seg: &Segment) -> Option<&Column> {
    seg.columns
        .iter()
        .find(|c| c.spec.role == Some(Role::Time) && c.spec.field.is_some())
}

fn energy_column(seg: &Segment) -> Option<&Column> {
    [Role::Potential, Role::Total, Role::Conserved]
        .into_iter()
        .find_map(|r| seg.column(r))
}

/// The force column: known by its name, else by its unit (an energy per length; RMS when
/// its name says so).
fn force_column(seg: &Segment) -> Option<(ForceKind, &Column)> {
    seg.columns
        .iter()
        .find_map(|c| minimization::force_kind(&c.spec.name).map(|k| (k, c)))
        .or_else(|| {
            seg.columns.iter().find_map(|c| {
                let unit = c.spec.header_unit.as_deref()?;
                minimization::force_unit_kj_mol_nm(unit)?;
                let rms = c.spec.name.to_ascii_lowercase().contains("rms");
                Some((if rms { ForceKind::Rms } else { ForceKind::Max }, c))
            })
        })
}

/// The tolerances for a force column: the force tolerance (kJ mol⁻¹ nm⁻¹) in the column's
/// unit when its header states one.
fn tolerances_for(c: &Column, tol: Tolerances) -> Tolerances {
    match c
        .spec
        .header_unit
        .as_deref()
        .and_then(minimization::force_unit_kj_mol_nm)
    {
        Some(kj_per_unit) if kj_per_unit > 0.0 => Tolerances {
            force: tol.force / kj_per_unit,
            ..tol
        },
        _ => tol,
    }
}

fn ensemble_column(seg: &Segment) -> Option<&Column> {
    seg.column(Role::Volume)
        .or_else(|| seg.column(Role::Density))
}

fn slice<'a>(c: &'a Column, rows: &Range<usize>) -> &'a [f64] {
    c.values().get(rows.clone()).unwrap_or(&[])
}

/// Boundaries inside `rows` of `seg` from the output interval and the volume.
fn inner_boundaries(seg: &Segment, rows: &Range<usize>) -> Vec<(usize, StartReason)> {
    let mut cuts: Vec<(usize, StartReason)> = Vec::new();
    let counter = seg.column(Role::Step).or_else(|| seg.column(Role::Time));
    if let Some(c) = counter {
        for r in boundaries::interval_changes(slice(c, rows)) {
            cuts.push((rows.start + r, StartReason::OutputInterval));
        }
    }
    // A column of self-named rows written only from (or up to) some row.
    for c in seg.columns.iter().filter(|c| c.absent > 0) {
        for r in boundaries::presence_changes(slice(c, rows)) {
            cuts.push((rows.start + r, StartReason::NewColumns));
        }
    }
    if let Some(v) = ensemble_column(seg) {
        for (r, change) in boundaries::volume_changes(slice(v, rows)) {
            let why = match change {
                boundaries::VolumeChange::StartsToVary => StartReason::VolumeStartsToVary,
                boundaries::VolumeChange::BecomesConstant => StartReason::VolumeBecomesConstant,
            };
            cuts.push((rows.start + r, why));
        }
    }
    cuts.sort_by_key(|&(r, _)| r);
    // Two evidences a few rows apart mark one boundary: keep the first.
    let mut merged: Vec<(usize, StartReason)> = Vec::new();
    for (r, why) in cuts {
        match merged.last() {
            Some(&(last, _)) if r < last + boundaries::MIN_INTERVAL_ROWS => {}
            _ if r <= rows.start || r >= rows.end => {}
            _ => merged.push((r, why)),
        }
    }
    merged
}

/// A piece of `rows` of segment `si`, with its kind evidence.
fn piece(
    seg: &Segment,
    si: usize,
    rows: Range<usize>,
    start: StartReason,
    opts: &StageOptions,
) -> Piece {
    // No conditions from a volume the piece has no value of (written only later).
    let written = |v: &&Column| slice(v, &rows).iter().any(|x| !crate::table::is_absent(*x));
    let conditions = ensemble_column(seg).filter(written).map(|v| {
        if boundaries::is_constant(slice(v, &rows)) {
            Conditions::ConstantVolume
        } else {
            Conditions::ConstantPressure
        }
    });
    let mut p = Piece {
        segment: si,
        rows: rows.clone(),
        start,
        minimization: None,
        ramp: None,
        conditions,
    };
    if logged_time(seg).is_none() {
        let force = force_column(seg);
        if let Some(e) = energy_column(seg) {
            let energy = slice(e, &rows);
            if force.is_some() || minimization::descends(energy) {
                let steps = seg.column(Role::Step).map(|c| slice(c, &rows));
                let f = force.map(|(k, c)| (k, slice(c, &rows)));
                let tol = match force {
                    Some((_, c)) => tolerances_for(c, opts.tolerances),
                    None => opts.tolerances,
                };
                p.minimization = minimization::judge(energy, steps, f, tol);
                p.conditions = None;
            }
        }
        return p;
    }
    p
}

/// Cuts `table` into stage pieces. `file_starts`: segments that begin a new file of a
/// chain (the first segment of each file but the first).
pub fn plan(table: &RunTable, file_starts: &[usize], opts: &StageOptions) -> Vec<Piece> {
    let mut out = Vec::new();
    for (si, seg) in table.segments.iter().enumerate() {
        if seg.rows() == 0 {
            continue;
        }
        let first_reason = if out.is_empty() {
            StartReason::RunStart
        } else if file_starts.contains(&si) {
            StartReason::NewFile
        } else {
            StartReason::NewColumns
        };
        let all = 0..seg.rows();
        let mut starts = vec![(0usize, first_reason)];
        if logged_time(seg).is_some() {
            starts.extend(inner_boundaries(seg, &all));
        }
        for (k, &(from, why)) in starts.iter().enumerate() {
            let to = starts.get(k + 1).map_or(seg.rows(), |&(r, _)| r);
            let p = piece(seg, si, from..to, why, opts);
            out.extend(split_ramp(seg, p, opts));
        }
    }
    out
}

/// A piece whose temperature follows a ramp: the ramp (heating) and, after a plateau long
/// enough, the rest as a piece of its own.
fn split_ramp(seg: &Segment, p: Piece, opts: &StageOptions) -> Vec<Piece> {
    if p.minimization.is_some() {
        return vec![p];
    }
    let (Some(t), Some(temp)) = (
        seg.column(Role::Time).map(|c| slice(c, &p.rows)),
        seg.column(Role::Temperature).map(|c| slice(c, &p.rows)),
    ) else {
        return vec![p];
    };
    let Some(r) = ramp::find_heating(t, temp) else {
        return vec![p];
    };
    let n = p.rows.len();
    if r.end_row + ramp::MIN_PLATEAU_ROWS > n {
        return vec![Piece { ramp: Some(r), ..p }];
    }
    let cut = p.rows.start + r.end_row;
    let head = piece(seg, p.segment, p.rows.start..cut, p.start, opts);
    let tail = piece(
        seg,
        p.segment,
        cut..p.rows.end,
        StartReason::RampEnded,
        opts,
    );
    vec![
        Piece {
            ramp: Some(r),
            ..head
        },
        tail,
    ]
}

/// Rows `rows` of `seg` as a segment of their own (restarts and lines kept with their rows;
/// the header stays with the first piece).
pub fn sub_segment(seg: &Segment, rows: &Range<usize>) -> Segment {
    let columns = seg
        .columns
        .iter()
        .map(|c| c.sub_column(rows.clone()))
        .collect();
    let lines = rows.clone().filter_map(|r| seg.lines.get(r)).collect();
    let (first, last) = (
        seg.lines.get(rows.start),
        seg.lines.get(rows.end.saturating_sub(1)),
    );
    let restarts = seg
        .restarts
        .iter()
        .filter(|r| match (first, last) {
            (Some(a), Some(b)) => r.line >= a && r.line <= b,
            _ => false,
        })
        .cloned()
        .collect();
    Segment {
        header_line: if rows.start == 0 {
            seg.header_line
        } else {
            None
        },
        names: seg.names.clone(),
        header_commented: seg.header_commented,
        delimiter: seg.delimiter,
        fields: seg.fields,
        columns,
        lines,
        restarts,
        header_repeats: if rows.start == 0 {
            seg.header_repeats
        } else {
            0
        },
        order_column: seg.order_column,
        derived_time: seg.derived_time,
    }
}

/// The table with one segment per stage piece (everything else as it was).
pub fn split_table(table: &RunTable, pieces: &[Piece]) -> RunTable {
    let segments = pieces
        .iter()
        .filter_map(|p| {
            table
                .segments
                .get(p.segment)
                .map(|s| sub_segment(s, &p.rows))
        })
        .collect();
    table.with_segments(segments)
}
