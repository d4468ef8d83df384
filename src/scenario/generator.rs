//! The frame generator: one row of canonical quantities at a time, from a scenario's story
//! and its system's properties.
//!
//! Each fluctuating quantity is a stationary AR(1) process sampled once per row, with the
//! correlation `exp(-dt/τ)` of its correlation time τ and the standard deviation that
//! statistical mechanics gives for the system:
//! - kinetic temperature: `⟨T⟩ sqrt(2/N_df)` in NVT and NPT (canonical kinetic energy,
//!   a χ² variable with N_df degrees of freedom); in NVE the smaller
//!   `⟨T⟩ sqrt(2/N_df) sqrt(C_U/C_V)` (Lebowitz, Percus & Verlet 1967), with the potential
//!   energy mirroring the kinetic energy so that the total stays fixed;
//! - potential energy: `sqrt(k_B T² C_U)`, C_U = d⟨U⟩/dT its heat capacity (canonical
//!   fluctuation formula); its mean follows the temperature through the same C_U;
//! - volume (NPT): `sqrt(k_B T V κ_T)`; the pressure of a strained box is offset by
//!   `−ΔV/(V κ_T)` while the barostat relaxes it;
//! - pressure: the system's size, scaled as `1/sqrt(N)`.
//!
//! Transients (a strained start, a heating schedule followed with a lag, a blow-up) are
//! deterministic curves added to the fluctuations, so [`settled_after_ps`] can say where the
//! generator put the end of equilibration.

use super::system::{System, BAR_NM3_IN_KJ_PER_MOL, BOLTZMANN_KJ_PER_MOL_K, REFERENCE_TEMPERATURE};
use super::{Ensemble, ScenarioSpec};

/// SplitMix64-seeded xoshiro256** generator with Box–Muller normals.
/// (Blackman & Vigna, "Scrambled linear pseudorandom number generators", 2021.)
#[derive(Debug, Clone)]
pub(crate) struct Rng {
    state: [u64; 4],
    spare_normal: Option<f64>,
}

impl Rng {
    pub(crate) fn new(seed: u64) -> Rng {
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

    pub(crate) fn normal(&mut self) -> f64 {
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

/// A stationary AR(1) process with standard deviation `sd` and lag-1 correlation `phi`,
/// started from its stationary distribution.
#[derive(Debug, Clone)]
struct Ar1 {
    phi: f64,
    innovation_sd: f64,
    value: f64,
}

impl Ar1 {
    /// The process of correlation time `tau` sampled every `dt` (both in ps).
    fn sampled(tau: f64, dt: f64, sd: f64, rng: &mut Rng) -> Ar1 {
        let phi = if tau > 0.0 { (-dt / tau).exp() } else { 0.0 };
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

/// The sizes the statistical mechanics of the system gives (see the module documentation).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct FluctuationSizes {
    /// Relative standard deviation of the kinetic temperature.
    pub temperature_relative: f64,
    /// Potential energy, kJ/mol (at the reference temperature).
    pub potential: f64,
    /// Pressure, bar.
    pub pressure: f64,
    /// Volume, nm³ (zero when the volume is fixed).
    pub volume: f64,
    /// The conserved energy's integration noise, kJ/mol.
    pub conserved: f64,
}

impl FluctuationSizes {
    /// The sizes for a spec.
    pub fn of(spec: &ScenarioSpec) -> FluctuationSizes {
        let system = spec.system();
        let story = spec.scenario.story();
        let atoms = spec.atoms;
        let t = REFERENCE_TEMPERATURE;
        let c_u = system.potential_heat_capacity(atoms);
        let c_k = system.kinetic_heat_capacity(atoms);
        let canonical = (2.0 / system.degrees_of_freedom(atoms)).sqrt();
        let temperature_relative = match story.ensemble {
            // Lebowitz, Percus & Verlet (1967): ⟨δK²⟩_NVE = ⟨δK²⟩_NVT (1 − C_K/C_V).
            Ensemble::Nve => canonical * (c_u / (c_u + c_k)).sqrt(),
            _ => canonical * story.temperature_fluctuation,
        };
        let potential = t * (BOLTZMANN_KJ_PER_MOL_K * c_u).sqrt();
        let volume = match story.ensemble {
            Ensemble::Npt => volume_sd(&system, atoms, t),
            _ => 0.0,
        };
        FluctuationSizes {
            temperature_relative,
            potential,
            pressure: system.pressure_sd_for(atoms),
            volume,
            conserved: 0.01 * potential,
        }
    }
}

/// `sqrt(k_B T V κ_T)` in nm³: k_B T in kJ/mol over bar·nm³ in kJ/mol gives bar·nm³.
fn volume_sd(system: &System, atoms: u64, temperature: f64) -> f64 {
    let volume = system.volume(atoms);
    (volume * BOLTZMANN_KJ_PER_MOL_K * temperature * system.compressibility / BAR_NM3_IN_KJ_PER_MOL)
        .sqrt()
}

/// Produces the frames of a scenario, one at a time.
#[derive(Debug, Clone)]
pub struct FrameGenerator {
    spec: ScenarioSpec,
    system: System,
    sizes: FluctuationSizes,
    rng: Rng,
    row: u64,
    temperature_noise: Ar1,
    potential_noise: Ar1,
    pressure_noise: Ar1,
    volume_noise: Ar1,
    conserved_noise: Ar1,
    lagged_reference_temperature: f64,
    /// The conserved energy's value at the first row.
    conserved_start: Option<f64>,
}

impl FrameGenerator {
    /// A generator of the spec's frames.
    pub fn new(spec: ScenarioSpec) -> FrameGenerator {
        FrameGenerator::with_noise(spec, 1.0)
    }

    /// The same frames without fluctuations: the deterministic curves only.
    pub fn noise_free(spec: ScenarioSpec) -> FrameGenerator {
        FrameGenerator::with_noise(spec, 0.0)
    }

    fn with_noise(spec: ScenarioSpec, noise: f64) -> FrameGenerator {
        let mut rng = Rng::new(spec.seed ^ (spec.scenario as u64).wrapping_mul(0x1000_0001));
        let system = spec.system();
        let sizes = FluctuationSizes::of(&spec);
        let dt = spec.row_interval_ps();
        let tau = system.correlation_ps;
        let mut ar = |tau: f64, sd: f64| Ar1::sampled(tau, dt, noise * sd, &mut rng);
        let temperature_noise = ar(tau.temperature, sizes.temperature_relative);
        let potential_noise = ar(tau.potential, sizes.potential);
        let pressure_noise = ar(tau.pressure, sizes.pressure);
        let volume_noise = ar(tau.volume, sizes.volume);
        let conserved_noise = ar(tau.conserved, sizes.conserved);
        let start_temperature = spec.scenario.story().reference_temperature_at(0.0);
        FrameGenerator {
            spec,
            system,
            sizes,
            rng,
            row: 0,
            temperature_noise,
            potential_noise,
            pressure_noise,
            volume_noise,
            conserved_noise,
            lagged_reference_temperature: start_temperature,
            conserved_start: None,
        }
    }

    /// The spec this generator follows.
    pub fn spec(&self) -> &ScenarioSpec {
        &self.spec
    }

    /// The fluctuation sizes it uses.
    pub fn sizes(&self) -> FluctuationSizes {
        self.sizes
    }

    /// Next frame, or `None` after the last row.
    pub fn next_frame(&mut self) -> Option<Frame> {
        if self.row >= self.spec.rows {
            return None;
        }
        let spec = &self.spec;
        let story = spec.scenario.story();
        let system = &self.system;
        let atoms = spec.atoms;
        let row = self.row;
        self.row += 1;
        let dt = spec.row_interval_ps();
        // Transients run from the start of this run; the logged time may not start at zero.
        let t = row as f64 * dt;
        let step = spec.first_step() + row * spec.steps_per_row;
        let time_ps = step as f64 * spec.timestep_fs * 1e-3;

        let c_u = system.potential_heat_capacity(atoms);
        let c_k = system.kinetic_heat_capacity(atoms);

        // The kinetic temperature follows the thermostat's reference with a lag.
        let reference = story.reference_temperature_at(t);
        let mean_temperature = match story.thermostat_lag_ps {
            Some(lag_ps) => {
                let keep = (-dt / lag_ps).exp();
                self.lagged_reference_temperature =
                    keep * self.lagged_reference_temperature + (1.0 - keep) * reference;
                self.lagged_reference_temperature
            }
            None => reference,
        };
        let drift = story.conserved_drift_per_ns * t * 1e-3;
        // In NVE the energy gained by the drift heats the system: ΔT = ΔE / C_V.
        let mean_temperature = match story.ensemble {
            Ensemble::Nve => mean_temperature + drift / (c_u + c_k),
            _ => mean_temperature,
        };
        let mut temperature = mean_temperature * (1.0 + self.temperature_noise.step(&mut self.rng));

        let reference_potential = system.potential_per_atom * atoms as f64;
        let mut potential = reference_potential
            + c_u * (mean_temperature - REFERENCE_TEMPERATURE)
            + story
                .potential_strain
                .map_or(0.0, |s| s.at(t) * reference_potential.abs())
            + self.potential_noise.step(&mut self.rng);
        let mut kinetic = c_k * temperature;
        let integration_noise = self.conserved_noise.step(&mut self.rng);

        let equilibrium_volume = system.volume(atoms);
        let volume_strain = story.volume_strain.map_or(0.0, |s| s.at(t));
        let (volume, mut pressure) = match story.ensemble {
            Ensemble::Npt => (
                equilibrium_volume * (1.0 + volume_strain) + self.volume_noise.step(&mut self.rng),
                // A box larger than its equilibrium size pulls inwards: P − P₀ = −ΔV/(V κ_T).
                story.pressure + self.pressure_noise.step(&mut self.rng)
                    - volume_strain / system.compressibility,
            ),
            Ensemble::Nvt | Ensemble::Nve => (
                equilibrium_volume,
                story.pressure
                    + self.pressure_noise.step(&mut self.rng)
                    + system.thermal_pressure * (mean_temperature - REFERENCE_TEMPERATURE),
            ),
        };

        let (mut total, mut conserved);
        if story.ensemble == Ensemble::Nve {
            // The total energy is the conserved one; the potential energy takes what the
            // kinetic energy does not (its share of the drift is C_U/C_V).
            let start = reference_potential + c_k * REFERENCE_TEMPERATURE;
            let energy = start + drift + integration_noise;
            potential = energy - kinetic;
            total = energy;
            conserved = energy;
        } else {
            total = potential + kinetic;
            let start = *self.conserved_start.get_or_insert(total);
            conserved = start + drift + integration_noise;
        }

        if let Some(blow_up) = story.blow_up {
            let start = spec.fault_row();
            if row >= start {
                // Energy pours into a few bad contacts and grows exponentially from zero.
                let grown = blow_up.seed_kj_per_mol
                    * (((row - start) as f64 / blow_up.e_folding_rows).exp() - 1.0);
                let to_kinetic = 0.8 * grown;
                potential += grown;
                kinetic += to_kinetic;
                temperature = kinetic / c_k;
                pressure += (2.0 / 3.0 * to_kinetic + grown / 3.0) / volume / BAR_NM3_IN_KJ_PER_MOL;
                total = potential + kinetic;
                // The integrator no longer conserves anything: the excess shows in it.
                conserved += grown + to_kinetic;
            }
        }

        Some(Frame {
            step,
            time_ps,
            temperature,
            pressure,
            potential,
            kinetic,
            total,
            conserved,
            volume,
            density: system.density_at(atoms, volume),
        })
    }
}

impl Iterator for FrameGenerator {
    type Item = Frame;
    fn next(&mut self) -> Option<Frame> {
        self.next_frame()
    }
}

/// Fraction of a quantity's standard deviation within which a deterministic transient
/// counts as over (common practice, no source: a shift of half a standard deviation is
/// hard to see in a trace and small against the fluctuations).
pub const SETTLED_FRACTION: f64 = 0.5;

/// Simulated time (ps from the start of the run) after which the generator's deterministic
/// curves of temperature, pressure, potential energy and volume stay within
/// [`SETTLED_FRACTION`] of a standard deviation of the values they tend to: where the
/// generator put the end of equilibration. Only the rows before a fault (the blow-up's
/// growth) count. `None` when some quantity has not settled by the end of those rows (it
/// still moves, as the heating of an NVE run whose energy drifts does).
pub fn settled_after_ps(spec: &ScenarioSpec) -> Option<f64> {
    let end = match spec.scenario.story().blow_up {
        Some(_) => spec.fault_row().min(spec.rows),
        None => spec.rows,
    } as usize;
    // What the curves tend to: their value long after the run (ten times its length).
    let mut quiet = spec.clone();
    quiet.fault_row = Some(u64::MAX);
    quiet.rows = (end as u64).saturating_mul(10).max(1);
    let generator = FrameGenerator::noise_free(quiet);
    let sizes = generator.sizes();
    let frames: Vec<Frame> = generator.collect();
    let limit = frames.last()?;
    let temperature_sd = sizes.temperature_relative * limit.temperature;
    let unsettled = |f: &Frame| {
        (f.temperature - limit.temperature).abs() > SETTLED_FRACTION * temperature_sd
            || (f.potential - limit.potential).abs() > SETTLED_FRACTION * sizes.potential
            || (f.pressure - limit.pressure).abs() > SETTLED_FRACTION * sizes.pressure
            || (sizes.volume > 0.0
                && (f.volume - limit.volume).abs() > SETTLED_FRACTION * sizes.volume)
    };
    let run = frames.get(..end)?;
    match run.iter().rposition(unsettled) {
        None => Some(0.0),
        Some(i) if i + 1 < run.len() => Some((i + 1) as f64 * spec.row_interval_ps()),
        Some(_) => None,
    }
}
