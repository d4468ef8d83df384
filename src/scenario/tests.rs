//! The generator's physics against textbook relations, and its layouts.
//!
//! Sampling tolerances: a relative standard deviation estimated from N rows of an AR(1)
//! series with inefficiency g has a relative error of about sqrt(g / (2N)); the bounds
//! below are several of those.

use super::system::{BAR_NM3_IN_KJ_PER_MOL, BOLTZMANN_KJ_PER_MOL_K};
use super::*;

fn spec(scenario: Scenario, rows: u64) -> ScenarioSpec {
    ScenarioSpec::new(scenario, LogStyle::Whitespace, rows)
}

fn frames(scenario: Scenario, rows: u64) -> Vec<Frame> {
    FrameGenerator::new(spec(scenario, rows)).collect()
}

fn column(frames: &[Frame], f: impl Fn(&Frame) -> f64) -> Vec<f64> {
    frames.iter().map(f).collect()
}

fn mean(xs: &[f64]) -> f64 {
    xs.iter().sum::<f64>() / xs.len() as f64
}

fn variance(xs: &[f64]) -> f64 {
    let m = mean(xs);
    xs.iter().map(|x| (x - m) * (x - m)).sum::<f64>() / (xs.len() as f64 - 1.0)
}

fn sd(xs: &[f64]) -> f64 {
    variance(xs).sqrt()
}

fn lag1(xs: &[f64]) -> f64 {
    let m = mean(xs);
    let num: f64 = xs.windows(2).map(|w| (w[0] - m) * (w[1] - m)).sum();
    let den: f64 = xs.iter().map(|x| (x - m) * (x - m)).sum();
    num / den
}

fn log_text(spec: &ScenarioSpec) -> String {
    let mut out = Vec::new();
    write_log(spec, &mut out).unwrap();
    String::from_utf8(out).unwrap()
}

#[test]
fn same_seed_gives_same_log() {
    for scenario in Scenario::ALL {
        assert_eq!(frames(scenario, 200), frames(scenario, 200), "{scenario:?}");
    }
    let mut other = spec(Scenario::Equilibration, 200);
    other.seed += 1;
    let a: Vec<Frame> = FrameGenerator::new(other).collect();
    assert_ne!(a, frames(Scenario::Equilibration, 200));
}

#[test]
fn names_round_trip() {
    for scenario in Scenario::ALL {
        assert_eq!(Scenario::from_name(scenario.name()), Some(scenario));
    }
    assert_eq!(Scenario::from_name("nope"), None);
}

#[test]
fn kinetic_temperature_fluctuates_with_the_canonical_size() {
    // Canonical kinetic energy: σ_T/⟨T⟩ = sqrt(2/N_df) (Frenkel & Smit, Understanding
    // Molecular Simulation, 2nd ed. 2002, the kinetic-temperature fluctuation of the
    // canonical ensemble; METHODS §6), in NVT and NPT alike, with and without constraints.
    for (scenario, rows, skip) in [
        (Scenario::Equilibration, 20_000, 500),
        (Scenario::Production, 20_000, 0),
        (Scenario::BlowUp, 10_000, 0),
        (Scenario::DensitySettling, 10_000, 1000),
    ] {
        let s = spec(scenario, rows);
        let all = frames(scenario, rows);
        let end = if scenario == Scenario::BlowUp {
            s.fault_row() as usize
        } else {
            all.len()
        };
        let temps = column(&all[skip..end], |f| f.temperature);
        let relative = sd(&temps) / mean(&temps);
        let expected = (2.0 / s.degrees_of_freedom()).sqrt();
        assert!(
            (relative / expected - 1.0).abs() < 0.05,
            "{scenario:?}: {relative} vs {expected}"
        );
    }
}

#[test]
fn degrees_of_freedom_follow_three_n_minus_constraints_minus_three() {
    let s = spec(Scenario::Equilibration, 1);
    assert_eq!(s.degrees_of_freedom(), 8997.0);
    let p = spec(Scenario::Production, 1);
    let expected = 3.0 * p.atoms as f64 - p.constraints() as f64 - 3.0;
    assert_eq!(p.degrees_of_freedom(), expected);
    assert!(
        p.constraints() > 20_000,
        "rigid solvent: {}",
        p.constraints()
    );
}

#[test]
fn thermostat_failure_suppresses_fluctuations() {
    let temps = column(&frames(Scenario::ThermostatFailure, 5000), |f| {
        f.temperature
    });
    let relative = sd(&temps) / mean(&temps);
    let expected = (2.0 / 8997.0_f64).sqrt();
    assert!(
        (relative / (0.2 * expected) - 1.0).abs() < 0.1,
        "{relative}"
    );
}

#[test]
fn kinetic_energy_matches_equipartition() {
    // K = N_df k_B T / 2 (equipartition, textbook), in every scenario.
    for scenario in Scenario::ALL {
        let s = spec(scenario, 300);
        for f in FrameGenerator::new(s.clone()) {
            let expected = 0.5 * s.degrees_of_freedom() * BOLTZMANN_KJ_PER_MOL_K * f.temperature;
            assert!(
                (f.kinetic - expected).abs() < 1e-9 * expected.abs(),
                "{scenario:?}"
            );
        }
    }
}

#[test]
fn potential_energy_fluctuation_matches_its_heat_capacity() {
    // Canonical fluctuation formula: ⟨δE²⟩ = k_B T² C_V, and with a separable Hamiltonian
    // the configurational part alone, ⟨δU²⟩ = k_B T² C_U with C_U = d⟨U⟩/dT (Allen &
    // Tildesley, Computer Simulation of Liquids, 2nd ed. 2017, ch. 2, fluctuations).
    // C_U is measured here from the staged-heating holds at 150 K and 300 K, and the
    // fluctuation from the hold at 300 K (a long run of the same scenario).
    let s = spec(Scenario::StagedHeating, 30_000);
    let all: Vec<Frame> = FrameGenerator::new(s).collect();
    let hold_150 = column(&all[60..100], |f| f.potential);
    let hold_300: Vec<f64> = column(&all[200..], |f| f.potential);
    let t_150 = mean(&column(&all[60..100], |f| f.temperature));
    let t_300 = mean(&column(&all[200..], |f| f.temperature));
    let heat_capacity = (mean(&hold_300) - mean(&hold_150)) / (t_300 - t_150);
    let from_fluctuation = variance(&hold_300) / (BOLTZMANN_KJ_PER_MOL_K * t_300 * t_300);
    assert!(
        (from_fluctuation / heat_capacity - 1.0).abs() < 0.1,
        "C_U from ⟨δU²⟩ {from_fluctuation} vs from d⟨U⟩/dT {heat_capacity}"
    );
    // And the total energy: ⟨δE²⟩ = k_B T² (C_U + N_df k_B / 2).
    let total = column(&all[200..], |f| f.total);
    let c_v = variance(&total) / (BOLTZMANN_KJ_PER_MOL_K * t_300 * t_300);
    let c_k = 0.5 * spec(Scenario::StagedHeating, 1).degrees_of_freedom() * BOLTZMANN_KJ_PER_MOL_K;
    assert!(
        (c_v / (heat_capacity + c_k) - 1.0).abs() < 0.1,
        "C_V {c_v} vs {}",
        heat_capacity + c_k
    );
}

#[test]
fn solvent_box_heat_capacity_is_water_like() {
    // C_V of liquid water near 300 K ≈ 75 J/(mol K) per molecule (from memory); the
    // invented solvent's C_V (configurational + 9/2 k_B kinetic) per molecule of 3 atoms.
    let system = system::SOLVENT_BOX;
    let per_molecule =
        3.0 * (system.potential_heat_capacity(3000) + system.kinetic_heat_capacity(3000)) / 3000.0;
    assert!((per_molecule - 0.0745).abs() < 0.002, "{per_molecule}");
}

#[test]
fn nve_kinetic_fluctuation_follows_lebowitz_percus_verlet() {
    // Microcanonical kinetic-energy fluctuation: ⟨δK²⟩ = (N_df/2)(k_B T)² (1 − C_K/C_V)
    // (Lebowitz, Percus & Verlet, Phys. Rev. 153, 250 (1967)); the drift is removed first.
    let s = spec(Scenario::NveDrift, 5000);
    let all: Vec<Frame> = FrameGenerator::new(s.clone()).collect();
    let rate = 0.4; // kJ/mol per ps, the scenario's drift
    let system = s.system();
    let c_k = system.kinetic_heat_capacity(s.atoms);
    let c_u = system.potential_heat_capacity(s.atoms);
    let detrended: Vec<f64> = all
        .iter()
        .map(|f| f.kinetic - rate * f.time_ps * c_k / (c_k + c_u))
        .collect();
    let t = mean(&column(&all, |f| f.temperature));
    let n_df = s.degrees_of_freedom();
    let expected =
        (0.5 * n_df * (BOLTZMANN_KJ_PER_MOL_K * t).powi(2) * (1.0 - c_k / (c_k + c_u))).sqrt();
    assert!(
        (sd(&detrended) / expected - 1.0).abs() < 0.05,
        "{} vs {expected}",
        sd(&detrended)
    );
    // The total energy is conserved: its fluctuation is far below the kinetic energy's.
    let total: Vec<f64> = all.iter().map(|f| f.total - rate * f.time_ps).collect();
    assert!(sd(&total) < 0.05 * sd(&detrended));
}

#[test]
fn volume_fluctuation_gives_back_the_compressibility() {
    // NPT: ⟨δV²⟩ = k_B T ⟨V⟩ κ_T (Allen & Tildesley 2017, ch. 2; Landau & Lifshitz,
    // Statistical Physics, §112). κ_T recovered from the production run's volume.
    for scenario in [Scenario::Production, Scenario::Equilibration] {
        let s = spec(scenario, 20_000);
        let all: Vec<Frame> = FrameGenerator::new(s.clone()).collect();
        let volume = column(&all[1000..], |f| f.volume);
        let t = mean(&column(&all[1000..], |f| f.temperature));
        let kappa = variance(&volume) * BAR_NM3_IN_KJ_PER_MOL
            / (BOLTZMANN_KJ_PER_MOL_K * t * mean(&volume));
        let expected = s.system().compressibility;
        assert!(
            (kappa / expected - 1.0).abs() < 0.15,
            "{scenario:?}: κ_T {kappa} vs {expected}"
        );
    }
}

#[test]
fn pressure_fluctuates_by_hundreds_of_bar_in_a_small_box() {
    // A 30 nm³ box: hundreds of bar (common practice, no source); a box eight times larger
    // fluctuates less, as 1/sqrt(V) for an average over the box.
    let small = column(&frames(Scenario::ThermostatFailure, 5000), |f| f.pressure);
    assert!((100.0..600.0).contains(&sd(&small)), "{}", sd(&small));
    let large = column(&frames(Scenario::Production, 5000), |f| f.pressure);
    assert!(
        sd(&large) < 0.6 * sd(&small),
        "{} vs {}",
        sd(&large),
        sd(&small)
    );
}

#[test]
fn densities_are_those_of_the_systems() {
    for scenario in [
        Scenario::Equilibration,
        Scenario::Production,
        Scenario::DensitySettling,
    ] {
        let s = spec(scenario, 3000);
        let all: Vec<Frame> = FrameGenerator::new(s.clone()).collect();
        let late = column(&all[2000..], |f| f.density);
        let expected = s.system().density;
        assert!(
            (mean(&late) / expected - 1.0).abs() < 0.003,
            "{scenario:?}: {} vs {expected}",
            mean(&late)
        );
    }
}

#[test]
fn fluctuations_are_correlated_as_their_correlation_times_say() {
    // An AR(1) process sampled every dt with correlation time τ has lag-1 correlation
    // exp(−dt/τ) (Box & Jenkins, Time Series Analysis, the AR(1) autocorrelation function).
    let s = spec(Scenario::Production, 20_000);
    let all: Vec<Frame> = FrameGenerator::new(s.clone()).collect();
    let dt = s.row_interval_ps();
    let tau = s.system().correlation_ps;
    for (name, values, tau) in [
        ("potential", column(&all, |f| f.potential), tau.potential),
        ("volume", column(&all, |f| f.volume), tau.volume),
    ] {
        let expected = (-dt / tau).exp();
        assert!(
            (lag1(&values) - expected).abs() < 0.03,
            "{name}: {} vs {expected}",
            lag1(&values)
        );
    }
    let slow = frames(Scenario::Equilibration, 20_000);
    let potential = column(&slow[1000..], |f| f.potential);
    let expected = (-1.0 / tau.potential).exp();
    assert!((lag1(&potential) - expected).abs() < 0.03);
}

#[test]
fn nve_conserved_energy_drifts_by_the_set_rate() {
    let frames = frames(Scenario::NveDrift, 2000);
    let first = column(&frames[..100], |f| f.conserved);
    let last = column(&frames[1900..], |f| f.conserved);
    let rate = (mean(&last) - mean(&first)) / 1900.0;
    assert!((rate - 0.4).abs() < 0.02, "{rate}");
}

#[test]
fn production_conserved_energy_drifts_slowly() {
    // 0.5 kJ/mol per ns over 100 ns of a 23,000-atom box: 2e-5 kJ/mol per ns per atom.
    let s = spec(Scenario::Production, 10_000);
    let all: Vec<Frame> = FrameGenerator::new(s).collect();
    let first = mean(&column(&all[..500], |f| f.conserved));
    let last = mean(&column(&all[9500..], |f| f.conserved));
    let ns = all[9750].time_ps / 1000.0 - all[250].time_ps / 1000.0;
    assert!(
        ((last - first) / ns - 0.5).abs() < 0.1,
        "{}",
        (last - first) / ns
    );
}

#[test]
fn production_continues_from_a_checkpoint_every_ten_ps() {
    let all = frames(Scenario::Production, 3);
    assert_eq!(all[0].step, 2_500_000);
    assert_eq!(all[0].time_ps, 5000.0);
    assert_eq!(all[1].time_ps - all[0].time_ps, 10.0);
}

#[test]
fn heating_follows_its_schedule_with_a_short_lag() {
    let all = frames(Scenario::Heating, 400);
    let at = |t: usize| mean(&column(&all[t - 2..t + 3], |f| f.temperature));
    // Halfway up the ramp (50 ps): reference 155 K, about 2 ps × 2.9 K/ps behind.
    assert!((at(50) - 149.2).abs() < 5.0, "{}", at(50));
    let held = column(&all[150..], |f| f.temperature);
    assert!((mean(&held) - 300.0).abs() < 1.0);
    let staged = frames(Scenario::StagedHeating, 300);
    let hold = column(&staged[65..100], |f| f.temperature);
    assert!((mean(&hold) - 150.0).abs() < 1.0, "{}", mean(&hold));
}

#[test]
fn schedules_interpolate_and_hold() {
    let points = [(0.0, 10.0), (100.0, 300.0)];
    assert_eq!(schedule_value(&points, -5.0), 10.0);
    assert_eq!(schedule_value(&points, 50.0), 155.0);
    assert_eq!(schedule_value(&points, 500.0), 300.0);
    assert_eq!(Scenario::Heating.target_temperature(), "0ps=10K,100ps=300K");
    assert_eq!(Scenario::Production.target_temperature(), "300K");
    assert_eq!(
        Scenario::StagedHeating.target_temperature(),
        "0ps=50K,50ps=150K,100ps=150K,150ps=300K"
    );
}

#[test]
fn settling_times_are_where_the_descriptions_put_them() {
    let settled = |scenario: Scenario, rows: u64| settled_after_ps(&spec(scenario, rows));
    let equilibration = settled(Scenario::Equilibration, 2000).unwrap();
    assert!((120.0..=180.0).contains(&equilibration), "{equilibration}");
    let density = settled(Scenario::DensitySettling, 3000).unwrap();
    assert!((250.0..=350.0).contains(&density), "{density}");
    let heating = settled(Scenario::Heating, 1500).unwrap();
    assert!((100.0..=115.0).contains(&heating), "{heating}");
    let staged = settled(Scenario::StagedHeating, 1500).unwrap();
    assert!((150.0..=165.0).contains(&staged), "{staged}");
    assert_eq!(settled(Scenario::Production, 1000), Some(0.0));
    assert_eq!(settled(Scenario::BlowUp, 1200), Some(0.0));
    // The NVE run heats up as its energy drifts: it never settles.
    assert_eq!(settled(Scenario::NveDrift, 2000), None);
    // Too short to see the end of the transient.
    assert_eq!(settled(Scenario::DensitySettling, 200), None);
}

#[test]
fn blow_up_grows_from_its_fault_row_and_ends_non_finite() {
    let mut s = spec(Scenario::BlowUp, 2000);
    s.fault_row = Some(500);
    let text = log_text(&s);
    let rows: Vec<&str> = text.lines().filter(|l| !l.starts_with('#')).collect();
    assert!(rows.len() > 500 && rows.len() < 700, "{}", rows.len());
    let last = rows.last().unwrap();
    assert!(last.contains("NaN") || last.contains("inf"), "{last}");
    // Before the fault row the run is the healthy one.
    let calm: Vec<Frame> = FrameGenerator::new(s.clone()).take(500).collect();
    let temps = column(&calm, |f| f.temperature);
    assert!((mean(&temps) - 300.0).abs() < 1.0);
    // The growth is smooth: a few rows in it is still within the fluctuations.
    let early: Vec<Frame> = FrameGenerator::new(s).skip(500).take(4).collect();
    assert!(early.iter().all(|f| (f.temperature - 300.0).abs() < 20.0));
}

#[test]
fn stalled_log_ends_mid_line() {
    let out = log_text(&spec(Scenario::Stalled, 50));
    assert!(!out.ends_with('\n'));
    assert_eq!(out.lines().filter(|l| !l.starts_with('#')).count(), 51);
}

#[test]
fn emitter_writes_the_same_bytes_as_write_log() {
    for scenario in [Scenario::BlowUp, Scenario::Stalled, Scenario::Heating] {
        let s = ScenarioSpec::new(scenario, LogStyle::Tagged, 1200);
        let whole = log_text(&s);
        let mut emitter = LogEmitter::new(s);
        let mut pieces = Vec::new();
        emitter.write_header(&mut pieces).unwrap();
        let mut rows = 0;
        while emitter.write_next(&mut pieces).unwrap() == Emitted::Row {
            rows += 1;
        }
        assert!(emitter.ended());
        assert_eq!(emitter.write_next(&mut pieces).unwrap(), Emitted::End);
        assert_eq!(String::from_utf8(pieces).unwrap(), whole, "{scenario:?}");
        assert!(rows > 800);
    }
}

#[test]
fn every_style_writes_ten_fields_per_row() {
    for style in LogStyle::ALL {
        let spec = ScenarioSpec::new(Scenario::Equilibration, style, 3);
        let text = log_text(&spec);
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

#[test]
fn whitespace_preamble_names_the_invented_system() {
    let text = log_text(&spec(Scenario::Production, 2));
    let lines: Vec<&str> = text.lines().collect();
    assert!(lines[0].starts_with("# invented example log: NPT production"));
    assert!(
        lines[1].contains("system PX-24 (invented): 23244 atoms"),
        "{}",
        lines[1]
    );
    assert!(lines[2].starts_with("# step  time(ps)"));
}
