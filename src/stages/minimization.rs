//! Energy minimization: recognising a descent and judging its convergence (pure, on
//! slices).
//!
//! A minimization writes an iteration or step counter but no simulated time, and its
//! energy goes down; it often writes the largest (or RMS) force on an atom. Its question is
//! "has it converged?", never "has it equilibrated?".
//!
//! Convergence (defaults common practice, no source; both overridable with
//! `--min-force-tolerance` and `--min-energy-tolerance`):
//! - with a force column, converged from the first row after which the force stays at or
//!   below [`DEFAULT_FORCE_TOLERANCE`] (1000 kJ mol⁻¹ nm⁻¹, a common tolerance before
//!   dynamics; converted to the column's unit when its header states an energy per length
//!   such as kcal/mol/Å or eV/Å, compared as it is otherwise);
//! - without one, converged from the first row after which the energy changes by at most
//!   [`DEFAULT_ENERGY_TOLERANCE`] of its size per step.
//!
//! Flags: a descent that stalls (the energy no longer moves by the energy tolerance per
//! step over the last quarter) while the force is still more than [`STALL_FORCE_FACTOR`]
//! times the tolerance, and an energy that ends above its lowest value by more than
//! [`RISE_RELATIVE`] of its size (a minimizer never keeps a higher energy).

use serde::{Deserialize, Serialize};

/// Default force tolerance, kJ mol⁻¹ nm⁻¹ (common practice, no source); converted to the
/// force column's unit when its header states one ([`force_unit_kj_mol_nm`]), compared as
/// it is with a column of no stated unit.
pub const DEFAULT_FORCE_TOLERANCE: f64 = 1000.0;

/// Bohr radius in nm (CODATA 2018: 5.29177210903(80)e-11 m; value from memory).
pub const BOHR_NM: f64 = 0.052_917_721_090_3;
/// Default energy tolerance: relative change per step (common practice, no source).
pub const DEFAULT_ENERGY_TOLERANCE: f64 = 1e-6;
/// A stalled descent: the force is still this many times the tolerance (common practice,
/// no source).
pub const STALL_FORCE_FACTOR: f64 = 10.0;
/// An energy rise that is flagged, relative to the energy's size (common practice, no
/// source).
pub const RISE_RELATIVE: f64 = 1e-5;
/// Fraction of steps that must go down for a descent (common practice, no source).
pub const DESCENT_FRACTION: f64 = 0.8;
/// Fewest rows to call a minimization.
pub const MIN_ROWS: usize = 5;

/// Tolerances of the convergence verdict.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Tolerances {
    /// Force tolerance, in the log's force unit.
    pub force: f64,
    /// Relative energy change per step.
    pub energy: f64,
}

impl Default for Tolerances {
    fn default() -> Tolerances {
        Tolerances {
            force: DEFAULT_FORCE_TOLERANCE,
            energy: DEFAULT_ENERGY_TOLERANCE,
        }
    }
}

/// Which force a column holds.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum ForceKind {
    /// The largest force on any atom.
    Max,
    /// The root mean square force.
    Rms,
}

/// A force column, known by its name: it holds "force", "fmax" or "grad" (any case);
/// "rms" in the name makes it the RMS force.
pub fn force_kind(name: &str) -> Option<ForceKind> {
    let l = name.to_ascii_lowercase();
    if !(l.contains("force") || l.contains("fmax") || l.contains("grad")) {
        return None;
    }
    Some(if l.contains("rms") {
        ForceKind::Rms
    } else {
        ForceKind::Max
    })
}

/// How many kJ mol⁻¹ nm⁻¹ one unit of a force column is, when the unit (as written in the
/// header: `kJ/mol/nm`, `kJ mol-1 nm-1`, `kJ/(mol·nm)`, `kcal/mol/Å`, `kcal/mol/A`, `eV/Å`,
/// `eV/nm`, `Hartree/Bohr`, any case) is an energy per length; `None` otherwise. Factors
/// from the exact constants of [`crate::units::constants`] (the Bohr radius: CODATA 2018).
pub fn force_unit_kj_mol_nm(unit: &str) -> Option<f64> {
    use crate::units::constants::{
        AVOGADRO_PER_MOL, CALORIE_J, ELECTRONVOLT_KJ_PER_MOL, HARTREE_J,
    };
    let t: String = unit
        .chars()
        .filter(|c| !matches!(c, ' ' | '·' | '*' | '⋅' | '(' | ')' | '[' | ']' | '^'))
        .collect::<String>()
        .to_lowercase()
        .replace(['−', '⁻'], "-")
        .replace('¹', "1");
    let energies: [(&str, f64); 8] = [
        ("kj/mol", 1.0),
        ("kjmol-1", 1.0),
        ("kcal/mol", CALORIE_J),
        ("kcalmol-1", CALORIE_J),
        ("ev", ELECTRONVOLT_KJ_PER_MOL),
        ("hartree", HARTREE_J * AVOGADRO_PER_MOL / 1000.0),
        ("eh", HARTREE_J * AVOGADRO_PER_MOL / 1000.0),
        ("ha", HARTREE_J * AVOGADRO_PER_MOL / 1000.0),
    ];
    let lengths: [(&str, f64); 5] = [
        ("nm", 1.0),
        ("å", 0.1),
        ("angstrom", 0.1),
        ("a", 0.1),
        ("bohr", BOHR_NM),
    ];
    for (e, kj) in energies {
        let Some(rest) = t.strip_prefix(e) else {
            continue;
        };
        for (l, nm) in lengths {
            let per_length = [
                format!("/{l}"),
                format!("{l}-1"),
                // `kJ/(mol nm)`: the length inside the denominator.
                if e.contains('/') {
                    l.to_string()
                } else {
                    format!("/{l}")
                },
            ];
            if per_length.iter().any(|p| rest == p) {
                return Some(kj / nm);
            }
        }
    }
    None
}

/// True when `energy` goes down: at least [`MIN_ROWS`] finite values, lower at the end
/// than at the start, and at least [`DESCENT_FRACTION`] of the changes downwards in the
/// first half (where a descent is steep).
pub fn descends(energy: &[f64]) -> bool {
    let n = energy.len();
    if n < MIN_ROWS || energy.iter().any(|v| !v.is_finite()) {
        return false;
    }
    let (Some(first), Some(last)) = (energy.first(), energy.last()) else {
        return false;
    };
    if last >= first {
        return false;
    }
    let half = energy.get(..n / 2 + 1).unwrap_or(energy);
    let steps = half.len().saturating_sub(1);
    let down = half.windows(2).filter(|w| w[1] < w[0]).count();
    steps > 0 && down as f64 >= DESCENT_FRACTION * steps as f64
}

/// The verdict on a minimization.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum MinVerdict {
    /// The tolerance is met.
    Converged,
    /// Still going down, tolerance not met.
    NotConverged,
    /// The energy no longer moves while the force is far above the tolerance.
    Stalled,
    /// The energy ends above its lowest value.
    EnergyRises,
}

impl MinVerdict {
    /// In words.
    pub fn words(self) -> &'static str {
        match self {
            MinVerdict::Converged => "converged",
            MinVerdict::NotConverged => "not converged",
            MinVerdict::Stalled => "stalled far above convergence",
            MinVerdict::EnergyRises => "energy rises",
        }
    }
}

/// What a minimization did.
#[derive(Debug, Clone, PartialEq)]
pub struct MinSummary {
    pub verdict: MinVerdict,
    /// First row (of the slices) from which the tolerance holds.
    pub converged_row: Option<usize>,
    /// Energy at the first and last rows.
    pub energy_first: f64,
    pub energy_last: f64,
    /// Mean energy change per step over the whole descent and over its last quarter.
    pub change_per_step: f64,
    pub last_change_per_step: f64,
    /// The force column's last value, and which force it is.
    pub force_last: Option<(ForceKind, f64)>,
    /// The tolerances used.
    pub tolerances: Tolerances,
}

/// Judges a minimization. `steps`: the step counter (rows when `None`); `force`: a force
/// column. `None` under two finite energies.
pub fn judge(
    energy: &[f64],
    steps: Option<&[f64]>,
    force: Option<(ForceKind, &[f64])>,
    tol: Tolerances,
) -> Option<MinSummary> {
    let n = energy.len();
    if n < 2 || energy.iter().any(|v| !v.is_finite()) {
        return None;
    }
    let step_at = |i: usize| -> f64 {
        steps
            .and_then(|s| s.get(i).copied())
            .filter(|v| v.is_finite())
            .unwrap_or(i as f64)
    };
    let per_step = |a: usize, b: usize| -> f64 {
        let ds = step_at(b) - step_at(a);
        let de = energy.get(b).copied().unwrap_or(0.0) - energy.get(a).copied().unwrap_or(0.0);
        if ds > 0.0 {
            de / ds
        } else {
            de / (b.saturating_sub(a).max(1)) as f64
        }
    };
    let energy_first = *energy.first()?;
    let energy_last = *energy.last()?;
    let q = (n / 4).max(1);
    let change_per_step = per_step(0, n - 1);
    let last_change_per_step = per_step(n - 1 - q, n - 1);
    // Energy criterion: the first row after which every step changes by at most the
    // tolerance (relative).
    let small = |i: usize| -> bool {
        let e = energy
            .get(i)
            .copied()
            .unwrap_or(0.0)
            .abs()
            .max(f64::MIN_POSITIVE);
        per_step(i, i + 1).abs() <= tol.energy * e
    };
    let mut energy_row = n - 1;
    while energy_row > 0 && small(energy_row - 1) {
        energy_row -= 1;
    }
    let energy_converged = (energy_row < n - 1).then_some(energy_row);
    let force_last = force.and_then(|(k, f)| f.last().map(|&v| (k, v)));
    let converged_row = match force {
        Some((_, f)) => {
            let mut r = f.len();
            while r > 0
                && f.get(r - 1)
                    .is_some_and(|&v| v.is_finite() && v <= tol.force)
            {
                r -= 1;
            }
            (r < f.len()).then_some(r)
        }
        None => energy_converged,
    };
    let lowest = energy.iter().copied().fold(f64::INFINITY, f64::min);
    let rises = energy_last - lowest > RISE_RELATIVE * lowest.abs().max(f64::MIN_POSITIVE);
    let flat_end = last_change_per_step.abs() <= tol.energy * energy_last.abs();
    let far_force = force_last.is_some_and(|(_, v)| v > STALL_FORCE_FACTOR * tol.force);
    let verdict = if rises {
        MinVerdict::EnergyRises
    } else if converged_row.is_some() {
        MinVerdict::Converged
    } else if flat_end && far_force {
        MinVerdict::Stalled
    } else {
        MinVerdict::NotConverged
    };
    Some(MinSummary {
        verdict,
        converged_row,
        energy_first,
        energy_last,
        change_per_step,
        last_change_per_step,
        force_last,
        tolerances: tol,
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    /// An exponential descent E = E∞ + A·e^(−s/λ) with force F = F0·e^(−s/λ): the force
    /// falls below the tolerance at s* = λ·ln(F0/tol) (planted truth, exact arithmetic).
    fn descent(rows: usize, f0: f64) -> (Vec<f64>, Vec<f64>, Vec<f64>) {
        let lambda = 150.0;
        let steps: Vec<f64> = (0..rows).map(|i| i as f64 * 10.0).collect();
        let e = steps
            .iter()
            .map(|s| -4.0e5 + 2.0e5 * (-s / lambda).exp())
            .collect();
        let f = steps.iter().map(|s| f0 * (-s / lambda).exp()).collect();
        (steps, e, f)
    }

    #[test]
    fn converged_row_matches_the_planted_step() {
        let (s, e, f) = descent(200, 1.0e6);
        let m = judge(
            &e,
            Some(&s),
            Some((ForceKind::Max, &f)),
            Tolerances::default(),
        )
        .unwrap();
        assert_eq!(m.verdict, MinVerdict::Converged);
        let planted = 150.0 * (1.0e6f64 / 1000.0).ln(); // 1036.2 steps
        let row = m.converged_row.unwrap();
        assert!((s[row] - planted).abs() <= 10.0, "{} vs {planted}", s[row]);
        assert!(descends(&e));
    }

    #[test]
    fn energy_criterion_without_force() {
        let (s, e, _) = descent(300, 1.0);
        let m = judge(&e, Some(&s), None, Tolerances::default()).unwrap();
        assert_eq!(m.verdict, MinVerdict::Converged);
        // |dE/ds| / |E| = (2e5/150)·e^(−s/150) / |E| ≤ 1e-6 at about s = 150·ln(2e5/150/0.4)
        // (|E| ≈ 4e5): 1216 steps; rows are 10 steps apart.
        let planted = 150.0 * (2.0e5f64 / 150.0 / (4.0e5 * 1e-6)).ln();
        let row = m.converged_row.unwrap();
        assert!((s[row] - planted).abs() <= 20.0, "{} vs {planted}", s[row]);
    }

    #[test]
    fn a_stalled_descent_is_flagged() {
        // Stops moving at s = 300 with the force still at 5e4.
        let steps: Vec<f64> = (0..100).map(|i| i as f64 * 10.0).collect();
        let e: Vec<f64> = steps
            .iter()
            .map(|&s| -1.0e5 - 5.0e4 * (1.0 - (-s.min(300.0) / 60.0).exp()))
            .collect();
        let f: Vec<f64> = steps
            .iter()
            .map(|&s| if s < 300.0 { 1e6 } else { 5e4 })
            .collect();
        let m = judge(
            &e,
            Some(&steps),
            Some((ForceKind::Max, &f)),
            Tolerances::default(),
        );
        assert_eq!(m.unwrap().verdict, MinVerdict::Stalled);
    }

    #[test]
    fn a_rising_energy_is_flagged() {
        let mut e: Vec<f64> = (0..50).map(|i| -1000.0 - 10.0 * i as f64).collect();
        e.extend((0..10).map(|i| -1490.0 + 20.0 * i as f64));
        let m = judge(&e, None, None, Tolerances::default()).unwrap();
        assert_eq!(m.verdict, MinVerdict::EnergyRises);
    }

    #[test]
    fn still_descending_is_not_converged() {
        let (s, e, f) = descent(40, 1.0e6);
        let m = judge(
            &e,
            Some(&s),
            Some((ForceKind::Max, &f)),
            Tolerances::default(),
        )
        .unwrap();
        assert_eq!(m.verdict, MinVerdict::NotConverged);
        assert!(m.change_per_step < 0.0);
    }

    #[test]
    fn fluctuating_energy_is_no_descent() {
        let e: Vec<f64> = (0..100).map(|i| -1000.0 + ((i * 7) % 5) as f64).collect();
        assert!(!descends(&e));
    }

    #[test]
    fn force_names() {
        assert_eq!(force_kind("Fmax"), Some(ForceKind::Max));
        assert_eq!(force_kind("max_force"), Some(ForceKind::Max));
        assert_eq!(force_kind("rms-force"), Some(ForceKind::Rms));
        assert_eq!(force_kind("potential"), None);
    }
}

#[cfg(test)]
mod force_unit_tests {
    use super::*;

    fn close(a: f64, b: f64) -> bool {
        (a - b).abs() <= 1e-12 * b.abs()
    }

    #[test]
    fn energies_per_length_in_kj_per_mol_nm() {
        // 1 kcal = 4.184 kJ (thermochemical calorie, NIST SP 811, exact); 1 Å = 0.1 nm.
        for u in [
            "kcal/mol/Å",
            "kcal/mol/A",
            "kcal/(mol·Å)",
            "KCAL/MOL/ANGSTROM",
        ] {
            assert!(
                close(force_unit_kj_mol_nm(u).unwrap(), 41.84),
                "{u}: {:?}",
                force_unit_kj_mol_nm(u)
            );
        }
        for u in [
            "kJ/mol/nm",
            "kJ mol-1 nm-1",
            "kJ/(mol nm)",
            "kJ mol^-1 nm^-1",
            "kJ mol⁻¹ nm⁻¹",
        ] {
            assert_eq!(force_unit_kj_mol_nm(u), Some(1.0), "{u}");
        }
        // 1 eV per particle = e·N_A/1000 kJ/mol = 96.4853321233100184 kJ/mol (SI 2019 exact).
        assert!(close(
            force_unit_kj_mol_nm("eV/Å").unwrap(),
            964.853_321_233_100_2
        ));
        assert!(close(
            force_unit_kj_mol_nm("eV/nm").unwrap(),
            96.485_332_123_310_02
        ));
        // The atomic unit of force, E_h/a_0 = 8.2387234983e-8 N (CODATA 2018, from memory):
        // per mole, 8.2387234983e-8 N × N_A = 4.96147e4 kJ mol⁻¹ nm⁻¹.
        let au = 8.238_723_498_3e-8 * 6.022_140_76e23 * 1e-3 * 1e-9;
        let got = force_unit_kj_mol_nm("Hartree/Bohr").unwrap();
        assert!((got - au).abs() <= 1e-9 * au, "{got} vs {au}");
        for u in ["kJ/mol", "K", "bar", "nm", "kJ/mol/ps", "eV", "count"] {
            assert_eq!(force_unit_kj_mol_nm(u), None, "{u}");
        }
    }
}
