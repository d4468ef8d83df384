//! An invented system prepared in five stages — minimization, heating, constant-volume
//! equilibration, constant-pressure equilibration, production — written as one log or as a
//! chain of five logs, with the truth planted: the step at which the minimization
//! converges, the end of the heating ramp, the row where the volume starts to vary and the
//! row where the output interval changes.
//!
//! The values are invented (an AR(1) noise of our own on each quantity, sizes of the order
//! of a small solvated system's), deterministic for a seed. In one log the steps and times
//! continue across the stages; in the chain each file counts its steps and times from zero.

use super::generator::Rng;

/// Sizes and schedule of the five stages.
#[derive(Debug, Clone, PartialEq)]
pub struct StagePlan {
    pub seed: u64,
    /// Minimization rows (every `min_every` steps), initial max force and decay length
    /// (steps): the force is `f0·exp(−s/λ)`.
    pub min_rows: usize,
    pub min_every: u64,
    pub min_f0: f64,
    pub min_lambda: f64,
    /// MD time step, ps.
    pub dt_ps: f64,
    /// Heating: rows, steps between rows, start and end temperature (a straight ramp).
    pub heat_rows: usize,
    pub heat_from_k: f64,
    pub heat_to_k: f64,
    /// Rows of the constant-volume and the constant-pressure equilibrations.
    pub nvt_rows: usize,
    pub npt_rows: usize,
    /// Steps between rows up to the end of the constant-pressure stage.
    pub every: u64,
    /// Production rows and steps between them.
    pub prod_rows: usize,
    pub prod_every: u64,
    /// Temperature noise (K) and volume noise (nm³).
    pub temp_sd: f64,
    pub volume_sd: f64,
    /// Constant volume, nm³.
    pub volume: f64,
}

impl Default for StagePlan {
    fn default() -> StagePlan {
        StagePlan {
            seed: 15,
            min_rows: 150,
            min_every: 10,
            min_f0: 2.0e5,
            min_lambda: 200.0,
            dt_ps: 0.002,
            heat_rows: 250,
            heat_from_k: 10.0,
            heat_to_k: 300.0,
            nvt_rows: 250,
            npt_rows: 400,
            every: 100,
            prod_rows: 600,
            prod_every: 500,
            temp_sd: 3.0,
            volume_sd: 0.08,
            volume: 27.0,
        }
    }
}

/// The planted truth.
#[derive(Debug, Clone, PartialEq)]
pub struct StageTruth {
    /// Step at which the max force falls to 1000: `λ·ln(f0/1000)`.
    pub converged_step: f64,
    /// Rows (through the run) where each MD stage starts: heating, constant volume,
    /// constant pressure, production; and the row count.
    pub heating_row: usize,
    pub ramp_end_row: usize,
    pub volume_varies_row: usize,
    pub production_row: usize,
    pub rows: usize,
    /// Time (ps) at which the ramp ends.
    pub ramp_end_ps: f64,
}

/// The five stages as text: one log, or five.
#[derive(Debug, Clone, PartialEq)]
pub struct StageLogs {
    pub one_log: String,
    /// min, heat, nvt, npt, prod.
    pub chain: [String; 5],
    pub truth: StageTruth,
}

const MIN_HEADER: &str = "# step  potential[kJ/mol]  max_force\n";
const MD_HEADER: &str = "# step  time[ps]  temperature[K]  potential[kJ/mol]  kinetic[kJ/mol]  \
                         total[kJ/mol]  pressure[bar]  volume[nm^3]\n";

/// An AR(1) process of SD `sd` and lag-one correlation `phi`.
struct Ar1 {
    x: f64,
    sd: f64,
    phi: f64,
}

impl Ar1 {
    fn new(rng: &mut Rng, sd: f64, phi: f64) -> Ar1 {
        Ar1 {
            x: sd * rng.normal(),
            sd,
            phi,
        }
    }
    fn next(&mut self, rng: &mut Rng) -> f64 {
        self.x = self.phi * self.x + self.sd * (1.0 - self.phi * self.phi).sqrt() * rng.normal();
        self.x
    }
}

/// Degrees of freedom of the invented system (3000 atoms, no constraints).
const DOF: f64 = 3.0 * 3000.0 - 3.0;
/// k_B in kJ mol⁻¹ K⁻¹ (CODATA 2018, exact: N_A·k).
const KB: f64 = 0.008_314_462_618_153_24;

/// Writes the five stages.
pub fn five_stage_logs(p: &StagePlan) -> StageLogs {
    let mut rng = Rng::new(p.seed);
    let mut one = String::new();
    let mut files: [String; 5] = Default::default();
    // Minimization.
    one.push_str(MIN_HEADER);
    files[0].push_str(MIN_HEADER);
    for i in 0..p.min_rows {
        let s = i as u64 * p.min_every;
        let decay = (-(s as f64) / p.min_lambda).exp();
        let e = -4.6e4 + 3.0e4 * decay;
        let f = p.min_f0 * decay;
        let line = format!("{s:>8}  {e:>14.4}  {f:>12.4}\n");
        one.push_str(&line);
        files[0].push_str(&line);
    }
    one.push_str(MD_HEADER);
    for f in files.iter_mut().skip(1) {
        f.push_str(MD_HEADER);
    }
    let mut temp_noise = Ar1::new(&mut rng, p.temp_sd, 0.6);
    let mut pot_noise = Ar1::new(&mut rng, 60.0, 0.7);
    let mut press_noise = Ar1::new(&mut rng, 150.0, 0.3);
    let mut vol_noise = Ar1::new(&mut rng, p.volume_sd, 0.8);
    let (mut step, mut time) = (0u64, 0.0f64);
    let mut row = p.min_rows;
    let mut truth = StageTruth {
        converged_step: p.min_lambda * (p.min_f0 / 1000.0).ln(),
        heating_row: row,
        ramp_end_row: 0,
        volume_varies_row: 0,
        production_row: 0,
        rows: 0,
        ramp_end_ps: 0.0,
    };
    let stages = [
        (1usize, p.heat_rows, p.every),
        (2, p.nvt_rows, p.every),
        (3, p.npt_rows, p.every),
        (4, p.prod_rows, p.prod_every),
    ];
    for (k, rows, every) in stages {
        match k {
            2 => truth.ramp_end_row = row,
            3 => truth.volume_varies_row = row,
            4 => truth.production_row = row,
            _ => {}
        }
        let interval_ps = every as f64 * p.dt_ps;
        for i in 0..rows {
            // In one log the first MD row is at 0; later stages continue one interval on.
            if !(k == 1 && i == 0) {
                step += every;
                time += interval_ps;
            }
            let target = if k == 1 {
                // The ramp reaches its top at the first row after the heating stage.
                let span = p.heat_rows as f64;
                p.heat_from_k + (p.heat_to_k - p.heat_from_k) * i as f64 / span
            } else {
                p.heat_to_k
            };
            let t = target + temp_noise.next(&mut rng);
            let kin = 0.5 * DOF * KB * t;
            let pot = -4.6e4 + 30.0 * (t - 10.0) + pot_noise.next(&mut rng);
            let volume = if k >= 3 {
                p.volume + 0.02 + vol_noise.next(&mut rng)
            } else {
                p.volume
            };
            let press = 1.0 + press_noise.next(&mut rng);
            let (fstep, ftime) = if k == 1 {
                (step, time)
            } else {
                // The chain's file counts from zero.
                (i as u64 * every, i as f64 * interval_ps)
            };
            let fields = |s: u64, tm: f64| {
                format!(
                    "{s:>9}  {tm:>10.3}  {t:>8.3}  {pot:>12.4}  {kin:>11.4}  {:>12.4}  {press:>9.3}  {volume:>8.4}\n",
                    pot + kin
                )
            };
            one.push_str(&fields(step, time));
            if let Some(f) = files.get_mut(k) {
                f.push_str(&fields(fstep, ftime));
            }
            row += 1;
        }
        if k == 1 {
            truth.ramp_end_ps = time + interval_ps;
        }
    }
    truth.rows = row;
    StageLogs {
        one_log: one,
        chain: files,
        truth,
    }
}
