//! Command-line definitions (clap derive). No logic, no I/O.
//!
//! Each subcommand's own options live in `commands/<name>.rs`; options shared by every
//! command that reads a log are [`InputArgs`] (flattened into each). To add a command: add a
//! variant to [`Command`] holding its Args struct and a branch in [`crate::commands::run`].

use std::path::PathBuf;

use clap::{Args, Parser, Subcommand, ValueEnum};

use crate::config::Ensemble;
use crate::mapping::MapRequest;

/// plateau: watch molecular-dynamics energy logs while they are written.
#[derive(Debug, Parser)]
#[command(name = "plateau", version, about, long_about = None)]
pub struct Cli {
    /// What to do.
    #[command(subcommand)]
    pub command: Command,
}

/// The subcommands.
#[derive(Debug, Subcommand)]
pub enum Command {
    /// Show the detected layout of a log: columns, roles, units, and a ready `--map` line.
    Columns(crate::commands::columns::ColumnsArgs),
    /// Read a finished log and summarise each column.
    Report(crate::commands::report::ReportArgs),
    /// Check logs for alerts; exit 0 healthy, 1 alerts at or above --fail-on, 2 errors.
    Check(crate::commands::check::CheckArgs),
    /// Write the mapped rows in canonical units (CSV, TSV or JSONL), live with `--follow`.
    Export(crate::commands::export::ExportArgs),
    /// Write the log of an invented MD scenario (for examples, rehearsals and benchmarks).
    Generate(crate::commands::generate::GenerateArgs),
    /// Write a finished log into a new file at a pace, to rehearse watching a live run.
    Replay(crate::commands::replay::ReplayArgs),
    /// Print a completion script for bash, zsh, fish, elvish or PowerShell.
    Completions(crate::commands::completions::CompletionsArgs),
    /// Print the manual page (roff), or write every page into a folder with --dir.
    Manpage(crate::commands::manpage::ManpageArgs),
}

/// How to describe a log; shared by every command that reads one.
///
/// Numbers take the canonical unit unless suffixed (`--timestep 2fs`).
#[derive(Debug, Clone, Default, Args)]
pub struct InputArgs {
    /// Map a role to a column: ROLE=COLUMN or ROLE=COLUMN:UNIT, COLUMN a header name or 1-based index
    /// (roles: step, time, temperature, pressure, potential, kinetic, total, conserved,
    /// volume, density). Repeatable.
    #[arg(long = "map", value_name = "ROLE=COLUMN[:UNIT]", value_parser = parse_map)]
    pub map: Vec<MapRequest>,
    /// Only lines starting with this word are data rows (the word is dropped).
    #[arg(long, value_name = "TAG")]
    pub row_tag: Option<String>,
    /// Comment prefix (repeatable; replaces the defaults # ! ; @ % //).
    #[arg(long = "comment", value_name = "PREFIX")]
    pub comment: Vec<String>,
    /// Field separator.
    #[arg(long, value_name = "SEP", value_parser = ["auto", "whitespace", "comma", "tab"])]
    pub delimiter: Option<String>,
    /// Integration time step, to derive time from step (e.g. 2fs; bare numbers are ps).
    #[arg(long, value_name = "TIME", value_parser = parse_timestep)]
    pub timestep: Option<f64>,
    /// Number of atoms (for degrees of freedom and per-atom drift).
    #[arg(long, value_name = "N")]
    pub atoms: Option<u64>,
    /// Number of constraints (degrees of freedom N_df = 3N - constraints - 3).
    #[arg(long, value_name = "N")]
    pub constraints: Option<u64>,
    /// Degrees of freedom, when known directly.
    #[arg(long, value_name = "N")]
    pub dof: Option<u64>,
    /// Ensemble of the run (otherwise inferred).
    #[arg(long, value_enum, ignore_case = true, value_name = "ENSEMBLE")]
    pub ensemble: Option<Ensemble>,
    /// Settings file (default: plateau.toml in the current folder, if present).
    #[arg(long, value_name = "FILE")]
    pub config: Option<PathBuf>,
    /// Use the named layout from the settings file.
    #[arg(long, value_name = "NAME")]
    pub layout: Option<String>,
}

/// Output format of `columns` and `report`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, ValueEnum)]
pub enum OutputFormat {
    /// Plain text for people.
    #[default]
    Text,
    /// JSON for programs.
    Json,
}

fn parse_map(text: &str) -> Result<MapRequest, String> {
    text.parse::<MapRequest>().map_err(|e| e.to_string())
}

fn parse_timestep(text: &str) -> Result<f64, String> {
    let ps = crate::units::parse_quantity(text, crate::units::Dimension::Time)
        .map_err(|e| e.to_string())?;
    if ps > 0.0 && ps.is_finite() {
        Ok(ps)
    } else {
        Err("the time step must be positive".to_string())
    }
}
