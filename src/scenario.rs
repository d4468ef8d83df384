//! Invented MD scenarios: synthetic energy logs for the demo, the example logs and the
//! benchmarks.
//!
//! Nothing here imitates a real engine's output. The series follow simple physical models
//! with the right orders of magnitude for a small solvated box (about 1000 water-sized
//! molecules, 3000 atoms):
//! - the kinetic temperature fluctuates around its (possibly ramped) reference with the
//!   canonical relative width `sqrt(2/N_df)` (suppressed in the thermostat-failure case,
//!   reduced in NVE), as an AR(1) process;
//! - the potential energy relaxes exponentially from a strained start to its equilibrium
//!   value, which follows the temperature through a heat capacity;
//! - the conserved energy is constant plus small noise, plus a linear drift in the
//!   NVE-drift case;
//! - pressure fluctuates by a few hundred bar around its target; the volume relaxes to
//!   its equilibrium value with fluctuations `sqrt(V k_B T κ_T)`; density is mass/volume.
//!
//! The generator is deterministic for a given seed (own small PRNG, no external crate) and
//! writes to any `io::Write`, so the same code makes `demo-logs/`, the live demo and the
//! 1 GB benchmark log.

use std::io::{self, Write};

/// Boltzmann constant in kJ/(mol K) (SI 2019 exact k_B times N_A).
const BOLTZMANN_KJ_PER_MOL_K: f64 = 0.008_314_462_618_153_24;
/// Isothermal compressibility of liquid water near 300 K, 1/bar (from memory: 4.5e-5 /bar).
const WATER_COMPRESSIBILITY_PER_BAR: f64 = 4.5e-5;
/// 1 bar·nm³ in kJ/mol per molecule-mol: 1e5 Pa * 1e-27 m³ * N_A / 1000.
const BAR_NM3_IN_KJ_PER_MOL: f64 = 1e5 * 1e-27 * 6.022_140_76e23 / 1000.0;

/// The invented situations a generated log shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Scenario {
    /// NPT run that relaxes from a strained start, then stays steady.
    Equilibration,
    /// NVT heating ramp from 10 K to 300 K, then a hold.
    Heating,
    /// NVE run whose conserved energy drifts upwards (time step too long).
    NveDrift,
    /// A run that is steady, then grows exponentially until values overflow.
    BlowUp,
    /// A steady run whose output stops (the live writer stalls; the file ends mid-line).
    Stalled,
    /// NVT run whose thermostat suppresses the kinetic-temperature fluctuations.
    ThermostatFailure,
}

impl Scenario {
    /// Every scenario, in the order the example logs are listed.
    pub const ALL: [Scenario; 6] = [
        Scenario::Equilibration,
        Scenario::Heating,
        Scenario::NveDrift,
        Scenario::BlowUp,
        Scenario::Stalled,
        Scenario::ThermostatFailure,
    ];

    /// The kebab-case name used on the command line and in file names.
    pub fn name(self) -> &'static str {
        match self {
            Scenario::Equilibration => "equilibration",
            Scenario::Heating => "heating",
            Scenario::NveDrift => "nve-drift",
            Scenario::BlowUp => "blow-up",
            Scenario::Stalled => "stalled",
            Scenario::ThermostatFailure => "thermostat-failure",
        }
    }

    /// Looks a scenario up by its kebab-case name.
    pub fn from_name(name: &str) -> Option<Scenario> {
        Scenario::ALL.into_iter().find(|s| s.name() == name)
    }

    /// One line saying what the scenario shows and what plateau should say about it.
    pub fn description(self) -> &'static str {
        match self {
            Scenario::Equilibration => {
                "NPT at 300 K and 1 bar: potential energy and volume relax for about 150 ps, then stay steady"
            }
            Scenario::Heating => {
                "NVT heating from 10 K to 300 K over 100 ps, then held at 300 K"
            }
            Scenario::NveDrift => {
                "NVE after equilibration: the conserved energy drifts upwards by about 400 kJ/mol per ns"
            }
            Scenario::BlowUp => {
                "steady NVT run that turns unstable: energies grow exponentially, then overflow"
            }
            Scenario::Stalled => "steady NPT run whose output stops; the last line is cut in half",
            Scenario::ThermostatFailure => {
                "NVT at 300 K whose thermostat suppresses temperature fluctuations to a fifth of the canonical size"
            }
        }
    }

    /// The ensemble the scenario simulates.
    pub fn ensemble(self) -> &'static str {
        match self {
            Scenario::Equilibration | Scenario::Stalled => "npt",
            Scenario::NveDrift => "nve",
            Scenario::Heating | Scenario::BlowUp | Scenario::ThermostatFailure => "nvt",
        }
    }
}

/// How the generated log is laid out: different layouts exercise column mapping.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum LogStyle {
    /// Whitespace table under a `#` header with units in parentheses.
    Whitespace,
    /// Comma-separated with a quoted header and units in brackets.
    Csv,
    /// Chatty text log: data rows start with the tag word `DATA`, free text between them.
    Tagged,
    /// Tab-separated, energies in kcal/mol, volume in Å³, density in g/cm³, time in fs.
    Tab,
    /// Fixed-width columns with Fortran `D` exponents and `****` for overflow.
    Fortran,
}

impl LogStyle {
    /// Every style.
    pub const ALL: [LogStyle; 5] = [
        LogStyle::Whitespace,
        LogStyle::Csv,
        LogStyle::Tagged,
        LogStyle::Tab,
        LogStyle::Fortran,
    ];

    /// The kebab-case name used on the command line.
    pub fn name(self) -> &'static str {
        match self {
            LogStyle::Whitespace => "whitespace",
            LogStyle::Csv => "csv",
            LogStyle::Tagged => "tagged",
            LogStyle::Tab => "tab",
            LogStyle::Fortran => "fixed-width",
        }
    }

    /// Looks a style up by its name.
    pub fn from_name(name: &str) -> Option<LogStyle> {
        LogStyle::ALL.into_iter().find(|s| s.name() == name)
    }

    /// The usual file extension for the style.
    pub fn extension(self) -> &'static str {
        match self {
            LogStyle::Csv => "csv",
            LogStyle::Tab => "tsv",
            _ => "log",
        }
    }
}

/// What to generate.
#[derive(Debug, Clone)]
pub struct ScenarioSpec {
    pub scenario: Scenario,
    pub style: LogStyle,
    /// Number of data rows (frames).
    pub rows: u64,
    pub seed: u64,
    /// Integration time step in fs.
    pub timestep_fs: f64,
    /// Steps between two output rows.
    pub steps_per_row: u64,
    /// Number of atoms (N_df = 3N - 3).
    pub atoms: u64,
}

impl ScenarioSpec {
    /// Defaults: 2 fs time step, a row every 500 steps (1 ps), 3000 atoms.
    pub fn new(scenario: Scenario, style: LogStyle, rows: u64) -> ScenarioSpec {
        ScenarioSpec {
            scenario,
            style,
            rows,
            seed: 20_261_201,
            timestep_fs: 2.0,
            steps_per_row: 500,
            atoms: 3000,
        }
    }

    /// Degrees of freedom with the centre-of-mass motion removed.
    pub fn degrees_of_freedom(&self) -> f64 {
        (3 * self.atoms).saturating_sub(3) as f64
    }

    /// Picoseconds between rows.
    pub fn row_interval_ps(&self) -> f64 {
        self.timestep_fs * 1e-3 * self.steps_per_row as f64
    }
}

/// One output row in canonical units (kJ/mol, K, bar, nm³, kg/m³, ps).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Frame {
    pub step: u64,
    pub time_ps: f64,
    pub temperature: f64,
    pub pressure: f64,
    pub potential: f64,
    pub kinetic: f64,
    pub total: f64,
    pub conserved: f64,
    pub volume: f64,
    pub density: f64,
}

impl Frame {
    /// The nine quantities after the step, in column order.
    pub fn quantities(&self) -> [f64; 9] {
        [
            self.time_ps,
            self.temperature,
            self.pressure,
            self.potential,
            self.kinetic,
            self.total,
            self.conserved,
            self.volume,
            self.density,
        ]
    }
}

/// SplitMix64-seeded xoshiro256** generator with Box–Muller normals.
/// (Blackman & Vigna, "Scrambled linear pseudorandom number generators", 2021.)
#[derive(Debug, Clone)]
struct Rng {
    state: [u64; 4],
    spare_normal: Option<f64>,
}

impl Rng {
    fn new(seed: u64) -> Rng {
        let mut x = seed;
        let mut next = || {
            x = x.wrapping_add(0x9E37_79B9_7F4A_7C15);
            let mut z = x;
            z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
            z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
            z ^ (z >> 31)
        };
        Rng {
            state: [next(), next(), next(), next()],
            spare_normal: None,
        }
    }

    fn next_u64(&mut self) -> u64 {
        let s = &mut self.state;
        let result = s[1].wrapping_mul(5).rotate_left(7).wrapping_mul(9);
        let t = s[1] << 17;
        s[2] ^= s[0];
        s[3] ^= s[1];
        s[1] ^= s[2];
        s[0] ^= s[3];
        s[2] ^= t;
        s[3] = s[3].rotate_left(45);
        result
    }

    /// Uniform in (0, 1).
    fn uniform(&mut self) -> f64 {
        ((self.next_u64() >> 11) as f64 + 0.5) * (1.0 / (1u64 << 53) as f64)
    }

    fn normal(&mut self) -> f64 {
        if let Some(z) = self.spare_normal.take() {
            return z;
        }
        let u1 = self.uniform();
        let u2 = self.uniform();
        let r = (-2.0 * u1.ln()).sqrt();
        let (s, c) = (2.0 * std::f64::consts::PI * u2).sin_cos();
        self.spare_normal = Some(r * s);
        r * c
    }
}

/// A stationary AR(1) process with unit-free standard deviation `sd` and lag-1 correlation `phi`.
#[derive(Debug, Clone)]
struct Ar1 {
    phi: f64,
    innovation_sd: f64,
    value: f64,
}

impl Ar1 {
    fn new(phi: f64, sd: f64, rng: &mut Rng) -> Ar1 {
        Ar1 {
            phi,
            innovation_sd: sd * (1.0 - phi * phi).max(0.0).sqrt(),
            value: sd * rng.normal(),
        }
    }

    fn step(&mut self, rng: &mut Rng) -> f64 {
        self.value = self.phi * self.value + self.innovation_sd * rng.normal();
        self.value
    }
}

/// Produces the frames of a scenario, one at a time.
#[derive(Debug, Clone)]
pub struct FrameGenerator {
    spec: ScenarioSpec,
    rng: Rng,
    row: u64,
    temperature_noise: Ar1,
    potential_noise: Ar1,
    pressure_noise: Ar1,
    volume_noise: Ar1,
    conserved_noise: Ar1,
    lagged_reference_temperature: f64,
}

/// Target temperature (K) and pressure (bar) of the invented system.
const TARGET_TEMPERATURE: f64 = 300.0;
const TARGET_PRESSURE: f64 = 1.0;
/// Potential energy per molecule-mol at 300 K, and its heat capacity (kJ/mol/K per molecule).
const POTENTIAL_PER_MOLECULE_300K: f64 = -41.5;
const HEAT_CAPACITY_PER_MOLECULE: f64 = 0.05;
/// Molar mass of one molecule, g/mol (water-sized).
const MOLAR_MASS: f64 = 18.015;

impl FrameGenerator {
    pub fn new(spec: ScenarioSpec) -> FrameGenerator {
        let mut rng = Rng::new(spec.seed ^ (spec.scenario as u64).wrapping_mul(0x1000_0001));
        let n_df = spec.degrees_of_freedom().max(1.0);
        let canonical_relative_sd = (2.0 / n_df).sqrt();
        let temperature_sd_factor = match spec.scenario {
            Scenario::ThermostatFailure => 0.2 * canonical_relative_sd,
            // NVE: smaller kinetic fluctuations (Lebowitz, Percus & Verlet 1967).
            Scenario::NveDrift => 0.7 * canonical_relative_sd,
            _ => canonical_relative_sd,
        };
        let molecules = spec.atoms as f64 / 3.0;
        let potential_sd = 0.004 * (POTENTIAL_PER_MOLECULE_300K * molecules).abs();
        let volume = Self::equilibrium_volume_for(molecules);
        let volume_sd =
            (volume * BOLTZMANN_KJ_PER_MOL_K * TARGET_TEMPERATURE * WATER_COMPRESSIBILITY_PER_BAR
                / BAR_NM3_IN_KJ_PER_MOL)
                .sqrt();
        // Correlation between rows: slower observables keep more memory.
        let temperature_noise = Ar1::new(0.3, temperature_sd_factor, &mut rng);
        let potential_noise = Ar1::new(0.8, potential_sd, &mut rng);
        let pressure_noise = Ar1::new(0.3, 180.0, &mut rng);
        let volume_noise = Ar1::new(0.9, volume_sd, &mut rng);
        let conserved_noise = Ar1::new(0.5, 0.01 * potential_sd, &mut rng);
        let start_temperature = Self::reference_temperature_at(spec.scenario, 0.0);
        FrameGenerator {
            spec,
            rng,
            row: 0,
            temperature_noise,
            potential_noise,
            pressure_noise,
            volume_noise,
            conserved_noise,
            lagged_reference_temperature: start_temperature,
        }
    }

    /// The spec this generator follows.
    pub fn spec(&self) -> &ScenarioSpec {
        &self.spec
    }

    fn equilibrium_volume_for(molecules: f64) -> f64 {
        // 1 g/cm³ = 1000 kg/m³ at the molar mass above: volume in nm³.
        molecules * MOLAR_MASS / 6.022_140_76e23 * 1e-3 / 997.0 * 1e27
    }

    /// The thermostat's reference temperature at simulated time `t` (ps).
    fn reference_temperature_at(scenario: Scenario, t: f64) -> f64 {
        match scenario {
            Scenario::Heating => {
                let ramp_end = 100.0;
                if t >= ramp_end {
                    TARGET_TEMPERATURE
                } else {
                    10.0 + (TARGET_TEMPERATURE - 10.0) * t / ramp_end
                }
            }
            _ => TARGET_TEMPERATURE,
        }
    }

    /// Row at which the blow-up starts to grow (a fraction of the run).
    fn blow_up_start(&self) -> u64 {
        self.spec.rows.saturating_mul(7) / 10
    }

    /// Next frame, or `None` after the last row.
    pub fn next_frame(&mut self) -> Option<Frame> {
        if self.row >= self.spec.rows {
            return None;
        }
        let spec = &self.spec;
        let row = self.row;
        self.row += 1;
        let dt = spec.row_interval_ps();
        let t = row as f64 * dt;
        let step = row * spec.steps_per_row;
        let n_df = spec.degrees_of_freedom().max(1.0);
        let molecules = spec.atoms as f64 / 3.0;

        // The kinetic temperature lags the thermostat's reference by about 2 ps.
        let reference = Self::reference_temperature_at(spec.scenario, t);
        let lag = (-dt / 2.0_f64).exp();
        self.lagged_reference_temperature =
            lag * self.lagged_reference_temperature + (1.0 - lag) * reference;
        let mean_temperature = match spec.scenario {
            Scenario::Heating => self.lagged_reference_temperature,
            _ => reference,
        };
        let temperature_fluctuation = self.temperature_noise.step(&mut self.rng);
        let mut temperature = mean_temperature * (1.0 + temperature_fluctuation);

        let relax = |tau: f64| (-t / tau).exp();
        let strain = match spec.scenario {
            Scenario::Equilibration | Scenario::Stalled => relax(40.0),
            Scenario::Heating => 0.3 * relax(30.0),
            _ => 0.0,
        };
        let equilibrium_potential = molecules
            * (POTENTIAL_PER_MOLECULE_300K
                + HEAT_CAPACITY_PER_MOLECULE * (mean_temperature - TARGET_TEMPERATURE));
        let mut potential = equilibrium_potential
            + 0.08 * (POTENTIAL_PER_MOLECULE_300K * molecules).abs() * strain
            + self.potential_noise.step(&mut self.rng);

        let mut kinetic = 0.5 * n_df * BOLTZMANN_KJ_PER_MOL_K * temperature;
        let conserved_base = molecules * (POTENTIAL_PER_MOLECULE_300K - 15.0);
        let mut conserved = conserved_base + self.conserved_noise.step(&mut self.rng);

        if spec.scenario == Scenario::NveDrift {
            // NVE: total energy is the conserved one; drift of 400 kJ/mol per ns.
            let drift = 0.4 * t;
            conserved += drift;
            // The kinetic part absorbs half of the drift (equipartition-like share).
            kinetic += 0.5 * drift;
            temperature = 2.0 * kinetic / (n_df * BOLTZMANN_KJ_PER_MOL_K);
            potential = conserved - kinetic;
        }

        let equilibrium_volume = Self::equilibrium_volume_for(molecules);
        let volume_strain = match spec.scenario {
            Scenario::Equilibration | Scenario::Stalled => 0.04 * relax(50.0),
            _ => 0.0,
        };
        let varies_volume = spec.scenario.ensemble() == "npt";
        let volume = if varies_volume {
            equilibrium_volume * (1.0 + volume_strain) + self.volume_noise.step(&mut self.rng)
        } else {
            equilibrium_volume
        };
        let mut pressure = TARGET_PRESSURE
            + self.pressure_noise.step(&mut self.rng)
            + 4000.0 * volume_strain * if varies_volume { -1.0 } else { 0.0 };

        if spec.scenario == Scenario::BlowUp {
            let start = self.blow_up_start();
            if row >= start {
                // Exponential growth with an e-folding time of 3 rows.
                let growth = ((row - start) as f64 / 3.0).exp();
                potential += 50.0 * growth;
                kinetic += 40.0 * growth;
                temperature = 2.0 * kinetic / (n_df * BOLTZMANN_KJ_PER_MOL_K);
                pressure += 30.0 * growth;
            }
        }

        let total = potential + kinetic;
        if spec.scenario == Scenario::BlowUp && row >= self.blow_up_start() {
            // Thermostatted runs keep the conserved quantity flat (the bath term absorbs
            // heat); a blow-up breaks that, and the excess shows in it.
            conserved +=
                total - (equilibrium_potential + 0.5 * n_df * BOLTZMANN_KJ_PER_MOL_K * reference);
        }
        let density = molecules * MOLAR_MASS / 6.022_140_76e23 * 1e-3 / (volume * 1e-27);

        Some(Frame {
            step,
            time_ps: t,
            temperature,
            pressure,
            potential,
            kinetic,
            total,
            conserved,
            volume,
            density,
        })
    }
}

impl Iterator for FrameGenerator {
    type Item = Frame;
    fn next(&mut self) -> Option<Frame> {
        self.next_frame()
    }
}

/// Column names of the generated logs, per style (headers with their units).
fn header_fields(style: LogStyle) -> [&'static str; 10] {
    match style {
        LogStyle::Whitespace | LogStyle::Tagged => [
            "step",
            "time(ps)",
            "temperature(K)",
            "pressure(bar)",
            "potential(kJ/mol)",
            "kinetic(kJ/mol)",
            "total(kJ/mol)",
            "conserved(kJ/mol)",
            "volume(nm^3)",
            "density(kg/m^3)",
        ],
        LogStyle::Csv => [
            "\"Step\"",
            "\"Time [ps]\"",
            "\"Temperature [K]\"",
            "\"Pressure [bar]\"",
            "\"Potential Energy [kJ/mol]\"",
            "\"Kinetic Energy [kJ/mol]\"",
            "\"Total Energy [kJ/mol]\"",
            "\"Conserved Energy [kJ/mol]\"",
            "\"Box Volume [nm^3]\"",
            "\"Density [kg/m^3]\"",
        ],
        LogStyle::Tab => [
            "step",
            "time[fs]",
            "temp[K]",
            "press[atm]",
            "epot[kcal/mol]",
            "ekin[kcal/mol]",
            "etot[kcal/mol]",
            "econs[kcal/mol]",
            "vol[A^3]",
            "rho[g/cm^3]",
        ],
        LogStyle::Fortran => [
            "STEP",
            "TIME_PS",
            "TEMP_K",
            "PRESS_BAR",
            "EPOT",
            "EKIN",
            "ETOT",
            "ECONS",
            "VOLUME",
            "DENSITY",
        ],
    }
}

/// Writes generated logs in one of the styles. Keeps the row count for the chatty style's
/// interleaved text.
#[derive(Debug)]
pub struct LogWriter {
    style: LogStyle,
    rows_written: u64,
    line_buffer: String,
}

const KCAL_IN_KJ: f64 = 4.184;
const ATM_IN_BAR: f64 = 1.01325;

impl LogWriter {
    pub fn new(style: LogStyle) -> LogWriter {
        LogWriter {
            style,
            rows_written: 0,
            line_buffer: String::with_capacity(256),
        }
    }

    /// Writes the preamble and the header line.
    pub fn write_header(&mut self, spec: &ScenarioSpec, out: &mut impl Write) -> io::Result<()> {
        let fields = header_fields(self.style);
        match self.style {
            LogStyle::Whitespace => {
                writeln!(
                    out,
                    "# invented example log: {}",
                    spec.scenario.description()
                )?;
                writeln!(
                    out,
                    "# {} atoms, time step {} fs, a row every {} steps",
                    spec.atoms, spec.timestep_fs, spec.steps_per_row
                )?;
                writeln!(out, "# {}", fields.join("  "))?;
            }
            LogStyle::Csv => writeln!(out, "{}", fields.join(","))?,
            LogStyle::Tab => writeln!(out, "{}", fields.join("\t"))?,
            LogStyle::Tagged => {
                writeln!(out, "run started: {}", spec.scenario.description())?;
                writeln!(
                    out,
                    "setting up {} atoms, time step {} fs",
                    spec.atoms, spec.timestep_fs
                )?;
                writeln!(out, "columns: {}", fields.join(" "))?;
                writeln!(out, "DATA {}", fields.join(" "))?;
            }
            LogStyle::Fortran => {
                let mut line = String::new();
                for name in fields {
                    line.push_str(&format!("{name:>16}"));
                }
                writeln!(out, "{line}")?;
            }
        }
        Ok(())
    }

    /// Writes one data row (and, for the chatty style, an occasional line of free text).
    pub fn write_frame(&mut self, frame: &Frame, out: &mut impl Write) -> io::Result<()> {
        use std::fmt::Write as _;
        let line = &mut self.line_buffer;
        line.clear();
        // Formatting into a String cannot fail.
        let _ = match self.style {
            LogStyle::Whitespace | LogStyle::Tagged | LogStyle::Csv => {
                let separator = if self.style == LogStyle::Csv {
                    ","
                } else {
                    " "
                };
                if self.style == LogStyle::Tagged {
                    line.push_str("DATA ");
                }
                write_fields(line, frame, separator)
            }
            LogStyle::Tab => write!(
                line,
                "{}\t{:.1}\t{:.3}\t{:.4}\t{:.4}\t{:.4}\t{:.4}\t{:.4}\t{:.2}\t{:.6}",
                frame.step,
                frame.time_ps * 1000.0,
                frame.temperature,
                frame.pressure / ATM_IN_BAR,
                frame.potential / KCAL_IN_KJ,
                frame.kinetic / KCAL_IN_KJ,
                frame.total / KCAL_IN_KJ,
                frame.conserved / KCAL_IN_KJ,
                frame.volume * 1000.0,
                frame.density / 1000.0
            ),
            LogStyle::Fortran => {
                let _ = write!(line, "{:>16}", frame.step);
                for value in frame.quantities() {
                    push_fortran_field(line, value);
                }
                Ok(())
            }
        };
        line.push('\n');
        self.rows_written += 1;
        if self.style == LogStyle::Tagged && self.rows_written.is_multiple_of(50) {
            let _ = writeln!(
                line,
                "note: wrote checkpoint after step {} (informational)",
                frame.step
            );
        }
        out.write_all(line.as_bytes())
    }
}

/// Writes the ten fields of a row in canonical units, joined by `separator`.
fn write_fields(line: &mut String, frame: &Frame, separator: &str) -> std::fmt::Result {
    use std::fmt::Write as _;
    let s = separator;
    write!(
        line,
        "{}{s}{:.3}{s}{:.3}{s}{:.2}{s}{:.4}{s}{:.4}{s}{:.4}{s}{:.4}{s}{:.5}{s}{:.3}",
        frame.step,
        frame.time_ps,
        frame.temperature,
        frame.pressure,
        frame.potential,
        frame.kinetic,
        frame.total,
        frame.conserved,
        frame.volume,
        frame.density
    )
}

/// Appends `value` as a 16-character field in `D` exponent notation, or `****` filling the
/// field when it does not fit (as fixed-width printers do on overflow).
fn push_fortran_field(line: &mut String, value: f64) {
    use std::fmt::Write as _;
    if !value.is_finite() || value.abs() >= 1e99 {
        line.push_str("        ********");
        return;
    }
    let formatted = format!("{value:.7E}");
    let (mantissa, exponent) = formatted.split_once('E').unwrap_or((&formatted, "0"));
    let exponent: i32 = exponent.parse().unwrap_or(0);
    let sign = if exponent < 0 { '-' } else { '+' };
    let _ = write!(
        line,
        "{:>16}",
        format!("{mantissa}D{sign}{:02}", exponent.abs())
    );
}

/// Writes a whole scenario log (header and every row) to `out`; the stalled scenario ends
/// with half a row and no newline, as a writer killed mid-line leaves it.
pub fn write_log(spec: &ScenarioSpec, out: &mut impl Write) -> io::Result<()> {
    let mut writer = LogWriter::new(spec.style);
    writer.write_header(spec, out)?;
    let mut generator = FrameGenerator::new(spec.clone());
    let mut last = None;
    while let Some(frame) = generator.next_frame() {
        if frame.potential.abs() > 1e12 && spec.scenario == Scenario::BlowUp {
            // The engine stops after printing overflowed values twice.
            let broken = Frame {
                potential: f64::NAN,
                kinetic: f64::INFINITY,
                total: f64::NAN,
                temperature: f64::INFINITY,
                ..frame
            };
            writer.write_frame(&broken, out)?;
            writer.write_frame(
                &Frame {
                    step: frame.step + spec.steps_per_row,
                    time_ps: frame.time_ps + spec.row_interval_ps(),
                    ..broken
                },
                out,
            )?;
            return Ok(());
        }
        writer.write_frame(&frame, out)?;
        last = Some(frame);
    }
    if spec.scenario == Scenario::Stalled {
        if let Some(frame) = last {
            // The writer was stopped halfway through the next row.
            let next = Frame {
                step: frame.step + spec.steps_per_row,
                time_ps: frame.time_ps + spec.row_interval_ps(),
                ..frame
            };
            let mut row = Vec::new();
            LogWriter::new(spec.style).write_frame(&next, &mut row)?;
            out.write_all(row.get(..row.len() / 2).unwrap_or_default())?;
        }
    }
    Ok(())
}

#[cfg(test)]
mod tests {
    use super::*;

    fn frames(scenario: Scenario, rows: u64) -> Vec<Frame> {
        FrameGenerator::new(ScenarioSpec::new(scenario, LogStyle::Whitespace, rows)).collect()
    }

    fn mean(xs: &[f64]) -> f64 {
        xs.iter().sum::<f64>() / xs.len() as f64
    }

    fn sd(xs: &[f64]) -> f64 {
        let m = mean(xs);
        (xs.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (xs.len() as f64 - 1.0)).sqrt()
    }

    #[test]
    fn same_seed_gives_same_log() {
        let a = frames(Scenario::Equilibration, 200);
        let b = frames(Scenario::Equilibration, 200);
        assert_eq!(a, b);
    }

    #[test]
    fn canonical_temperature_fluctuation_has_expected_size() {
        // Canonical relative width sqrt(2/N_df) (Frenkel & Smit 2002, via METHODS §6).
        let frames = frames(Scenario::Equilibration, 20_000);
        let temps: Vec<f64> = frames.iter().map(|f| f.temperature).collect();
        let relative = sd(&temps) / mean(&temps);
        let expected = (2.0 / 8997.0_f64).sqrt();
        assert!(
            (relative / expected - 1.0).abs() < 0.05,
            "{relative} vs {expected}"
        );
    }

    #[test]
    fn thermostat_failure_suppresses_fluctuations() {
        let frames = frames(Scenario::ThermostatFailure, 5000);
        let temps: Vec<f64> = frames.iter().map(|f| f.temperature).collect();
        let relative = sd(&temps) / mean(&temps);
        let expected = (2.0 / 8997.0_f64).sqrt();
        assert!(relative < 0.4 * expected);
    }

    #[test]
    fn kinetic_energy_matches_equipartition() {
        // K = N_df k_B T / 2 (equipartition, textbook).
        for f in frames(Scenario::Heating, 300) {
            let expected = 0.5 * 8997.0 * BOLTZMANN_KJ_PER_MOL_K * f.temperature;
            assert!((f.kinetic - expected).abs() < 1e-6 * expected.abs());
        }
    }

    #[test]
    fn density_of_water_sized_box_near_997() {
        let frames = frames(Scenario::Equilibration, 2000);
        let late: Vec<f64> = frames[1000..].iter().map(|f| f.density).collect();
        assert!((mean(&late) - 997.0).abs() < 2.0, "{}", mean(&late));
    }

    #[test]
    fn nve_conserved_energy_drifts_by_the_set_rate() {
        let frames = frames(Scenario::NveDrift, 2000);
        let first = &frames[..100];
        let last = &frames[1900..];
        let rate = (mean(&last.iter().map(|f| f.conserved).collect::<Vec<_>>())
            - mean(&first.iter().map(|f| f.conserved).collect::<Vec<_>>()))
            / (1900.0 * 1.0);
        assert!((rate - 0.4).abs() < 0.02, "{rate}");
    }

    #[test]
    fn blow_up_log_ends_with_non_finite_values() {
        let spec = ScenarioSpec::new(Scenario::BlowUp, LogStyle::Whitespace, 2000);
        let mut out = Vec::new();
        write_log(&spec, &mut out).unwrap();
        let text = String::from_utf8(out).unwrap();
        let last = text.lines().last().unwrap();
        assert!(last.contains("NaN") || last.contains("inf"), "{last}");
    }

    #[test]
    fn stalled_log_ends_mid_line() {
        let spec = ScenarioSpec::new(Scenario::Stalled, LogStyle::Whitespace, 50);
        let mut out = Vec::new();
        write_log(&spec, &mut out).unwrap();
        assert_ne!(out.last(), Some(&b'\n'));
    }

    #[test]
    fn fortran_fields_use_d_exponents_and_stars() {
        let mut line = String::new();
        push_fortran_field(&mut line, -12345.678);
        assert_eq!(line.trim(), "-1.2345678D+04");
        line.clear();
        push_fortran_field(&mut line, f64::NAN);
        assert_eq!(line.trim(), "********");
    }

    #[test]
    fn every_style_writes_ten_fields_per_row() {
        for style in LogStyle::ALL {
            let spec = ScenarioSpec::new(Scenario::Equilibration, style, 3);
            let mut out = Vec::new();
            write_log(&spec, &mut out).unwrap();
            let text = String::from_utf8(out).unwrap();
            let last = text.lines().last().unwrap();
            let n = match style {
                LogStyle::Csv => last.split(',').count(),
                LogStyle::Tab => last.split('\t').count(),
                LogStyle::Tagged => last.split_whitespace().count() - 1,
                _ => last.split_whitespace().count(),
            };
            assert_eq!(n, 10, "{style:?}: {last}");
        }
    }
}
