//! Unit conversions checked against `tests/data/units.json` (SI 2019 exact constants and
//! CODATA 2018 derived values; NIST SP 811 for calorie, atmosphere and bar; see
//! tests/data/README.md). Each check names the entry and its source.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use plateau::units::constants::*;
use plateau::units::{parse_quantity, Dimension, Unit};

fn reference(key: &str) -> f64 {
    let path = format!("{}/tests/data/units.json", env!("CARGO_MANIFEST_DIR"));
    let text = std::fs::read_to_string(path).unwrap();
    let v: serde_json::Value = serde_json::from_str(&text).unwrap();
    v["float64"][key]
        .as_f64()
        .unwrap_or_else(|| panic!("no float64 value {key}"))
}

/// Relative agreement to a few units in the last place.
fn close(ours: f64, key: &str) {
    let r = reference(key);
    let rel = ((ours - r) / r).abs();
    assert!(
        rel <= 4.0 * f64::EPSILON,
        "{key}: ours {ours:e}, reference {r:e}, rel {rel:e}"
    );
}

#[test]
fn defining_constants() {
    // SI 2019 defining constants, exact (units.json "exact_decimal_50_digits").
    close(BOLTZMANN_J_PER_K, "boltzmann_J_per_K");
    close(AVOGADRO_PER_MOL, "avogadro_per_mol");
    close(ELEMENTARY_CHARGE_C, "elementary_charge_C");
    // R = N_A k_B (CODATA 2018, exact to 15 digits)
    close(
        MOLAR_GAS_CONSTANT_KJ_PER_MOL_K * 1e3,
        "molar_gas_constant_J_per_mol_K",
    );
    close(
        AVOGADRO_PER_MOL * BOLTZMANN_J_PER_K * 1e-3,
        "boltzmann_kJ_per_mol_K",
    );
}

#[test]
fn energy_units() {
    // 1 eV = e·N_A/1000 kJ/mol = 96.4853321233100184 (SI 2019 exact)
    close(Unit::Electronvolt.to_canonical(1.0), "eV_in_kJ_per_mol");
    // 1 kcal = 4.184 kJ (thermochemical calorie, NIST SP 811, exact)
    close(Unit::KilocaloriePerMole.to_canonical(1.0), "kcal_in_kJ");
    close(Unit::KilocaloriePerMole.from_canonical(1.0), "kJ_in_kcal");
    // 1 eV in kcal/mol (derived from the two above)
    close(
        Unit::KilocaloriePerMole.from_canonical(Unit::Electronvolt.to_canonical(1.0)),
        "eV_in_kcal_per_mol",
    );
    // J/mol and cal/mol: SI prefix k = 1000 (exact)
    assert_eq!(Unit::JoulePerMole.to_canonical(1000.0), 1.0);
    close(Unit::CaloriePerMole.to_canonical(1000.0), "kcal_in_kJ");
    // k_B·T (CODATA 2018 / SI 2019 exact k_B and N_A)
    close(
        Unit::KT { reference_k: 300.0 }.to_canonical(1.0),
        "kT_300K_kJ_per_mol",
    );
    close(
        Unit::KT {
            reference_k: 298.15,
        }
        .to_canonical(1.0),
        "kT_298.15K_kJ_per_mol",
    );
    let kt300 = Unit::KT { reference_k: 300.0 }.to_canonical(1.0);
    close(
        Unit::KilocaloriePerMole.from_canonical(kt300),
        "kT_300K_kcal_per_mol",
    );
    close(Unit::Electronvolt.from_canonical(kt300), "kT_300K_eV");
    // k_B in kcal/mol/K and eV/K
    let kb = Unit::KT { reference_k: 1.0 }.to_canonical(1.0);
    close(
        Unit::KilocaloriePerMole.from_canonical(kb),
        "boltzmann_kcal_per_mol_K",
    );
    close(Unit::Electronvolt.from_canonical(kb), "boltzmann_eV_per_K");
    // Hartree and Rydberg: CODATA 2018 E_h = 4.3597447222071e-18 J (from memory, not in
    // units.json): E_h·N_A = 2625.4996394799 kJ/mol (from memory).
    assert!((Unit::Hartree.to_canonical(1.0) - 2_625.499_639_479_9).abs() < 1e-6);
    assert_eq!(
        Unit::Rydberg.to_canonical(2.0),
        Unit::Hartree.to_canonical(1.0)
    );
}

#[test]
fn pressure_units() {
    // 1 atm = 1.01325 bar; 1 bar = 0.98692... atm (NIST SP 811, exact definitions)
    close(Unit::Atmosphere.to_canonical(1.0), "atm_in_bar");
    close(Unit::Atmosphere.from_canonical(1.0), "bar_in_atm");
    // 1 atm = 101325 Pa; 1 bar = 1e5 Pa (exact)
    close(
        Unit::Pascal.from_canonical(Unit::Atmosphere.to_canonical(1.0)),
        "atm_in_Pa",
    );
    close(Unit::Pascal.from_canonical(1.0), "bar_in_Pa");
    // kPa, MPa, GPa: SI prefixes (exact)
    assert_eq!(Unit::Kilopascal.to_canonical(100.0), 1.0);
    assert_eq!(Unit::Megapascal.to_canonical(1.0), 10.0);
    assert_eq!(Unit::Gigapascal.to_canonical(1.0), 10_000.0);
    // Energy density as pressure, from our constants (units.json, derived from SI 2019):
    // 1 kJ/mol/nm³ = 1e3 J / N_A / 1e-27 m³ in bar
    close(
        1e3 / AVOGADRO_PER_MOL / 1e-27 / BAR_PA,
        "kJ_per_mol_nm3_in_bar",
    );
    // 1 eV/Å³ = e J / 1e-30 m³ in bar
    close(ELEMENTARY_CHARGE_C / 1e-30 / BAR_PA, "eV_per_A3_in_bar");
    // 1 kcal/mol/Å³ in atm
    close(
        CALORIE_J * 1e3 / AVOGADRO_PER_MOL / 1e-30 / ATMOSPHERE_PA,
        "kcal_per_mol_A3_in_atm",
    );
}

#[test]
fn temperature_time_volume_density() {
    // 0 °C = 273.15 K (SI, exact)
    close(Unit::Celsius.to_canonical(0.0), "celsius_zero_in_K");
    close(
        parse_quantity("0C", Dimension::Temperature).unwrap(),
        "celsius_zero_in_K",
    );
    // Time, volume and density: SI prefixes and the ångström (1e-10 m), exact.
    assert_eq!(Unit::Femtosecond.to_canonical(2.0), 0.002);
    assert_eq!(Unit::Nanosecond.to_canonical(1.0), 1000.0);
    assert_eq!(Unit::Microsecond.to_canonical(1.0), 1e6);
    assert_eq!(Unit::CubicAngstrom.to_canonical(1000.0), 1.0);
    assert_eq!(Unit::CubicCentimetre.to_canonical(1.0), 1e21);
    assert_eq!(Unit::GramPerCubicCentimetre.to_canonical(1.0), 1000.0);
    // 1 u/nm³ = 1.66053906660 kg/m³ (CODATA 2018 atomic mass constant, from memory)
    assert!((Unit::DaltonPerCubicNanometre.to_canonical(1.0) - 1.660_539_066_60).abs() < 1e-12);
}

#[test]
fn every_unit_round_trips() {
    let units = [
        Unit::Femtosecond,
        Unit::Nanosecond,
        Unit::Celsius,
        Unit::Atmosphere,
        Unit::Pascal,
        Unit::KilocaloriePerMole,
        Unit::Electronvolt,
        Unit::Hartree,
        Unit::KT { reference_k: 310.0 },
        Unit::CubicAngstrom,
        Unit::GramPerCubicCentimetre,
    ];
    for u in units {
        let back = u.from_canonical(u.to_canonical(12.5));
        assert!((back - 12.5).abs() < 1e-9, "{u}");
        // The printed name reads back as the same unit.
        assert_eq!(Unit::parse(&u.to_string()), Ok(u), "{u}");
    }
}
