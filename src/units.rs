//! Units and conversions to the canonical units; quantities with suffixes; schedules.
//!
//! Canonical units (the Contract): time ps, temperature K, pressure bar, energy kJ/mol,
//! volume nm³, density kg/m³. Every stored value is `source × scale + offset` of its unit
//! ([`Unit::to_canonical`]); only degrees Celsius have an offset.
//!
//! Reading units is forgiving of spelling: case, spaces, `^`, `**`, `·`, superscripts,
//! `Å`/`A`/`Ang`, `mol-1`/`mol^-1`/`/mol` all work (`kJ/mol`, `kj mol-1`, `kJ mol^-1`,
//! `A^3`, `Å³`, `g/cc`). `kT` needs a reference temperature: `kT@300K` or `kT(300 K)`.
//! A bare `kJ` or `kcal` is read as per mole (the usual shorthand in logs).
//!
//! On the command line a number takes the canonical unit unless it carries a suffix
//! ([`parse_quantity`]: `300K`, `1atm`, `2fs`); times may be steps ([`parse_time`]:
//! `500000steps`); wall-time durations have their own suffixes ([`parse_duration`]:
//! `500ms`, `2s`, `10min`, `1h`); a [`Schedule`] is `TIME=VALUE` points joined by commas.
//!
//! Constants are SI 2019 exact values and CODATA 2018 (see [`constants`]).
//!
//! To add a unit: a variant of [`Unit`], its [`Unit::dimension`], [`Unit::scale`] (and
//! [`Unit::offset`] if any), its `Display` name, its spellings in `lookup` (normalised:
//! lower case, no spaces, `^`, `·` or `_`), and a check against a cited value in
//! `tests/parse_units.rs`.

use std::fmt;
use std::time::Duration;

use serde::Serialize;

use crate::error::UnitError;

/// Physical constants (SI 2019 exact defining constants, CODATA 2018, NIST SP 811).
pub mod constants {
    /// Boltzmann constant, J/K (SI 2019, exact).
    pub const BOLTZMANN_J_PER_K: f64 = 1.380649e-23;
    /// Avogadro constant, 1/mol (SI 2019, exact).
    pub const AVOGADRO_PER_MOL: f64 = 6.02214076e23;
    /// Elementary charge, C (SI 2019, exact).
    pub const ELEMENTARY_CHARGE_C: f64 = 1.602176634e-19;
    /// Molar gas constant R = N_A·k_B in kJ/(mol·K) (exact, 15 digits).
    pub const MOLAR_GAS_CONSTANT_KJ_PER_MOL_K: f64 = 0.008_314_462_618_153_24;
    /// One electronvolt per particle in kJ/mol: e·N_A/1000 (exact: 96.4853321233100184).
    pub const ELECTRONVOLT_KJ_PER_MOL: f64 = 96.485_332_123_310_02;
    /// Thermochemical calorie in J (NIST SP 811, exact).
    pub const CALORIE_J: f64 = 4.184;
    /// Standard atmosphere in Pa (exact).
    pub const ATMOSPHERE_PA: f64 = 101_325.0;
    /// Bar in Pa (exact).
    pub const BAR_PA: f64 = 100_000.0;
    /// 0 °C in K (exact).
    pub const CELSIUS_ZERO_K: f64 = 273.15;
    /// Hartree energy in J (CODATA 2018: 4.3597447222071(85)e-18 J; value from memory).
    pub const HARTREE_J: f64 = 4.359_744_722_207_1e-18;
    /// Atomic mass constant in kg (CODATA 2018: 1.66053906660(50)e-27 kg; value from memory).
    pub const ATOMIC_MASS_KG: f64 = 1.660_539_066_60e-27;
}

use constants::*;

/// What a unit measures; each has one canonical unit.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize)]
#[serde(rename_all = "kebab-case")]
pub enum Dimension {
    /// Simulated time (canonical ps).
    Time,
    /// Temperature (canonical K).
    Temperature,
    /// Pressure (canonical bar).
    Pressure,
    /// Molar energy (canonical kJ/mol).
    Energy,
    /// Volume (canonical nm³).
    Volume,
    /// Mass density (canonical kg/m³).
    Density,
}

impl Dimension {
    /// The canonical unit of this dimension.
    pub fn canonical(self) -> Unit {
        match self {
            Dimension::Time => Unit::Picosecond,
            Dimension::Temperature => Unit::Kelvin,
            Dimension::Pressure => Unit::Bar,
            Dimension::Energy => Unit::KilojoulePerMole,
            Dimension::Volume => Unit::CubicNanometre,
            Dimension::Density => Unit::KilogramPerCubicMetre,
        }
    }

    /// Plain name ("temperature").
    pub fn name(self) -> &'static str {
        match self {
            Dimension::Time => "time",
            Dimension::Temperature => "temperature",
            Dimension::Pressure => "pressure",
            Dimension::Energy => "energy",
            Dimension::Volume => "volume",
            Dimension::Density => "density",
        }
    }
}

/// A unit plateau can read. Convert with [`Unit::to_canonical`].
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Unit {
    /// fs
    Femtosecond,
    /// ps (canonical time)
    Picosecond,
    /// ns
    Nanosecond,
    /// µs
    Microsecond,
    /// K (canonical temperature)
    Kelvin,
    /// °C
    Celsius,
    /// bar (canonical pressure)
    Bar,
    /// atm (standard atmosphere)
    Atmosphere,
    /// Pa
    Pascal,
    /// kPa
    Kilopascal,
    /// MPa
    Megapascal,
    /// GPa
    Gigapascal,
    /// kJ/mol (canonical energy)
    KilojoulePerMole,
    /// J/mol
    JoulePerMole,
    /// kcal/mol (thermochemical calorie)
    KilocaloriePerMole,
    /// cal/mol
    CaloriePerMole,
    /// eV (per particle)
    Electronvolt,
    /// hartree (per particle)
    Hartree,
    /// rydberg (half a hartree, per particle)
    Rydberg,
    /// k_B·T at a stated reference temperature (K).
    KT {
        /// Reference temperature in K.
        reference_k: f64,
    },
    /// nm³ (canonical volume)
    CubicNanometre,
    /// Å³
    CubicAngstrom,
    /// cm³
    CubicCentimetre,
    /// kg/m³ (canonical density)
    KilogramPerCubicMetre,
    /// g/cm³
    GramPerCubicCentimetre,
    /// atomic mass units per nm³
    DaltonPerCubicNanometre,
    /// atomic mass units per Å³
    DaltonPerCubicAngstrom,
}

impl Unit {
    /// What the unit measures.
    pub fn dimension(self) -> Dimension {
        use Unit::*;
        match self {
            Femtosecond | Picosecond | Nanosecond | Microsecond => Dimension::Time,
            Kelvin | Celsius => Dimension::Temperature,
            Bar | Atmosphere | Pascal | Kilopascal | Megapascal | Gigapascal => Dimension::Pressure,
            KilojoulePerMole
            | JoulePerMole
            | KilocaloriePerMole
            | CaloriePerMole
            | Electronvolt
            | Hartree
            | Rydberg
            | KT { .. } => Dimension::Energy,
            CubicNanometre | CubicAngstrom | CubicCentimetre => Dimension::Volume,
            KilogramPerCubicMetre
            | GramPerCubicCentimetre
            | DaltonPerCubicNanometre
            | DaltonPerCubicAngstrom => Dimension::Density,
        }
    }

    /// Multiplier to the canonical unit.
    pub fn scale(self) -> f64 {
        use Unit::*;
        match self {
            Femtosecond => 1e-3,
            Picosecond => 1.0,
            Nanosecond => 1e3,
            Microsecond => 1e6,
            Kelvin | Celsius => 1.0,
            Bar => 1.0,
            Atmosphere => ATMOSPHERE_PA / BAR_PA,
            Pascal => 1.0 / BAR_PA,
            Kilopascal => 1e3 / BAR_PA,
            Megapascal => 1e6 / BAR_PA,
            Gigapascal => 1e9 / BAR_PA,
            KilojoulePerMole => 1.0,
            JoulePerMole => 1e-3,
            KilocaloriePerMole => CALORIE_J,
            CaloriePerMole => CALORIE_J * 1e-3,
            Electronvolt => ELECTRONVOLT_KJ_PER_MOL,
            Hartree => HARTREE_J * AVOGADRO_PER_MOL * 1e-3,
            Rydberg => 0.5 * HARTREE_J * AVOGADRO_PER_MOL * 1e-3,
            KT { reference_k } => MOLAR_GAS_CONSTANT_KJ_PER_MOL_K * reference_k,
            CubicNanometre => 1.0,
            CubicAngstrom => 1e-3,
            CubicCentimetre => 1e21,
            KilogramPerCubicMetre => 1.0,
            GramPerCubicCentimetre => 1e3,
            // 1 u / 1 nm³ = 1.66053906660e-27 kg / 1e-27 m³
            DaltonPerCubicNanometre => ATOMIC_MASS_KG * 1e27,
            DaltonPerCubicAngstrom => ATOMIC_MASS_KG * 1e30,
        }
    }

    /// Offset added after scaling (only °C: +273.15 K).
    pub fn offset(self) -> f64 {
        match self {
            Unit::Celsius => CELSIUS_ZERO_K,
            _ => 0.0,
        }
    }

    /// Converts a value in this unit to the canonical unit of its dimension.
    #[inline]
    pub fn to_canonical(self, value: f64) -> f64 {
        value * self.scale() + self.offset()
    }

    /// Converts a canonical value back into this unit.
    pub fn from_canonical(self, value: f64) -> f64 {
        (value - self.offset()) / self.scale()
    }

    /// True for the canonical unit of its dimension.
    pub fn is_canonical(self) -> bool {
        self == self.dimension().canonical()
    }

    /// Reads a unit, forgiving of spelling (see the module docs).
    pub fn parse(text: &str) -> Result<Unit, UnitError> {
        let norm = normalize(text);
        if let Some(unit) = lookup(&norm) {
            return Ok(unit);
        }
        if let Some(rest) = norm.strip_prefix("kt") {
            if rest.is_empty() {
                return Err(UnitError::KtWithoutTemperature(text.to_string()));
            }
            let rest = rest
                .trim_start_matches('@')
                .trim_start_matches("at")
                .trim_start_matches('(')
                .trim_end_matches(')')
                .trim_end_matches('k');
            if let Ok(t) = rest.parse::<f64>() {
                if t.is_finite() && t > 0.0 {
                    return Ok(Unit::KT { reference_k: t });
                }
            }
        }
        Err(UnitError::Unknown(text.to_string()))
    }

    /// Reads a unit that must measure `dimension`.
    pub fn parse_for(text: &str, dimension: Dimension) -> Result<Unit, UnitError> {
        let unit = Unit::parse(text)?;
        if unit.dimension() == dimension {
            Ok(unit)
        } else {
            Err(UnitError::WrongDimension {
                text: text.to_string(),
                expected: dimension.name(),
            })
        }
    }
}

impl fmt::Display for Unit {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        use Unit::*;
        let s = match self {
            Femtosecond => "fs",
            Picosecond => "ps",
            Nanosecond => "ns",
            Microsecond => "us",
            Kelvin => "K",
            Celsius => "°C",
            Bar => "bar",
            Atmosphere => "atm",
            Pascal => "Pa",
            Kilopascal => "kPa",
            Megapascal => "MPa",
            Gigapascal => "GPa",
            KilojoulePerMole => "kJ/mol",
            JoulePerMole => "J/mol",
            KilocaloriePerMole => "kcal/mol",
            CaloriePerMole => "cal/mol",
            Electronvolt => "eV",
            Hartree => "hartree",
            Rydberg => "Ry",
            KT { reference_k } => return write!(f, "kT@{reference_k}K"),
            CubicNanometre => "nm^3",
            CubicAngstrom => "A^3",
            CubicCentimetre => "cm^3",
            KilogramPerCubicMetre => "kg/m^3",
            GramPerCubicCentimetre => "g/cm^3",
            DaltonPerCubicNanometre => "u/nm^3",
            DaltonPerCubicAngstrom => "u/A^3",
        };
        f.write_str(s)
    }
}

impl Serialize for Unit {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.collect_str(self)
    }
}

/// Lower-case, drop spaces and decorations, fold `Å`→`a`, superscripts, `^`, `**`, `·`.
fn normalize(text: &str) -> String {
    let mut out = String::with_capacity(text.len());
    for c in text.trim().chars() {
        match c {
            ' ' | '\t' | '^' | '·' | '_' => {}
            '*' => {}
            'Å' | 'å' => out.push('a'),
            '³' => out.push('3'),
            '¹' => out.push('1'),
            '⁻' => out.push('-'),
            'µ' | 'μ' => out.push('u'),
            '°' => {}
            _ => out.extend(c.to_lowercase()),
        }
    }
    // "per mole" spellings: mol-1, /mol, /mole
    out.replace("mole", "mol")
}

fn lookup(norm: &str) -> Option<Unit> {
    use Unit::*;
    let unit = match norm {
        "fs" | "femtosecond" | "femtoseconds" => Femtosecond,
        "ps" | "picosecond" | "picoseconds" => Picosecond,
        "ns" | "nanosecond" | "nanoseconds" => Nanosecond,
        "us" | "microsecond" | "microseconds" => Microsecond,
        "k" | "kelvin" => Kelvin,
        "c" | "degc" | "celsius" | "degreescelsius" => Celsius,
        "bar" | "bars" => Bar,
        "atm" | "atmosphere" | "atmospheres" => Atmosphere,
        "pa" | "pascal" => Pascal,
        "kpa" => Kilopascal,
        "mpa" => Megapascal,
        "gpa" => Gigapascal,
        "kj/mol" | "kjmol-1" | "kj" | "kjpermol" | "kjmol" | "kj/(mol)" => KilojoulePerMole,
        "j/mol" | "jmol-1" | "jpermol" | "jmol" => JoulePerMole,
        "kcal/mol" | "kcalmol-1" | "kcal" | "kcalpermol" | "kcalmol" => KilocaloriePerMole,
        "cal/mol" | "calmol-1" | "calpermol" | "calmol" => CaloriePerMole,
        "ev" | "electronvolt" | "electronvolts" => Electronvolt,
        "hartree" | "hartrees" | "ha" | "eh" => Hartree,
        "ry" | "rydberg" | "rydbergs" => Rydberg,
        "nm3" | "cubicnanometre" | "cubicnanometer" => CubicNanometre,
        "a3" | "ang3" | "angstrom3" | "angstroms3" | "cubicangstrom" => CubicAngstrom,
        "cm3" | "cc" => CubicCentimetre,
        "kg/m3" | "kgm-3" | "kgm3" | "kgperm3" => KilogramPerCubicMetre,
        "g/cm3" | "gcm-3" | "g/cc" | "g/ml" | "gcm3" | "gpercm3" => GramPerCubicCentimetre,
        "u/nm3" | "amu/nm3" | "da/nm3" | "unm-3" | "amunm-3" => DaltonPerCubicNanometre,
        "u/a3" | "amu/a3" | "da/a3" | "ua-3" | "amua-3" => DaltonPerCubicAngstrom,
        _ => return None,
    };
    Some(unit)
}

/// Splits `text` into the longest leading number and the rest (trimmed).
fn split_number(text: &str) -> Option<(f64, &str)> {
    let text = text.trim();
    let bytes = text.as_bytes();
    // Try prefixes from longest to shortest; only positions on char boundaries.
    let mut end = text.len();
    while end > 0 {
        if text.is_char_boundary(end) {
            if let Some(prefix) = text.get(..end) {
                let starts_like_number = bytes
                    .first()
                    .is_some_and(|b| b.is_ascii_digit() || matches!(b, b'+' | b'-' | b'.'));
                if starts_like_number {
                    if let Ok(v) = prefix.trim().parse::<f64>() {
                        if v.is_finite() {
                            return Some((v, text.get(end..).unwrap_or("").trim()));
                        }
                    }
                }
            }
        }
        end -= 1;
    }
    None
}

/// A number with an optional unit suffix, converted to the canonical unit of `dimension`
/// (`300K`, `27C`, `1atm`, `2fs`, `-1.5kcal/mol`; a bare number is canonical).
pub fn parse_quantity(text: &str, dimension: Dimension) -> Result<f64, UnitError> {
    let (value, suffix) = split_number(text).ok_or_else(|| UnitError::BadNumber(text.into()))?;
    if suffix.is_empty() {
        return Ok(value);
    }
    let unit = Unit::parse_for(suffix, dimension)?;
    Ok(unit.to_canonical(value))
}

/// A simulated time: canonical ps, or a number of steps (needs a time step to convert).
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum TimeSpec {
    /// Time in ps.
    Ps(f64),
    /// A step count.
    Steps(f64),
}

impl TimeSpec {
    /// In ps, using `timestep_ps` for a step count.
    pub fn to_ps(self, timestep_ps: Option<f64>) -> Option<f64> {
        match self {
            TimeSpec::Ps(t) => Some(t),
            TimeSpec::Steps(n) => timestep_ps.map(|dt| n * dt),
        }
    }
}

/// A simulated time with an optional suffix: `10ns`, `2fs`, `500000steps` (bare = ps).
pub fn parse_time(text: &str) -> Result<TimeSpec, UnitError> {
    let (value, suffix) = split_number(text).ok_or_else(|| UnitError::BadNumber(text.into()))?;
    let s = suffix.to_ascii_lowercase();
    if matches!(s.as_str(), "step" | "steps") {
        return Ok(TimeSpec::Steps(value));
    }
    if suffix.is_empty() {
        return Ok(TimeSpec::Ps(value));
    }
    Ok(TimeSpec::Ps(
        Unit::parse_for(suffix, Dimension::Time)?.to_canonical(value),
    ))
}

/// A wall-time duration: `500ms`, `2s`, `1.5s`, `10min`, `1h` (a bare number is seconds).
pub fn parse_duration(text: &str) -> Result<Duration, UnitError> {
    let (value, suffix) = split_number(text).ok_or_else(|| UnitError::BadNumber(text.into()))?;
    let seconds = match suffix.to_ascii_lowercase().as_str() {
        "" | "s" | "sec" | "secs" | "second" | "seconds" => value,
        "ms" | "msec" => value * 1e-3,
        "us" => value * 1e-6,
        "m" | "min" | "mins" | "minute" | "minutes" => value * 60.0,
        "h" | "hr" | "hrs" | "hour" | "hours" => value * 3600.0,
        "d" | "day" | "days" => value * 86400.0,
        _ => return Err(UnitError::Unknown(suffix.to_string())),
    };
    Duration::try_from_secs_f64(seconds).map_err(|_| UnitError::BadNumber(text.into()))
}

/// Values set along simulated time: points `(time_ps, value)` in increasing time, linear in
/// between, the first value before the first point and the last value after the last.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct Schedule {
    points: Vec<(f64, f64)>,
}

impl Schedule {
    /// A schedule holding one value at all times.
    pub fn constant(value: f64) -> Schedule {
        Schedule {
            points: vec![(0.0, value)],
        }
    }

    /// The points `(time_ps, canonical value)`, in increasing time.
    pub fn points(&self) -> &[(f64, f64)] {
        &self.points
    }

    /// Reads `300K` (constant) or `0ps=10K,50ps=300K` (times may be steps when
    /// `timestep_ps` is known). Values take the canonical unit of `dimension` unless suffixed.
    pub fn parse(
        text: &str,
        dimension: Dimension,
        timestep_ps: Option<f64>,
    ) -> Result<Schedule, UnitError> {
        let bad = |reason: &str| UnitError::BadSchedule {
            text: text.to_string(),
            reason: reason.to_string(),
        };
        if !text.contains('=') {
            return Ok(Schedule::constant(parse_quantity(text, dimension)?));
        }
        let mut points: Vec<(f64, f64)> = Vec::new();
        for part in text.split(',') {
            let (t, v) = part
                .split_once('=')
                .ok_or_else(|| bad("each point is TIME=VALUE"))?;
            let time = parse_time(t)?
                .to_ps(timestep_ps)
                .ok_or_else(|| UnitError::StepsWithoutTimestep(t.trim().to_string()))?;
            let value = parse_quantity(v, dimension)?;
            if let Some(&(last, _)) = points.last() {
                if time <= last {
                    return Err(bad("times must increase from point to point"));
                }
            }
            points.push((time, value));
        }
        if points.is_empty() {
            return Err(bad("no points"));
        }
        Ok(Schedule { points })
    }

    /// The value at `time_ps`: linear between points, held before the first and after the last.
    pub fn value_at(&self, time_ps: f64) -> f64 {
        let Some(&(t0, v0)) = self.points.first() else {
            return f64::NAN;
        };
        if time_ps <= t0 {
            return v0;
        }
        for pair in self.points.windows(2) {
            if let [(ta, va), (tb, vb)] = *pair {
                if time_ps <= tb {
                    let w = (time_ps - ta) / (tb - ta);
                    return va + w * (vb - va);
                }
            }
        }
        self.points.last().map_or(v0, |&(_, v)| v)
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn spellings() {
        for s in [
            "kJ/mol",
            "kj mol-1",
            "kJ mol^-1",
            "KJ/MOL",
            "kJ·mol⁻¹",
            "kJ/mole",
        ] {
            assert_eq!(Unit::parse(s), Ok(Unit::KilojoulePerMole), "{s}");
        }
        for s in ["A^3", "Å^3", "Å³", "Ang^3", "A**3", "angstrom^3"] {
            assert_eq!(Unit::parse(s), Ok(Unit::CubicAngstrom), "{s}");
        }
        for s in ["g/cm^3", "g/cc", "g cm^-3", "g/mL"] {
            assert_eq!(Unit::parse(s), Ok(Unit::GramPerCubicCentimetre), "{s}");
        }
        assert_eq!(Unit::parse("°C"), Ok(Unit::Celsius));
        assert_eq!(Unit::parse("MPa"), Ok(Unit::Megapascal));
        assert_eq!(Unit::parse("kT@300K"), Ok(Unit::KT { reference_k: 300.0 }));
        assert_eq!(
            Unit::parse("kT(298.15 K)"),
            Ok(Unit::KT {
                reference_k: 298.15
            })
        );
        assert!(matches!(
            Unit::parse("kT"),
            Err(UnitError::KtWithoutTemperature(_))
        ));
        assert!(matches!(Unit::parse("furlong"), Err(UnitError::Unknown(_))));
        assert!(matches!(
            Unit::parse_for("bar", Dimension::Temperature),
            Err(UnitError::WrongDimension { .. })
        ));
    }

    #[test]
    fn quantities() {
        assert_eq!(parse_quantity("300K", Dimension::Temperature), Ok(300.0));
        assert_eq!(parse_quantity("300", Dimension::Temperature), Ok(300.0));
        // 0 °C = 273.15 K (SI, exact)
        assert_eq!(parse_quantity("0C", Dimension::Temperature), Ok(273.15));
        // 1 atm = 1.01325 bar (exact)
        assert_eq!(parse_quantity("1atm", Dimension::Pressure), Ok(1.01325));
        assert_eq!(parse_quantity("2fs", Dimension::Time), Ok(0.002));
        assert_eq!(
            parse_quantity("1eV", Dimension::Energy),
            Ok(96.485_332_123_310_02)
        );
        assert!(parse_quantity("fast", Dimension::Time).is_err());
        assert!(parse_quantity("3bar", Dimension::Time).is_err());
        assert_eq!(parse_time("500000steps"), Ok(TimeSpec::Steps(500000.0)));
        assert_eq!(parse_time("10ns"), Ok(TimeSpec::Ps(10000.0)));
        assert_eq!(
            parse_time("500000steps").map(|t| t.to_ps(Some(0.002))),
            Ok(Some(1000.0))
        );
    }

    #[test]
    fn durations() {
        assert_eq!(parse_duration("500ms"), Ok(Duration::from_millis(500)));
        assert_eq!(parse_duration("10min"), Ok(Duration::from_secs(600)));
        assert_eq!(parse_duration("2s"), Ok(Duration::from_secs(2)));
        assert_eq!(parse_duration("2"), Ok(Duration::from_secs(2)));
        assert_eq!(parse_duration("1h"), Ok(Duration::from_secs(3600)));
        assert!(parse_duration("-1s").is_err());
        assert!(parse_duration("1 fortnight").is_err());
    }

    #[test]
    fn schedules() {
        let s = Schedule::parse("0ps=10K,50ps=300K", Dimension::Temperature, None).unwrap();
        assert_eq!(s.value_at(-1.0), 10.0);
        assert_eq!(s.value_at(0.0), 10.0);
        assert_eq!(s.value_at(25.0), 155.0);
        assert_eq!(s.value_at(50.0), 300.0);
        assert_eq!(s.value_at(1e6), 300.0);
        let c = Schedule::parse("1atm", Dimension::Pressure, None).unwrap();
        assert_eq!(c.value_at(123.0), 1.01325);
        assert!(Schedule::parse("10ps=1,5ps=2", Dimension::Pressure, None).is_err());
        assert!(Schedule::parse("0steps=1", Dimension::Pressure, None).is_err());
        let st = Schedule::parse("0steps=1,1000steps=2", Dimension::Pressure, Some(0.002)).unwrap();
        assert_eq!(st.points(), &[(0.0, 1.0), (2.0, 2.0)]);
    }
}
