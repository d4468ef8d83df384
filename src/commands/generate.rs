//! `plateau generate`: writes an invented scenario's log, for examples, rehearsals and
//! benchmarks.

use std::fs::File;
use std::io::{self, BufWriter, Write};
use std::path::PathBuf;

use clap::Args;

use crate::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

/// Arguments of `plateau generate`.
#[derive(Debug, Args)]
pub struct GenerateArgs {
    /// Scenario: equilibration, density-settling, heating, staged-heating, production,
    /// nve-drift, blow-up, stalled, thermostat-failure.
    #[arg(value_parser = parse_scenario)]
    pub scenario: Scenario,
    /// Layout of the written log: whitespace, csv, tagged, tab, fixed-width.
    #[arg(long, default_value = "whitespace", value_parser = parse_style)]
    pub style: LogStyle,
    /// Number of data rows.
    #[arg(long, default_value_t = 2000)]
    pub rows: u64,
    /// Seed of the random series (same seed, same log).
    #[arg(long, default_value_t = 20_261_201)]
    pub seed: u64,
    /// Number of atoms of the invented system (default: the scenario's own system); its
    /// energies, volume and fluctuations scale with it.
    #[arg(long)]
    pub atoms: Option<u64>,
    /// Where to write the log (standard output when absent). An existing file is replaced.
    #[arg(long, short)]
    pub output: Option<PathBuf>,
}

fn parse_scenario(name: &str) -> Result<Scenario, String> {
    Scenario::from_name(name).ok_or_else(|| {
        format!(
            "unknown scenario '{name}'; choose one of {}",
            Scenario::names()
        )
    })
}

fn parse_style(name: &str) -> Result<LogStyle, String> {
    LogStyle::from_name(name).ok_or_else(|| {
        let names: Vec<&str> = LogStyle::ALL.iter().map(|s| s.name()).collect();
        format!("unknown style '{name}'; choose one of {}", names.join(", "))
    })
}

/// Writes the requested log.
pub fn run(args: &GenerateArgs) -> io::Result<()> {
    let mut spec = ScenarioSpec::new(args.scenario, args.style, args.rows);
    spec.seed = args.seed;
    if let Some(atoms) = args.atoms {
        spec.atoms = atoms;
    }
    match &args.output {
        Some(path) => {
            let mut out = BufWriter::with_capacity(1 << 20, File::create(path)?);
            write_log(&spec, &mut out)?;
            out.flush()
        }
        None => {
            let stdout = io::stdout();
            let mut out = BufWriter::with_capacity(1 << 20, stdout.lock());
            write_log(&spec, &mut out)?;
            out.flush()
        }
    }
}
