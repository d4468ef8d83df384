//! The finished example logs under `demo-logs/`: which scenario each holds, in which layout,
//! the command to look at it, and what plateau says about it. `examples/make_demo_logs.rs`
//! writes the logs and their `README.md` from this list, and the tests check both the files
//! and the stories against it.

use crate::scenario::{settled_after_ps, Ensemble, LogStyle, Scenario, ScenarioSpec};

/// One example log.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct ExampleLog {
    pub scenario: Scenario,
    pub style: LogStyle,
    pub rows: u64,
}

/// The example logs, each in a layout that shows column mapping at work (whitespace, CSV,
/// tab-separated in other units, tagged rows in a chatty log, fixed-width with `D`
/// exponents).
pub const EXAMPLE_LOGS: [ExampleLog; 9] = [
    ExampleLog {
        scenario: Scenario::Equilibration,
        style: LogStyle::Whitespace,
        rows: 2000,
    },
    ExampleLog {
        scenario: Scenario::DensitySettling,
        style: LogStyle::Whitespace,
        rows: 1500,
    },
    ExampleLog {
        scenario: Scenario::Heating,
        style: LogStyle::Csv,
        rows: 1500,
    },
    ExampleLog {
        scenario: Scenario::StagedHeating,
        style: LogStyle::Tagged,
        rows: 800,
    },
    ExampleLog {
        scenario: Scenario::Production,
        style: LogStyle::Whitespace,
        rows: 5000,
    },
    ExampleLog {
        scenario: Scenario::NveDrift,
        style: LogStyle::Tab,
        rows: 2000,
    },
    ExampleLog {
        scenario: Scenario::BlowUp,
        style: LogStyle::Fortran,
        rows: 1200,
    },
    ExampleLog {
        scenario: Scenario::Stalled,
        style: LogStyle::Whitespace,
        rows: 800,
    },
    ExampleLog {
        scenario: Scenario::ThermostatFailure,
        style: LogStyle::Whitespace,
        rows: 2000,
    },
];

/// What a user knows about a scenario's run and tells plateau: the system's size (for the
/// degrees of freedom) and the targets of its thermostat and barostat.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RunFacts {
    pub atoms: u64,
    /// Constrained bonds, when there are any.
    pub constraints: Option<u64>,
    /// `--target-temperature` (a value or a schedule); none at constant energy.
    pub target_temperature: Option<String>,
    /// `--target-pressure`; only at constant pressure.
    pub target_pressure: Option<String>,
}

impl RunFacts {
    /// The facts of the run `spec` generates.
    pub fn of(spec: &ScenarioSpec) -> RunFacts {
        let story = spec.scenario.story();
        RunFacts {
            atoms: spec.atoms,
            constraints: Some(spec.constraints()).filter(|&c| c > 0),
            target_temperature: (story.ensemble != Ensemble::Nve)
                .then(|| spec.scenario.target_temperature()),
            target_pressure: (story.ensemble == Ensemble::Npt)
                .then(|| format!("{}bar", story.pressure)),
        }
    }

    /// The facts as command-line options.
    pub fn options(&self) -> Vec<String> {
        let mut options = vec!["--atoms".to_string(), self.atoms.to_string()];
        let named = [
            ("--constraints", self.constraints.map(|c| c.to_string())),
            ("--target-temperature", self.target_temperature.clone()),
            ("--target-pressure", self.target_pressure.clone()),
        ];
        for (name, value) in named {
            if let Some(value) = value {
                options.push(name.to_string());
                options.push(value);
            }
        }
        options
    }
}

/// The folder of the example logs, relative to the repository's root.
pub const FOLDER: &str = "demo-logs";

impl ExampleLog {
    /// The file name inside [`FOLDER`].
    pub fn file_name(&self) -> String {
        format!("{}.{}", self.scenario.name(), self.style.extension())
    }

    /// What to generate.
    pub fn spec(&self) -> ScenarioSpec {
        ScenarioSpec::new(self.scenario, self.style, self.rows)
    }

    /// What a user tells plateau about the run: its size (for the degrees of freedom) and
    /// the targets of its thermostat and barostat.
    pub fn options(&self) -> Vec<String> {
        RunFacts::of(&self.spec()).options()
    }

    /// The command that shows the story, run from the repository's root.
    pub fn command(&self) -> String {
        format!(
            "plateau report {FOLDER}/{} {}",
            self.file_name(),
            self.options().join(" ")
        )
    }

    /// Where the generator put the end of equilibration, ps from the start.
    pub fn settled_after_ps(&self) -> Option<f64> {
        settled_after_ps(&self.spec())
    }

    /// What the log shows and what plateau says about it.
    pub fn story(&self) -> String {
        let settled = self
            .settled_after_ps()
            .map_or_else(String::new, |t| format!("{t:.0} ps"));
        match self.scenario {
            Scenario::Equilibration => format!(
                "A box started with its potential energy 8 % too high and its volume 4 % too \
                 large relaxes under the thermostat and barostat. plateau finds the onset near \
                 {settled}, where the generator put it, calls the run steady and raises nothing; \
                 the kinetic-temperature fluctuation matches the canonical size for its 8997 \
                 degrees of freedom."
            ),
            Scenario::DensitySettling => format!(
                "A viscous liquid packed 9 % too loosely: the pressure starts near −1900 bar and \
                 the density climbs to 1180 kg/m³ over a few hundred ps. plateau finds the onset \
                 near {settled}, gives the density's production mean with its error bar, and \
                 calls the run steady."
            ),
            Scenario::Heating => format!(
                "Heating from 10 K to 300 K over 100 ps at fixed volume, then a hold. plateau \
                 lists two stages: the heating ramp, ending near {settled} where the generator \
                 ends it, and the hold, judged alone. With the thermostat's schedule given, no \
                 off-target alert is raised along the ramp and the hold is steady; its onset \
                 comes some tens of ps after the ramp, while the potential energy still relaxes. \
                 Give a wrong schedule (`--target-temperature 0ps=10K,100ps=350K`) and the \
                 temperature is reported off target."
            ),
            Scenario::StagedHeating => format!(
                "Heating along a schedule with a hold at 150 K, in a chatty log whose data rows \
                 start with the word DATA (the row tag is guessed). The onset falls near \
                 {settled}, after the last ramp; the run is steady and nothing is raised."
            ),
            Scenario::Production => "A long production run continued from a checkpoint \
                 (steps from 2,500,000, a row every 10 ps for 50 ns): steady from its first \
                 rows, thousands of effective samples, production means with small error bars. \
                 The conserved energy drifts by 0.5 kJ/mol per ns: plateau measures the slope \
                 with its interval (significant, and thousands of times below the warning level \
                 per degree of freedom) and raises nothing."
                .to_string(),
            Scenario::NveDrift => "A constant-energy run whose conserved energy drifts upwards \
                 by 400 kJ/mol per ns (the time step is too long for its flexible bonds), in \
                 kcal/mol, atm, Å³ and g/cm³ with the time in fs. plateau converts the units, \
                 infers NVE, reports the drift with its confidence interval per ns, per atom and \
                 in k_B·T per degree of freedom, warns, and calls the run drifting; the \
                 temperature rises with the energy, so it never settles."
                .to_string(),
            Scenario::BlowUp => "A steady run turns unstable at 840 ps: energy pours into a \
                 few bad contacts and grows exponentially until the fixed-width fields \
                 overflow. plateau raises a critical runaway alert tens of rows before the \
                 first non-finite value, and calls the run unstable."
                .to_string(),
            Scenario::Stalled => "A steady run whose writer stopped in the middle of a row. \
                 Read whole, plateau analyses it and says that the last line was cut in half \
                 and ignored. Followed live, the run is called stalled once no row arrived for \
                 the stall limit: replay it into a new file and follow the copy (see below)."
                .to_string(),
            Scenario::ThermostatFailure => "A thermostat that holds the temperature too tightly: \
                 the kinetic temperature fluctuates five times less than the canonical \
                 sqrt(2/N_df). With the atom count given, plateau flags the fluctuation size \
                 with the N_df it used."
                .to_string(),
        }
    }
}

/// The text of `demo-logs/README.md`.
pub fn readme() -> String {
    let mut text = String::from(
        "# Example logs\n\
         \n\
         Every log here is **invented**: written by plateau's own scenario generator \
         (`src/scenario/`), not by any simulation program, for systems that do not exist. \
         Their numbers follow statistical mechanics (canonical temperature fluctuations, \
         heat capacities, compressibilities of molecular liquids near 300 K), so plateau's \
         statistics have something realistic to work on. Regenerate them with \
         `cargo run --example make_demo_logs`; this file is written by the same command.\n\
         \n\
         Run the commands from the repository's root (with `cargo run --release --` in place \
         of `plateau` if it is not installed). `--atoms` and `--constraints` give the degrees \
         of freedom for the fluctuation test; the targets are the thermostat's and barostat's.\n",
    );
    for log in EXAMPLE_LOGS {
        let spec = log.spec();
        let system = spec.system();
        text.push_str(&format!(
            "\n## {}\n\n{}\n\nSystem {} (invented): {}; {} rows, one every {} ps.\n\n```sh\n{}\n```\n",
            log.file_name(),
            log.story(),
            system.name,
            system.description,
            log.rows,
            spec.row_interval_ps(),
            log.command()
        ));
        if log.scenario == Scenario::Stalled {
            text.push_str(&format!(
                "\nTo see it stall, replay it into a new file at 50 rows a second and follow \
                 the copy; a few seconds after the last row it is reported stalled:\n\n\
                 ```sh\n\
                 plateau replay {FOLDER}/{} /tmp/stalled-copy.log --rows-per-second 50 &\n\
                 plateau check --follow /tmp/stalled-copy.log --stall-after 5s\n\
                 ```\n",
                log.file_name()
            ));
        }
    }
    text
}
