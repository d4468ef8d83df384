//! Invented MD scenarios: synthetic energy logs for the demo, the example logs, the tests
//! and the benchmarks.
//!
//! Nothing here imitates a real engine's output. Each scenario is a *story* (ensemble,
//! temperature schedule, strained start, drift, fault) told on an invented *system*
//! ([`system`]: per-atom properties of a molecular liquid near 300 K). The generator
//! ([`generator`]) turns them into rows whose fluctuations have the sizes and correlation
//! times statistical mechanics gives (canonical kinetic temperature `sqrt(2/N_df)`,
//! potential energy `sqrt(k_B T² C_U)`, volume `sqrt(k_B T V κ_T)`, ...), and the writer
//! ([`writer`]) prints them in one of several layouts.
//!
//! The generator is deterministic for a given seed (own small PRNG, no external crate) and
//! writes to any `io::Write`, so the same code makes `demo-logs/`, the live demo
//! ([`crate::demo`]) and the 1 GB benchmark log.

pub mod generator;
pub mod stages;
pub mod system;
pub mod writer;

use std::io::{self, Write};

pub use generator::{settled_after_ps, FluctuationSizes, Frame, FrameGenerator};
pub use system::System;
pub use writer::{LogStyle, LogWriter};

/// The invented situations a generated log shows.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Scenario {
    /// NPT run that relaxes from a strained start, then stays steady.
    Equilibration,
    /// NPT run of a viscous liquid packed too loosely: the density settles over hundreds of ps.
    DensitySettling,
    /// NVT heating ramp from 10 K to 300 K, then a hold.
    Heating,
    /// NVT heating along a schedule with a hold at an intermediate temperature.
    StagedHeating,
    /// A long healthy NPT production run continued from a checkpoint.
    Production,
    /// NVE run whose conserved energy drifts upwards (time step too long).
    NveDrift,
    /// A run that is steady, then grows exponentially until values overflow.
    BlowUp,
    /// A steady run whose output stops (the live writer stalls; the file ends mid-line).
    Stalled,
    /// NVT run whose thermostat suppresses the kinetic-temperature fluctuations.
    ThermostatFailure,
}

/// The ensemble a scenario simulates.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Ensemble {
    Nve,
    Nvt,
    Npt,
}

impl Ensemble {
    /// The lower-case name (`nve`, `nvt`, `npt`), as `--ensemble` takes it.
    pub fn name(self) -> &'static str {
        match self {
            Ensemble::Nve => "nve",
            Ensemble::Nvt => "nvt",
            Ensemble::Npt => "npt",
        }
    }
}

/// A deterministic relaxation `amplitude · exp(−t/τ)`.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Relaxation {
    /// Relative size at t = 0 (fraction of the quantity's magnitude).
    pub amplitude: f64,
    /// Time constant, ps.
    pub tau_ps: f64,
}

impl Relaxation {
    /// The relative offset at `t` ps.
    pub fn at(self, t: f64) -> f64 {
        self.amplitude * (-t / self.tau_ps).exp()
    }
}

/// Exponential growth of a blow-up: `seed · (exp(rows/e) − 1)` kJ/mol from its start row.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct BlowUp {
    pub seed_kj_per_mol: f64,
    pub e_folding_rows: f64,
}

/// What happens in a scenario, independent of the layout and the row count.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Story {
    /// The invented system.
    pub system: System,
    pub ensemble: Ensemble,
    /// Thermostat reference: `(time ps, K)` points, linear between them, held after the last.
    pub temperature_schedule: &'static [(f64, f64)],
    /// Barostat reference (NPT) or mean pressure, bar.
    pub pressure: f64,
    /// The kinetic temperature follows the reference with this lag (ps), when it changes.
    pub thermostat_lag_ps: Option<f64>,
    /// Strained start of the potential energy (fraction of |U|).
    pub potential_strain: Option<Relaxation>,
    /// Box built too large (fraction of the equilibrium volume), relaxed by the barostat.
    pub volume_strain: Option<Relaxation>,
    /// Drift of the conserved energy, kJ/mol per ns.
    pub conserved_drift_per_ns: f64,
    /// Kinetic-temperature fluctuation as a multiple of the canonical size (NVT, NPT).
    pub temperature_fluctuation: f64,
    pub blow_up: Option<BlowUp>,
    /// The log ends in the middle of a row: the writer stopped.
    pub ends_mid_line: bool,
    /// Integration time step, fs.
    pub timestep_fs: f64,
    /// Steps between output rows.
    pub steps_per_row: u64,
    /// Step of the first row (a run continued from a checkpoint starts later).
    pub first_step: u64,
}

const CONSTANT_300K: &[(f64, f64)] = &[(0.0, 300.0)];

const QUIET: Story = Story {
    system: system::SOLVENT_BOX,
    ensemble: Ensemble::Nvt,
    temperature_schedule: CONSTANT_300K,
    pressure: 1.0,
    thermostat_lag_ps: None,
    potential_strain: None,
    volume_strain: None,
    conserved_drift_per_ns: 0.0,
    temperature_fluctuation: 1.0,
    blow_up: None,
    ends_mid_line: false,
    timestep_fs: 2.0,
    steps_per_row: 500,
    first_step: 0,
};

impl Story {
    /// The thermostat's reference temperature `t` ps after the start of the run.
    pub fn reference_temperature_at(&self, t: f64) -> f64 {
        schedule_value(self.temperature_schedule, t)
    }
}

/// A piecewise-linear schedule's value at `t`, held before the first and after the last point.
fn schedule_value(points: &[(f64, f64)], t: f64) -> f64 {
    let mut previous: Option<(f64, f64)> = None;
    for &(time, value) in points {
        if t <= time {
            return match previous {
                Some((t0, v0)) if time > t0 => v0 + (value - v0) * (t - t0) / (time - t0),
                _ => value,
            };
        }
        previous = Some((time, value));
    }
    previous.map_or(system::REFERENCE_TEMPERATURE, |(_, v)| v)
}

impl Scenario {
    /// Every scenario, in the order the example logs are listed.
    pub const ALL: [Scenario; 9] = [
        Scenario::Equilibration,
        Scenario::DensitySettling,
        Scenario::Heating,
        Scenario::StagedHeating,
        Scenario::Production,
        Scenario::NveDrift,
        Scenario::BlowUp,
        Scenario::Stalled,
        Scenario::ThermostatFailure,
    ];

    /// The kebab-case name used on the command line and in file names.
    pub fn name(self) -> &'static str {
        match self {
            Scenario::Equilibration => "equilibration",
            Scenario::DensitySettling => "density-settling",
            Scenario::Heating => "heating",
            Scenario::StagedHeating => "staged-heating",
            Scenario::Production => "production",
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

    /// The names of every scenario, joined by ", " (for help and error messages).
    pub fn names() -> String {
        let names: Vec<&str> = Scenario::ALL.iter().map(|s| s.name()).collect();
        names.join(", ")
    }

    /// One line saying what the scenario shows.
    pub fn description(self) -> &'static str {
        match self {
            Scenario::Equilibration => {
                "NPT at 300 K and 1 bar: potential energy and volume relax for about 150 ps, then stay steady"
            }
            Scenario::DensitySettling => {
                "NPT at 300 K and 1 bar of a viscous liquid packed 9 % too loosely: the density rises for about 300 ps, then stays steady"
            }
            Scenario::Heating => {
                "NVT heating from 10 K to 300 K over 100 ps, then held at 300 K"
            }
            Scenario::StagedHeating => {
                "NVT heating along a schedule: 50 K to 150 K over 50 ps, held for 50 ps, then to 300 K at 150 ps and held"
            }
            Scenario::Production => {
                "NPT production at 300 K and 1 bar continued from a checkpoint: steady from the first row, a row every 10 ps"
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

    /// The story the scenario tells.
    pub fn story(self) -> Story {
        match self {
            Scenario::Equilibration | Scenario::Stalled => Story {
                ensemble: Ensemble::Npt,
                potential_strain: Some(Relaxation {
                    amplitude: 0.08,
                    tau_ps: 40.0,
                }),
                volume_strain: Some(Relaxation {
                    amplitude: 0.04,
                    tau_ps: 50.0,
                }),
                ends_mid_line: self == Scenario::Stalled,
                ..QUIET
            },
            Scenario::DensitySettling => Story {
                system: system::IONIC_LIQUID,
                ensemble: Ensemble::Npt,
                potential_strain: Some(Relaxation {
                    amplitude: 0.03,
                    tau_ps: 60.0,
                }),
                volume_strain: Some(Relaxation {
                    amplitude: 0.09,
                    tau_ps: 80.0,
                }),
                ..QUIET
            },
            Scenario::Heating => Story {
                temperature_schedule: &[(0.0, 10.0), (100.0, 300.0)],
                thermostat_lag_ps: Some(2.0),
                potential_strain: Some(Relaxation {
                    amplitude: 0.024,
                    tau_ps: 30.0,
                }),
                ..QUIET
            },
            Scenario::StagedHeating => Story {
                system: system::PEPTIDE_IN_WATER,
                temperature_schedule: &[(0.0, 50.0), (50.0, 150.0), (100.0, 150.0), (150.0, 300.0)],
                thermostat_lag_ps: Some(2.0),
                potential_strain: Some(Relaxation {
                    amplitude: 0.01,
                    tau_ps: 20.0,
                }),
                ..QUIET
            },
            Scenario::Production => Story {
                system: system::PEPTIDE_IN_WATER,
                ensemble: Ensemble::Npt,
                conserved_drift_per_ns: 0.5,
                steps_per_row: 5000,
                first_step: 2_500_000,
                ..QUIET
            },
            Scenario::NveDrift => Story {
                ensemble: Ensemble::Nve,
                conserved_drift_per_ns: 400.0,
                ..QUIET
            },
            Scenario::BlowUp => Story {
                blow_up: Some(BlowUp {
                    seed_kj_per_mol: 2.0,
                    e_folding_rows: 3.0,
                }),
                ..QUIET
            },
            Scenario::ThermostatFailure => Story {
                temperature_fluctuation: 0.2,
                ..QUIET
            },
        }
    }

    /// The ensemble the scenario simulates (`nve`, `nvt` or `npt`).
    pub fn ensemble(self) -> &'static str {
        self.story().ensemble.name()
    }

    /// The thermostat's schedule as plateau's `--target-temperature` takes it
    /// (`0ps=10K,100ps=300K`), or the constant target (`300K`).
    pub fn target_temperature(self) -> String {
        let points = self.story().temperature_schedule;
        match points {
            [(_, value)] => format!("{}K", trim_number(*value)),
            _ => points
                .iter()
                .map(|(t, v)| format!("{}ps={}K", trim_number(*t), trim_number(*v)))
                .collect::<Vec<_>>()
                .join(","),
        }
    }
}

/// A number without a trailing `.0`.
fn trim_number(x: f64) -> String {
    let s = format!("{x}");
    s.strip_suffix(".0").map(str::to_string).unwrap_or(s)
}

/// What to generate.
#[derive(Debug, Clone, PartialEq)]
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
    /// Number of atoms (the system's properties scale with it).
    pub atoms: u64,
    /// Row at which the blow-up starts to grow (default: 70 % of the rows).
    pub fault_row: Option<u64>,
}

impl ScenarioSpec {
    /// The scenario's defaults: its system's size, time step and output interval.
    pub fn new(scenario: Scenario, style: LogStyle, rows: u64) -> ScenarioSpec {
        let story = scenario.story();
        ScenarioSpec {
            scenario,
            style,
            rows,
            seed: 20_261_201,
            timestep_fs: story.timestep_fs,
            steps_per_row: story.steps_per_row,
            atoms: story.system.atoms,
            fault_row: None,
        }
    }

    /// The invented system.
    pub fn system(&self) -> System {
        self.scenario.story().system
    }

    /// Degrees of freedom: 3N − constraints − 3.
    pub fn degrees_of_freedom(&self) -> f64 {
        self.system().degrees_of_freedom(self.atoms)
    }

    /// Constraints of the box.
    pub fn constraints(&self) -> u64 {
        self.system().constraints(self.atoms)
    }

    /// Picoseconds between rows.
    pub fn row_interval_ps(&self) -> f64 {
        self.timestep_fs * 1e-3 * self.steps_per_row as f64
    }

    /// Step of the first row.
    pub fn first_step(&self) -> u64 {
        self.scenario.story().first_step
    }

    /// Row at which the blow-up's growth starts.
    pub fn fault_row(&self) -> u64 {
        self.fault_row
            .unwrap_or_else(|| self.rows.saturating_mul(7) / 10)
    }
}

/// Writes a scenario's rows one at a time after its header, with the scenario's ending: the
/// blow-up prints its overflowed values twice and stops; the stalled run stops in the
/// middle of a row. Used whole by [`write_log`] and row by row by the live demo.
#[derive(Debug)]
pub struct LogEmitter {
    spec: ScenarioSpec,
    generator: FrameGenerator,
    writer: LogWriter,
    last: Option<Frame>,
    ended: bool,
}

/// What [`LogEmitter::write_next`] wrote.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Emitted {
    /// One data row (and maybe a line of free text).
    Row,
    /// The log's ending (non-finite rows, half a row, or nothing): nothing follows.
    End,
}

/// The blow-up's values overflow past this magnitude (kJ/mol).
const OVERFLOW: f64 = 1e12;

impl LogEmitter {
    /// An emitter for the spec.
    pub fn new(spec: ScenarioSpec) -> LogEmitter {
        LogEmitter {
            generator: FrameGenerator::new(spec.clone()),
            writer: LogWriter::new(spec.style),
            spec,
            last: None,
            ended: false,
        }
    }

    /// The spec.
    pub fn spec(&self) -> &ScenarioSpec {
        &self.spec
    }

    /// True once the ending was written.
    pub fn ended(&self) -> bool {
        self.ended
    }

    /// Writes the preamble and the header line.
    pub fn write_header(&mut self, out: &mut impl Write) -> io::Result<()> {
        self.writer.write_header(&self.spec, out)
    }

    /// Writes the next row, or the ending after the last one.
    pub fn write_next(&mut self, out: &mut impl Write) -> io::Result<Emitted> {
        if self.ended {
            return Ok(Emitted::End);
        }
        let Some(frame) = self.generator.next_frame() else {
            self.ended = true;
            if self.spec.scenario.story().ends_mid_line {
                self.write_half_row(out)?;
            }
            return Ok(Emitted::End);
        };
        if frame.potential.abs() > OVERFLOW {
            // The run prints overflowed values twice, then dies.
            self.ended = true;
            let broken = Frame {
                potential: f64::NAN,
                kinetic: f64::INFINITY,
                total: f64::NAN,
                temperature: f64::INFINITY,
                ..frame
            };
            self.writer.write_frame(&broken, out)?;
            self.writer.write_frame(&self.following(&broken), out)?;
            return Ok(Emitted::End);
        }
        self.writer.write_frame(&frame, out)?;
        self.last = Some(frame);
        Ok(Emitted::Row)
    }

    /// The same values one output interval later.
    fn following(&self, frame: &Frame) -> Frame {
        Frame {
            step: frame.step + self.spec.steps_per_row,
            time_ps: frame.time_ps + self.spec.row_interval_ps(),
            ..*frame
        }
    }

    /// The writer was stopped halfway through the row after the last one.
    fn write_half_row(&mut self, out: &mut impl Write) -> io::Result<()> {
        let Some(last) = self.last else {
            return Ok(());
        };
        let mut row = Vec::new();
        LogWriter::new(self.spec.style).write_frame(&self.following(&last), &mut row)?;
        out.write_all(row.get(..row.len() / 2).unwrap_or_default())
    }
}

/// Writes a whole scenario log (header and every row) to `out`.
pub fn write_log(spec: &ScenarioSpec, out: &mut impl Write) -> io::Result<()> {
    let mut emitter = LogEmitter::new(spec.clone());
    emitter.write_header(out)?;
    while emitter.write_next(out)? == Emitted::Row {}
    Ok(())
}

#[cfg(test)]
mod tests;
