//! The invented systems the scenarios simulate, and the physical constants that tie their
//! numbers together.
//!
//! Each system is described by intensive, per-atom properties, so that `--atoms N` scales it
//! consistently: energies and heat capacities are extensive, density and compressibility are
//! not, and fluctuations of extensive sums shrink as `1/sqrt(N)`. The names and the numbers
//! are invented; the orders of magnitude are those of molecular liquids near 300 K.

/// Boltzmann constant in kJ/(mol K): the SI 2019 exact k_B times N_A.
pub const BOLTZMANN_KJ_PER_MOL_K: f64 = 0.008_314_462_618_153_24;
/// Avogadro constant, 1/mol (SI 2019, exact).
pub const AVOGADRO: f64 = 6.022_140_76e23;
/// 1 bar·nm³ per particle, expressed in kJ/mol: 1e5 Pa · 1e-27 m³ · N_A / 1000.
pub const BAR_NM3_IN_KJ_PER_MOL: f64 = 1e5 * 1e-27 * AVOGADRO / 1000.0;
/// Reference temperature of the invented systems' properties, K.
pub const REFERENCE_TEMPERATURE: f64 = 300.0;

/// An invented molecular system: per-atom properties at [`REFERENCE_TEMPERATURE`] and 1 bar.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct System {
    /// Invented short name, shown in the generated logs' preambles.
    pub name: &'static str,
    /// What the invented system is, in a few words.
    pub description: &'static str,
    /// Atoms in the default box.
    pub atoms: u64,
    /// Holonomic constraints (rigid bonds) per atom: N_df = 3N − constraints − 3.
    pub constraints_per_atom: f64,
    /// Mean atomic mass, g/mol.
    pub mass_per_atom: f64,
    /// Equilibrium density, kg/m³.
    pub density: f64,
    /// Isothermal compressibility κ_T, 1/bar.
    pub compressibility: f64,
    /// Thermal pressure coefficient (∂P/∂T)_V = α/κ_T, bar/K: how the pressure of a box
    /// held at fixed volume follows its temperature.
    pub thermal_pressure: f64,
    /// Mean potential energy per atom, kJ/mol.
    pub potential_per_atom: f64,
    /// Configurational heat capacity per atom, d⟨U⟩/dT, kJ/(mol K). With the kinetic part
    /// (N_df k_B / 2) it makes the isochoric heat capacity C_V.
    pub potential_heat_capacity_per_atom: f64,
    /// Standard deviation of the instantaneous pressure in the default box, bar.
    pub pressure_sd: f64,
    /// Correlation times of the fluctuations, ps: kinetic temperature (thermostat
    /// coupling), potential energy, pressure, volume (barostat) and the conserved energy's
    /// integration error.
    pub correlation_ps: Correlations,
}

/// Correlation times (ps) of the fluctuating quantities; a row `dt` later the correlation is
/// `exp(-dt/τ)` (an AR(1) process sampled every `dt`).
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Correlations {
    pub temperature: f64,
    pub potential: f64,
    pub pressure: f64,
    pub volume: f64,
    pub conserved: f64,
}

const LIQUID_CORRELATIONS: Correlations = Correlations {
    temperature: 0.8,
    potential: 4.5,
    pressure: 0.8,
    volume: 10.0,
    conserved: 1.4,
};

/// A box of 1000 flexible three-site solvent molecules (3000 atoms, about 30 nm³), water-like
/// in density, compressibility and heat capacity. Flexible bonds: no constraints.
pub const SOLVENT_BOX: System = System {
    name: "SB-1k",
    description: "1000 flexible three-site solvent molecules, 3000 atoms",
    atoms: 3000,
    constraints_per_atom: 0.0,
    mass_per_atom: 18.015 / 3.0,
    density: 997.0,
    // Liquid water near 300 K, from memory: κ_T ≈ 4.5e-5 /bar, α ≈ 2.6e-4 /K.
    compressibility: 4.5e-5,
    thermal_pressure: 2.6e-4 / 4.5e-5,
    potential_per_atom: -41.5 / 3.0,
    // C_V of liquid water ≈ 74.5 J/(mol K) per molecule (from memory), less the kinetic
    // 9/2 k_B of three unconstrained atoms: 0.0371 kJ/(mol K) per molecule.
    potential_heat_capacity_per_atom: (0.0745 - 4.5 * BOLTZMANN_KJ_PER_MOL_K) / 3.0,
    pressure_sd: 180.0,
    correlation_ps: LIQUID_CORRELATIONS,
};

/// An invented 24-residue peptide, PX-24, in 7626 rigid water-like molecules: 23,244 atoms,
/// about 230 nm³, bonds to hydrogen and the solvent held rigid.
pub const PEPTIDE_IN_WATER: System = System {
    name: "PX-24",
    description: "a 24-residue peptide in 7626 rigid solvent molecules, 23,244 atoms",
    atoms: 23_244,
    // Three constraints per rigid solvent molecule and about 180 in the peptide.
    constraints_per_atom: (3.0 * 7626.0 + 180.0) / 23_244.0,
    mass_per_atom: (18.015 * 7626.0 + 2700.0) / 23_244.0,
    density: 1005.0,
    compressibility: 4.5e-5,
    thermal_pressure: 2.6e-4 / 4.5e-5,
    potential_per_atom: -13.0,
    // Rigid solvent: 6/2 k_B kinetic per molecule, the rest of ≈ 74.5 J/(mol K) is
    // configurational.
    potential_heat_capacity_per_atom: (0.0745 - 3.0 * BOLTZMANN_KJ_PER_MOL_K) / 3.0,
    pressure_sd: 65.0,
    correlation_ps: LIQUID_CORRELATIONS,
};

/// An invented ionic liquid, IX-4: 256 ion pairs of 33 atoms (8448 atoms, about 120 nm³),
/// viscous, so its box settles slowly; bonds to hydrogen rigid.
pub const IONIC_LIQUID: System = System {
    name: "IX-4",
    description: "an ionic liquid, 256 ion pairs, 8448 atoms",
    atoms: 8448,
    constraints_per_atom: 0.45,
    mass_per_atom: 284.0 / 33.0,
    density: 1180.0,
    compressibility: 4.8e-5,
    thermal_pressure: 6.0e-4 / 4.8e-5,
    potential_per_atom: -19.0,
    potential_heat_capacity_per_atom: 0.011,
    pressure_sd: 110.0,
    correlation_ps: Correlations {
        temperature: 0.8,
        potential: 12.0,
        pressure: 1.0,
        volume: 25.0,
        conserved: 1.4,
    },
};

impl System {
    /// Constraints of a box of `atoms` atoms.
    pub fn constraints(&self, atoms: u64) -> u64 {
        (self.constraints_per_atom * atoms as f64).round() as u64
    }

    /// N_df = 3N − constraints − 3 (centre-of-mass motion removed), at least 1.
    pub fn degrees_of_freedom(&self, atoms: u64) -> f64 {
        (3 * atoms)
            .saturating_sub(self.constraints(atoms))
            .saturating_sub(3)
            .max(1) as f64
    }

    /// Equilibrium volume of a box of `atoms` atoms, nm³.
    pub fn volume(&self, atoms: u64) -> f64 {
        self.mass(atoms) / AVOGADRO * 1e-3 / self.density * 1e27
    }

    /// Total mass of `atoms` atoms, g/mol.
    pub fn mass(&self, atoms: u64) -> f64 {
        self.mass_per_atom * atoms as f64
    }

    /// Density (kg/m³) of `atoms` atoms in `volume` nm³.
    pub fn density_at(&self, atoms: u64, volume: f64) -> f64 {
        self.mass(atoms) / AVOGADRO * 1e-3 / (volume * 1e-27)
    }

    /// The configurational heat capacity C_U = d⟨U⟩/dT of `atoms` atoms, kJ/(mol K).
    pub fn potential_heat_capacity(&self, atoms: u64) -> f64 {
        self.potential_heat_capacity_per_atom * atoms as f64
    }

    /// The kinetic heat capacity N_df k_B / 2, kJ/(mol K).
    pub fn kinetic_heat_capacity(&self, atoms: u64) -> f64 {
        0.5 * self.degrees_of_freedom(atoms) * BOLTZMANN_KJ_PER_MOL_K
    }

    /// Standard deviation of the pressure in a box of `atoms` atoms: the default box's,
    /// scaled as `1/sqrt(N)` (fluctuations of an intensive average over N particles).
    pub fn pressure_sd_for(&self, atoms: u64) -> f64 {
        self.pressure_sd * (self.atoms as f64 / atoms.max(1) as f64).sqrt()
    }
}
