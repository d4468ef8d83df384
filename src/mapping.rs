//! Column mapping: roles and units, guessed from header names or given with `--map`.
//!
//! A role is one of the trade's quantities ([`Role`]). A role may map to several columns
//! (e.g. per-group temperatures); a column has at most one role; columns without a role are
//! kept and shown as they are.
//!
//! `--map ROLE=COLUMN[:UNIT]` ([`MapRequest`]): COLUMN is a 1-based index or a header name
//! (matched exactly, then ignoring case, then ignoring the unit in brackets). When a role is
//! given on the command line, it is no longer guessed for other columns.
//!
//! Guessing ([`guess_role`]) looks at the words of a header name with generic English and
//! common abbreviations (temp, T, press, P, pot, epot, kinetic, ekin, KE, total, etot,
//! conserved, volume, vol, density, rho, step, time, t). `T` is temperature, `t` is time.
//! Wall-clock columns (`wall`, `cpu`, `elapsed`, `clock`) get no role.
//!
//! Units: from `--map`, else from the header's brackets (`Temp (K)`), else from a trailing
//! word of the name (`time_ps`), else the canonical unit of the role, marked `assumed`.
//! Columns without a role but with a known unit in their header are converted too. Values
//! are stored in canonical units: `canonical = source × scale + offset`.
//!
//! `--timestep` derives a `time` column (ps) from the step column when the log has no time.
//!
//! To add a role: a variant of [`Role`], its entry in [`Role::ALL`], [`Role::name`] and
//! [`Role::dimension`], generic words for it in [`guess_role`], and a case in the tests.

use std::fmt;
use std::str::FromStr;

use serde::{Deserialize, Serialize};

use crate::error::MapError;
use crate::parse::layout::HeaderName;
use crate::units::{Dimension, Unit};

/// The trade's quantities a column can stand for.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Role {
    /// Integration step counter (used to detect restarts).
    Step,
    /// Simulated time.
    Time,
    /// Temperature.
    Temperature,
    /// Pressure.
    Pressure,
    /// Potential energy.
    Potential,
    /// Kinetic energy.
    Kinetic,
    /// Total energy.
    Total,
    /// Conserved energy (the quantity an integrator should conserve).
    Conserved,
    /// Box volume.
    Volume,
    /// Mass density.
    Density,
}

impl Role {
    /// Every role, in display order.
    pub const ALL: [Role; 10] = [
        Role::Step,
        Role::Time,
        Role::Temperature,
        Role::Pressure,
        Role::Potential,
        Role::Kinetic,
        Role::Total,
        Role::Conserved,
        Role::Volume,
        Role::Density,
    ];

    /// The name used on the command line and in output.
    pub fn name(self) -> &'static str {
        match self {
            Role::Step => "step",
            Role::Time => "time",
            Role::Temperature => "temperature",
            Role::Pressure => "pressure",
            Role::Potential => "potential",
            Role::Kinetic => "kinetic",
            Role::Total => "total",
            Role::Conserved => "conserved",
            Role::Volume => "volume",
            Role::Density => "density",
        }
    }

    /// What the role measures (`None` for the step counter).
    pub fn dimension(self) -> Option<Dimension> {
        match self {
            Role::Step => None,
            Role::Time => Some(Dimension::Time),
            Role::Temperature => Some(Dimension::Temperature),
            Role::Pressure => Some(Dimension::Pressure),
            Role::Potential | Role::Kinetic | Role::Total | Role::Conserved => {
                Some(Dimension::Energy)
            }
            Role::Volume => Some(Dimension::Volume),
            Role::Density => Some(Dimension::Density),
        }
    }
}

impl fmt::Display for Role {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

impl FromStr for Role {
    type Err = MapError;
    fn from_str(s: &str) -> Result<Role, MapError> {
        let t = s.trim().to_ascii_lowercase();
        Role::ALL
            .into_iter()
            .find(|r| r.name() == t)
            .ok_or_else(|| MapError::UnknownRole(s.trim().to_string()))
    }
}

/// Which column a `--map` names.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum ColumnRef {
    /// 1-based index.
    Index(usize),
    /// A header name.
    Name(String),
}

impl fmt::Display for ColumnRef {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            ColumnRef::Index(i) => write!(f, "{i}"),
            ColumnRef::Name(n) => f.write_str(n),
        }
    }
}

/// One `--map ROLE=COLUMN[:UNIT]`.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct MapRequest {
    /// The role.
    pub role: Role,
    /// The column.
    pub column: ColumnRef,
    /// The unit of the values in the file, if given.
    pub unit: Option<Unit>,
}

impl FromStr for MapRequest {
    type Err = MapError;

    /// `temperature=3`, `pressure=Press:atm`, `potential="Potential Energy":kcal/mol`.
    fn from_str(text: &str) -> Result<MapRequest, MapError> {
        let (role, rest) = text
            .split_once('=')
            .ok_or_else(|| MapError::Syntax(text.to_string()))?;
        let role: Role = role.parse()?;
        let rest = rest.trim();
        if rest.is_empty() {
            return Err(MapError::Syntax(text.to_string()));
        }
        let (column, unit) = match rest.rsplit_once(':') {
            Some((c, u)) if !c.trim().is_empty() => {
                let unit = match role.dimension() {
                    Some(dim) => Unit::parse_for(u, dim),
                    None => Unit::parse(u).and_then(|u| {
                        Err(crate::error::UnitError::WrongDimension {
                            text: u.to_string(),
                            expected: "a step counter (steps take no unit)",
                        })
                    }),
                }
                .map_err(|source| MapError::Unit {
                    text: text.to_string(),
                    source,
                })?;
                (c.trim(), Some(unit))
            }
            _ => (rest, None),
        };
        let column = column.trim_matches('"').trim_matches('\'');
        let column = match column.parse::<usize>() {
            Ok(0) => return Err(MapError::ZeroIndex(text.to_string())),
            Ok(i) => ColumnRef::Index(i),
            Err(_) => ColumnRef::Name(column.to_string()),
        };
        Ok(MapRequest { role, column, unit })
    }
}

impl fmt::Display for MapRequest {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{}={}", self.role, self.column)?;
        if let Some(u) = self.unit {
            write!(f, ":{u}")?;
        }
        Ok(())
    }
}

/// How a column's role was decided.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum RoleSource {
    /// From `--map` (or the settings file).
    Given,
    /// Guessed from the header name.
    Guessed,
    /// Read from the column's unit (`[K]` is a temperature) when the name did not tell.
    FromUnit,
    /// Read from the values: a strictly increasing integer column is a step counter, a
    /// strictly increasing column with near-constant spacing is time.
    FromData,
}

impl RoleSource {
    /// In words, for `columns`: "given", "name", "unit", "data".
    pub fn why(self) -> &'static str {
        match self {
            RoleSource::Given => "given",
            RoleSource::Guessed => "name",
            RoleSource::FromUnit => "unit",
            RoleSource::FromData => "data",
        }
    }
}

/// One column of a segment: where it comes from, what it is, and how to convert it.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ColumnSpec {
    /// 0-based field index in the file's rows; `None` for a derived column (time from step).
    pub field: Option<usize>,
    /// Column name (from the header, `colN` without a header, `time` when derived).
    pub name: String,
    /// The unit text from the header's brackets, as written.
    pub header_unit: Option<String>,
    /// The role, if any.
    pub role: Option<Role>,
    /// How the role was decided.
    pub role_source: Option<RoleSource>,
    /// Unit of the values in the file (`None`: unknown or dimensionless).
    pub source_unit: Option<Unit>,
    /// Unit of the stored values (canonical when `source_unit` is known).
    pub unit: Option<Unit>,
    /// True when the unit was not stated and the canonical unit is assumed.
    pub assumed: bool,
    /// Stored = source × scale + offset.
    pub scale: f64,
    /// Stored = source × scale + offset.
    pub offset: f64,
}

/// The columns of one segment, resolved from its header names and the `--map` requests.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct SegmentMapping {
    /// Columns in file order; a derived time column comes last.
    pub columns: Vec<ColumnSpec>,
    /// Index (into `columns`) of the column that orders rows for restarts: the first `step`
    /// column, else the first `time` column.
    pub order_column: Option<usize>,
    /// Index of the step column used to derive time, with the time step in ps.
    pub derived_time: Option<(usize, f64)>,
    /// Problems worth telling the user (a `--map` column not found, a unit not understood).
    pub warnings: Vec<String>,
}

fn words(name: &str) -> Vec<String> {
    let mut out = Vec::new();
    let mut cur = String::new();
    let mut prev_digit = None;
    for c in name.chars() {
        if c.is_alphanumeric() {
            let is_digit = c.is_ascii_digit();
            if prev_digit.is_some_and(|d| d != is_digit) && !cur.is_empty() {
                out.push(std::mem::take(&mut cur));
            }
            prev_digit = Some(is_digit);
            cur.extend(c.to_lowercase());
        } else {
            if !cur.is_empty() {
                out.push(std::mem::take(&mut cur));
            }
            prev_digit = None;
        }
    }
    if !cur.is_empty() {
        out.push(cur);
    }
    out
}

/// Names practitioners write for each role, lower-case, letters and digits only (common
/// practice, no source). Names not listed are read word by word (see [`guess_role`]).
const VOCABULARY: &[(&str, Role)] = &[
    ("step", Role::Step),
    ("steps", Role::Step),
    ("nstep", Role::Step),
    ("istep", Role::Step),
    ("iter", Role::Step),
    ("iteration", Role::Step),
    ("niter", Role::Step),
    ("stepnumber", Role::Step),
    ("stepno", Role::Step),
    ("mdstep", Role::Step),
    ("time", Role::Time),
    ("simtime", Role::Time),
    ("simulationtime", Role::Time),
    ("tsim", Role::Time),
    ("temp", Role::Temperature),
    ("temperature", Role::Temperature),
    ("press", Role::Pressure),
    ("pressure", Role::Pressure),
    ("pres", Role::Pressure),
    ("pot", Role::Potential),
    ("epot", Role::Potential),
    ("pote", Role::Potential),
    ("potential", Role::Potential),
    ("potentialenergy", Role::Potential),
    ("potenergy", Role::Potential),
    ("poteng", Role::Potential),
    ("epotential", Role::Potential),
    ("pe", Role::Potential),
    ("upot", Role::Potential),
    ("kin", Role::Kinetic),
    ("ekin", Role::Kinetic),
    ("kine", Role::Kinetic),
    ("ke", Role::Kinetic),
    ("ek", Role::Kinetic),
    ("kinetic", Role::Kinetic),
    ("kineticenergy", Role::Kinetic),
    ("kinenergy", Role::Kinetic),
    ("kineng", Role::Kinetic),
    ("ekinetic", Role::Kinetic),
    ("tot", Role::Total),
    ("etot", Role::Total),
    ("tote", Role::Total),
    ("total", Role::Total),
    ("totalenergy", Role::Total),
    ("totenergy", Role::Total),
    ("toteng", Role::Total),
    ("etotal", Role::Total),
    ("energy", Role::Total),
    ("cons", Role::Conserved),
    ("econs", Role::Conserved),
    ("conse", Role::Conserved),
    ("conserved", Role::Conserved),
    ("conservedenergy", Role::Conserved),
    ("econserved", Role::Conserved),
    ("conseng", Role::Conserved),
    ("consenergy", Role::Conserved),
    ("conservedquantity", Role::Conserved),
    ("vol", Role::Volume),
    ("volume", Role::Volume),
    ("boxvolume", Role::Volume),
    ("boxvol", Role::Volume),
    ("cellvolume", Role::Volume),
    ("cellvol", Role::Volume),
    ("rho", Role::Density),
    ("dens", Role::Density),
    ("density", Role::Density),
    ("massdensity", Role::Density),
];

/// Guesses a role from a header name (see the module docs), with or without a unit glued
/// on (`Epot_kJmol`, `T/K`).
pub fn guess_role(name: &str) -> Option<Role> {
    name_role(name).map(|(role, _)| role)
}

/// The role a header name reads as and the unit glued to its end, if any: `Epot_kJmol`,
/// `E_pot_kJ_per_mol`, `T/K`, `time/ps`, `press_atm`, `E_pot/(kJ/mol)` (the bracketed unit
/// already taken off by the header reader). A glued unit counts only when it measures what
/// the role measures.
pub fn name_role(name: &str) -> Option<(Role, Option<Unit>)> {
    let name = name.trim().trim_end_matches(['/', '_', '-', ' ']);
    if let Some(role) = base_role(name) {
        let unit = role.dimension().and_then(|d| unit_from_name(name, d));
        return Some((role, unit));
    }
    for (pos, c) in name.char_indices() {
        if !matches!(c, '_' | '/' | '-' | ' ' | '.') {
            continue;
        }
        let base = name
            .get(..pos)
            .unwrap_or("")
            .trim_end_matches(['_', '/', '-', ' ', '.']);
        let suffix = name.get(pos + c.len_utf8()..).unwrap_or("");
        if base.is_empty() || suffix.is_empty() {
            continue;
        }
        let Ok(unit) = Unit::parse(suffix) else {
            continue;
        };
        if let Some(role) = base_role(base) {
            if role.dimension() == Some(unit.dimension()) {
                return Some((role, Some(unit)));
            }
        }
    }
    None
}

/// The role a name without its unit reads as: single letters (case matters: `T` is
/// temperature, `t` time), then the vocabulary table, then words.
fn base_role(name: &str) -> Option<Role> {
    let trimmed = name.trim();
    match trimmed {
        "T" => return Some(Role::Temperature),
        "t" => return Some(Role::Time),
        "P" | "p" => return Some(Role::Pressure),
        "E" => return Some(Role::Total),
        "V" => return Some(Role::Volume),
        "U" => return Some(Role::Potential),
        _ => {}
    }
    let compact: String = trimmed
        .chars()
        .filter(|c| c.is_alphanumeric())
        .flat_map(char::to_lowercase)
        .collect();
    if let Some(&(_, role)) = VOCABULARY.iter().find(|(k, _)| *k == compact) {
        return Some(role);
    }
    let w = words(trimmed);
    let has = |list: &[&str]| w.iter().any(|x| list.contains(&x.as_str()));
    let starts = |prefix: &str| w.iter().any(|x| x.starts_with(prefix));
    if has(&[
        "wall", "cpu", "elapsed", "clock", "walltime", "cputime", "real",
    ]) {
        return None;
    }
    if has(&[
        "step",
        "steps",
        "nstep",
        "istep",
        "iter",
        "iteration",
        "iterations",
    ]) && !has(&["size", "length", "dt"])
    {
        return Some(Role::Step);
    }
    if w.first().is_some_and(|x| x == "time" || x == "simtime") || has(&["time"]) && w.len() <= 3 {
        return Some(Role::Time);
    }
    if starts("temp") {
        return Some(Role::Temperature);
    }
    if starts("press") || has(&["pres"]) {
        return Some(Role::Pressure);
    }
    if starts("conserv") || has(&["econs", "econserved", "cons"]) {
        return Some(Role::Conserved);
    }
    if starts("kinetic") || has(&["kin", "ekin", "ke", "kineng", "ekinetic"]) {
        return Some(Role::Kinetic);
    }
    if starts("potential") || has(&["pot", "epot", "pe", "poteng", "epotential"]) {
        return Some(Role::Potential);
    }
    if has(&["total", "tot", "etot", "etotal", "toteng", "totenergy"]) || w == ["energy"] {
        return Some(Role::Total);
    }
    if has(&["volume", "vol", "boxvolume"]) {
        return Some(Role::Volume);
    }
    if has(&["density", "dens", "rho"]) {
        return Some(Role::Density);
    }
    None
}

/// A unit written at the end of a name (`time_ps`, `press_atm`, `E_pot_kJ_mol`), if it fits
/// `dim`: the longest such ending after `_`, space, `-` or `/`.
fn unit_from_name(name: &str, dim: Dimension) -> Option<Unit> {
    name.char_indices()
        .filter(|(_, c)| matches!(c, '_' | ' ' | '-' | '/'))
        .find_map(|(pos, c)| {
            let rest = name.get(pos + c.len_utf8()..)?;
            (!rest.is_empty())
                .then(|| Unit::parse_for(rest, dim).ok())
                .flatten()
        })
}

fn find_column(names: &[HeaderName], column: &ColumnRef) -> Option<usize> {
    match column {
        ColumnRef::Index(i) => (*i >= 1 && *i <= names.len()).then(|| i - 1),
        ColumnRef::Name(n) => {
            let n = n.trim();
            names
                .iter()
                .position(|h| h.full() == n || h.name == n)
                .or_else(|| {
                    names.iter().position(|h| {
                        h.full().eq_ignore_ascii_case(n) || h.name.eq_ignore_ascii_case(n)
                    })
                })
        }
    }
}

/// Resolves the columns of a segment from its header names (generic `colN` names when the
/// segment has no header) and the `--map` requests.
pub fn resolve(
    names: &[HeaderName],
    requests: &[MapRequest],
    timestep_ps: Option<f64>,
) -> SegmentMapping {
    let mut warnings = Vec::new();
    let mut roles: Vec<Option<(Role, RoleSource, Option<Unit>)>> = vec![None; names.len()];
    for req in requests {
        match find_column(names, &req.column) {
            Some(i) => {
                if let Some(slot) = roles.get_mut(i) {
                    *slot = Some((req.role, RoleSource::Given, req.unit));
                }
            }
            None => warnings.push(format!(
                "--map {req}: no column '{}' here (columns: {})",
                req.column,
                names.len()
            )),
        }
    }
    let given: Vec<Role> = requests.iter().map(|r| r.role).collect();
    // Roles from names, then from units for columns whose name did not tell (a role not
    // already given or named elsewhere).
    let mut guessed: Vec<Option<(Role, RoleSource, Option<Unit>)>> = names
        .iter()
        .map(|h| match name_role(&h.name) {
            Some((r, glued)) if !given.contains(&r) => Some((r, RoleSource::Guessed, glued)),
            _ => None,
        })
        .collect();
    let named: Vec<Role> = guessed.iter().flatten().map(|g| g.0).collect();
    for (i, h) in names.iter().enumerate() {
        if roles.get(i).copied().flatten().is_some() || guessed.get(i).copied().flatten().is_some()
        {
            continue;
        }
        let Some(Ok(unit)) = h.unit.as_deref().map(Unit::parse) else {
            continue;
        };
        let role = match unit.dimension() {
            Dimension::Temperature => Role::Temperature,
            Dimension::Pressure => Role::Pressure,
            Dimension::Volume => Role::Volume,
            Dimension::Density => Role::Density,
            Dimension::Time => Role::Time,
            _ => continue, // energy: which one? (shown as ambiguous by `columns`)
        };
        if given.contains(&role) || named.contains(&role) {
            continue;
        }
        let taken = guessed.iter().flatten().any(|g| g.0 == role);
        if let (false, Some(slot)) = (taken, guessed.get_mut(i)) {
            *slot = Some((role, RoleSource::FromUnit, None));
        }
    }
    let mut columns = Vec::with_capacity(names.len() + 1);
    for (i, h) in names.iter().enumerate() {
        let mut glued = None;
        let (role, role_source, given_unit) = match roles.get(i).copied().flatten() {
            Some((r, s, u)) => (Some(r), Some(s), u),
            None => match guessed.get(i).copied().flatten() {
                Some((r, s, g)) => {
                    glued = g;
                    (Some(r), Some(s), None)
                }
                None => (None, None, None),
            },
        };
        let header_unit = h.unit.as_deref().map(Unit::parse);
        let mut assumed = false;
        let source_unit = match (role.and_then(Role::dimension), given_unit) {
            (_, Some(u)) => Some(u),
            (Some(dim), None) => match &header_unit {
                Some(Ok(u)) if u.dimension() == dim => Some(*u),
                Some(_) => {
                    warnings.push(format!(
                        "column {} '{}': unit '{}' is not a unit of {}; values kept as they are",
                        i + 1,
                        h.name,
                        h.unit.as_deref().unwrap_or(""),
                        dim.name()
                    ));
                    None
                }
                None => match glued.or_else(|| unit_from_name(&h.name, dim)) {
                    Some(u) => Some(u),
                    None => {
                        assumed = true;
                        Some(dim.canonical())
                    }
                },
            },
            (None, None) => match &header_unit {
                Some(Ok(u)) if role.is_none() => Some(*u),
                _ => None,
            },
        };
        let unit = source_unit.map(|u| u.dimension().canonical());
        columns.push(ColumnSpec {
            field: Some(i),
            name: h.name.clone(),
            header_unit: h.unit.clone(),
            role,
            role_source,
            source_unit,
            unit,
            assumed,
            scale: source_unit.map_or(1.0, Unit::scale),
            offset: source_unit.map_or(0.0, Unit::offset),
        });
    }
    let step = columns.iter().position(|c| c.role == Some(Role::Step));
    let has_time = columns.iter().any(|c| c.role == Some(Role::Time));
    let mut derived_time = None;
    if let (Some(dt), Some(s), false) = (timestep_ps, step, has_time) {
        derived_time = Some((s, dt));
        columns.push(ColumnSpec {
            field: None,
            name: "time".to_string(),
            header_unit: None,
            role: Some(Role::Time),
            role_source: Some(RoleSource::Given),
            source_unit: Some(Unit::Picosecond),
            unit: Some(Unit::Picosecond),
            assumed: false,
            scale: dt,
            offset: 0.0,
        });
    }
    if timestep_ps.is_some() && step.is_none() && !has_time {
        warnings.push(
            "--timestep: no step column to derive time from (map one with --map step=COLUMN)"
                .to_string(),
        );
    }
    let order_column = step.or_else(|| columns.iter().position(|c| c.role == Some(Role::Time)));
    SegmentMapping {
        columns,
        order_column,
        derived_time,
        warnings,
    }
}

/// Rows of a segment looked at to find counters from the data.
pub const COUNTER_ROWS: usize = 8;

/// Counters read from the values (of the first rows) of columns that have no role: the
/// first strictly increasing column of whole numbers is the step counter (when no column
/// is one already); the first other strictly increasing column whose spacing is constant
/// within 1 % is time (when no column is). Common practice, no source. Returns
/// (column index, role).
pub fn counters_from_data(columns: &[(Option<Role>, &[f64])]) -> Vec<(usize, Role)> {
    let mut has_step = columns.iter().any(|(r, _)| *r == Some(Role::Step));
    let mut has_time = columns.iter().any(|(r, _)| *r == Some(Role::Time));
    let mut out = Vec::new();
    for (i, (role, v)) in columns.iter().enumerate() {
        if role.is_some() || v.len() < 3 || !v.iter().all(|x| x.is_finite()) {
            continue;
        }
        if !v.windows(2).all(|w| matches!(w, [a, b] if b > a)) {
            continue;
        }
        if !has_step && v.iter().all(|x| x.fract() == 0.0) {
            out.push((i, Role::Step));
            has_step = true;
            continue;
        }
        let (Some(&a), Some(&b)) = (v.first(), v.get(1)) else {
            continue;
        };
        let d0 = b - a;
        let even = v
            .windows(2)
            .all(|w| matches!(w, [x, y] if ((y - x) - d0).abs() <= 0.01 * d0.abs()));
        if !has_time && even {
            out.push((i, Role::Time));
            has_time = true;
        }
    }
    out
}

/// Generic names `col1..colN` for a table without a header.
pub fn generic_names(n: usize) -> Vec<HeaderName> {
    (1..=n)
        .map(|i| HeaderName {
            name: format!("col{i}"),
            unit: None,
        })
        .collect()
}

/// A ready-to-paste `--map` line for the columns that have a role (1-based indices; the unit
/// is written whenever the role has one, assumed or not, so the user can correct it in place).
pub fn map_line(columns: &[ColumnSpec]) -> String {
    let mut parts = Vec::new();
    for c in columns {
        let (Some(field), Some(role)) = (c.field, c.role) else {
            continue;
        };
        let unit = match (c.source_unit, role.dimension()) {
            (Some(u), Some(_)) => format!(":{u}"),
            _ => String::new(),
        };
        parts.push(format!("--map {role}={}{unit}", field + 1));
    }
    parts.join(" ")
}

#[cfg(test)]
mod tests {
    use super::*;

    fn h(name: &str, unit: Option<&str>) -> HeaderName {
        HeaderName {
            name: name.into(),
            unit: unit.map(Into::into),
        }
    }

    #[test]
    fn guesses() {
        let cases = [
            ("Step", Some(Role::Step)),
            ("nstep", Some(Role::Step)),
            ("step size", None),
            ("Time", Some(Role::Time)),
            ("t", Some(Role::Time)),
            ("T", Some(Role::Temperature)),
            ("temp", Some(Role::Temperature)),
            ("Temperature", Some(Role::Temperature)),
            ("temp_solvent", Some(Role::Temperature)),
            ("Press", Some(Role::Pressure)),
            ("P", Some(Role::Pressure)),
            ("Potential Energy", Some(Role::Potential)),
            ("epot", Some(Role::Potential)),
            ("PE", Some(Role::Potential)),
            ("Kinetic", Some(Role::Kinetic)),
            ("KE", Some(Role::Kinetic)),
            ("ekin", Some(Role::Kinetic)),
            ("Total Energy", Some(Role::Total)),
            ("etot", Some(Role::Total)),
            ("Conserved", Some(Role::Conserved)),
            ("conserved energy", Some(Role::Conserved)),
            ("Volume", Some(Role::Volume)),
            ("vol", Some(Role::Volume)),
            ("Density", Some(Role::Density)),
            ("rho", Some(Role::Density)),
            ("wall time", None),
            ("cpu time", None),
            ("Bond", None),
        ];
        for (name, role) in cases {
            assert_eq!(guess_role(name), role, "{name}");
        }
    }

    #[test]
    fn map_requests() {
        let m: MapRequest = "temperature=3".parse().unwrap();
        assert_eq!(m.column, ColumnRef::Index(3));
        let m: MapRequest = "pressure=Press:atm".parse().unwrap();
        assert_eq!(m.column, ColumnRef::Name("Press".into()));
        assert_eq!(m.unit, Some(Unit::Atmosphere));
        assert!("pressure=Press:K".parse::<MapRequest>().is_err());
        assert!("heat=3".parse::<MapRequest>().is_err());
        assert!("temperature=0".parse::<MapRequest>().is_err());
        assert!("temperature".parse::<MapRequest>().is_err());
        assert!("step=1:fs".parse::<MapRequest>().is_err());
    }

    #[test]
    fn resolves_units_and_roles() {
        let names = [
            h("Step", None),
            h("Temp", Some("K")),
            h("Press", Some("atm")),
            h("Epot", Some("kcal/mol")),
            h("Bond", Some("kcal/mol")),
            h("Volume", None),
        ];
        let m = resolve(&names, &[], Some(0.002));
        assert_eq!(m.columns.len(), 7);
        assert_eq!(m.columns[2].source_unit, Some(Unit::Atmosphere));
        assert_eq!(m.columns[2].unit, Some(Unit::Bar));
        assert_eq!(m.columns[3].scale, 4.184);
        assert_eq!(m.columns[4].role, None);
        assert_eq!(m.columns[4].unit, Some(Unit::KilojoulePerMole));
        assert!(m.columns[5].assumed);
        assert_eq!(m.columns[6].field, None);
        assert_eq!(m.derived_time, Some((0, 0.002)));
        assert_eq!(m.order_column, Some(0));
        let req: MapRequest = "temperature=Bond:K".parse().unwrap();
        let m = resolve(&names, &[req], None);
        assert_eq!(m.columns[4].role, Some(Role::Temperature));
        assert_eq!(
            m.columns[1].role, None,
            "temperature given: no longer guessed"
        );
        let bad: MapRequest = "pressure=Nope".parse().unwrap();
        let m = resolve(&names, &[bad], None);
        assert_eq!(m.warnings.len(), 1);
        assert_eq!(
            map_line(&resolve(&names, &[], None).columns),
            "--map step=1 --map temperature=2:K --map pressure=3:atm --map potential=4:kcal/mol --map volume=6:nm^3"
        );
    }
}
