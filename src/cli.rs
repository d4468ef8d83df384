//! Command-line definitions (clap derive): every subcommand's options. No logic, no I/O.
//!
//! The dependency goes one way: `commands` reads these structs, `cli` knows nothing of
//! `commands`. Options shared by every command that reads a log are [`InputArgs`]
//! (flattened into each); targets and thresholds are [`AlertArgs`]. To add a command: add a
//! variant to [`Command`] holding its Args struct (defined here) and a branch in
//! [`crate::commands::run`].

use std::path::PathBuf;
use std::time::Duration;

use clap::{Args, Parser, Subcommand, ValueEnum};
use clap_complete::Shell;

use crate::alert::Severity;
use crate::config::Ensemble;
use crate::mapping::MapRequest;
use crate::scenario::{LogStyle, Scenario};

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
    Columns(ColumnsArgs),
    /// Read a finished log and summarise each column.
    Report(ReportArgs),
    /// Check logs for alerts; exit 0 healthy, 1 alerts at or above --fail-on, 2 errors.
    Check(CheckArgs),
    /// Write the mapped rows in canonical units (CSV, TSV or JSONL), live with `--follow`.
    Export(ExportArgs),
    /// A live dashboard of one run or many: trends, equilibration, alerts, ETA.
    Watch(WatchArgs),
    /// The dashboard on invented runs written live into a temporary folder: a first look.
    Demo(DemoArgs),
    /// Write the log of an invented MD scenario (for examples, rehearsals and benchmarks).
    Generate(GenerateArgs),
    /// Write a finished log into a new file at a pace, to rehearse watching a live run.
    Replay(ReplayArgs),
    /// Print a completion script for bash, zsh, fish, elvish or PowerShell.
    Completions(CompletionsArgs),
    /// Print the manual page (roff), or write every page into a folder with --dir.
    Manpage(ManpageArgs),
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
    /// (auto, whitespace, comma, tab, semicolon, pipe, colon, or any single character).
    #[arg(long, value_name = "SEP", value_parser = parse_delimiter)]
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

// ---- columns ----------------------------------------------------------------------------

/// Options of `plateau columns`.
#[derive(Debug, Clone, Args)]
pub struct ColumnsArgs {
    /// The log file (`-` for standard input).
    pub file: PathBuf,
    /// How the log is described.
    #[command(flatten)]
    pub input: InputArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = OutputFormat::Text)]
    pub format: OutputFormat,
}

// ---- report -----------------------------------------------------------------------------

/// Output format of `report`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, ValueEnum)]
pub enum ReportFormat {
    /// Plain text for people.
    #[default]
    Text,
    /// Markdown for a lab notebook.
    Markdown,
    /// JSON for programs (documented, versioned schema).
    Json,
}

/// Options of `plateau report`.
#[derive(Debug, Clone, Args)]
pub struct ReportArgs {
    /// The log file (`-` for standard input).
    pub file: PathBuf,
    /// More log files, with `--chain`: the later stages of the same system, in order.
    #[arg(value_name = "MORE")]
    pub more_files: Vec<PathBuf>,
    /// Stages: chains of logs and minimization tolerances.
    #[command(flatten)]
    pub stages: StageArgs,
    /// How the log is described.
    #[command(flatten)]
    pub input: InputArgs,
    /// Targets and thresholds.
    #[command(flatten)]
    pub alerts: AlertArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = ReportFormat::Text)]
    pub format: ReportFormat,
    /// Write one SVG plot per quantity into this folder (created if missing).
    #[arg(long, value_name = "DIR")]
    pub svg: Option<PathBuf>,
    /// Print the time spent reading and on the statistics to standard error.
    #[arg(long)]
    pub timings: bool,
}

/// Options about the stages of a run (minimization, heating, equilibration, production).
#[derive(Debug, Clone, Default, Args)]
pub struct StageArgs {
    /// Read the files as consecutive stages of one system, in the order given (time may
    /// continue from file to file or restart in each). Following (`check --follow`,
    /// `watch`), the earlier files are read as they are, the last existing one is
    /// followed, and a later one that does not exist yet is waited for: following moves on
    /// to it once it appears.
    #[arg(long)]
    pub chain: bool,
    /// A minimization has converged once its force column stays at or below this value, in
    /// kJ/mol/nm (default 1000), converted to the column's unit when its header states an
    /// energy per length (kcal/mol/Å, eV/Å...); a column with no stated unit is compared
    /// with the number as it is.
    #[arg(long, value_name = "FORCE")]
    pub min_force_tolerance: Option<f64>,
    /// Without a force column, a minimization has converged once its energy changes by at
    /// most this fraction of itself per step (default 1e-6).
    #[arg(long, value_name = "FRACTION")]
    pub min_energy_tolerance: Option<f64>,
}

// ---- check ------------------------------------------------------------------------------

/// Options that set targets and alert thresholds; shared by `report` and `check`.
#[derive(Debug, Clone, Default, Args)]
pub struct AlertArgs {
    /// Target temperature: a value (`300K`) or a schedule (`0ps=10K,50ps=300K`, linear
    /// between points, held after the last).
    #[arg(long, value_name = "VALUE|SCHEDULE")]
    pub target_temperature: Option<String>,
    /// Target pressure: a value (`1atm`, bare numbers are bar) or a schedule.
    #[arg(long, value_name = "VALUE|SCHEDULE")]
    pub target_pressure: Option<String>,
    /// Allowed offset of the mean temperature from its target before the 3-SE margin
    /// (default 5 K).
    #[arg(long, value_name = "KELVIN")]
    pub temperature_tolerance: Option<String>,
    /// Allowed offset of the mean pressure from its target before the 3-SE margin
    /// (default 50 bar).
    #[arg(long, value_name = "PRESSURE")]
    pub pressure_tolerance: Option<String>,
    /// Stalled output after this long without a row (default 5x the median gap, at least
    /// 1 min), e.g. `10min`.
    #[arg(long, value_name = "DURATION")]
    pub stall_after: Option<String>,
    /// Set an alert threshold, KEY=VALUE (keys as in the `[alerts]` table of plateau.toml,
    /// e.g. `drift-warning=0.02`). Repeatable.
    #[arg(long = "threshold", value_name = "KEY=VALUE")]
    pub threshold: Vec<String>,
    /// The run ends at this simulated time or step (`10ns`, `500000steps`): ETA, and with
    /// `check --follow` the end of watching.
    #[arg(long, value_name = "TIME|STEPS")]
    pub until: Option<String>,
    /// Precision ETA: COLUMN=SEM, wall time until the standard error of COLUMN's mean
    /// reaches SEM (canonical unit of the column).
    #[arg(long, value_name = "COLUMN=SEM")]
    pub target_sem: Option<String>,
}

/// Severity level at which `check` fails.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, ValueEnum)]
pub enum FailOn {
    /// Warnings and critical alerts fail (the default).
    #[default]
    Warning,
    /// Only critical alerts fail.
    Critical,
}

impl FailOn {
    /// The lowest severity that fails.
    pub fn severity(self) -> Severity {
        match self {
            FailOn::Warning => Severity::Warning,
            FailOn::Critical => Severity::Critical,
        }
    }
}

/// Options of `plateau check`.
#[derive(Debug, Clone, Args)]
pub struct CheckArgs {
    /// Log files (`-` for standard input). With `--follow`, runs may come from
    /// `--source-command`, `--jobs` or `[[run]]` in plateau.toml instead.
    pub files: Vec<PathBuf>,
    /// How the logs are described.
    #[command(flatten)]
    pub input: InputArgs,
    /// Runs read from commands and batch jobs (with `--follow`).
    #[command(flatten)]
    pub sources: SourceArgs,
    /// Targets and thresholds.
    #[command(flatten)]
    pub alerts: AlertArgs,
    /// Stages: chains of logs and minimization tolerances.
    #[command(flatten)]
    pub stages: StageArgs,
    /// Lowest severity that makes the exit code 1.
    #[arg(long, value_enum, default_value_t = FailOn::Warning)]
    pub fail_on: FailOn,
    /// Keep watching the files and print alerts as they happen; ends at `--until`, when
    /// the `--pid` process exits, at the end of standard input, or on Ctrl-C (SIGINT),
    /// SIGTERM or SIGHUP, each time with the summary and the exit code of what was seen.
    #[arg(long)]
    pub follow: bool,
    /// With `--follow`: rows kept at full resolution per run (default 10000, at least
    /// 2000). Older rows are folded into block summaries so memory stays bounded on endless
    /// runs; the statistics that become approximate are then named.
    #[arg(long, value_name = "N")]
    pub keep_rows: Option<usize>,
    /// With `--follow`: stop when this process exits.
    #[arg(long, value_name = "PID")]
    pub pid: Option<u32>,
    /// Run this command for each alert at or above `--fail-on`, with the alert in
    /// PLATEAU_ALERT_* environment variables (words split like a simple shell; no shell
    /// unless you write `sh -c`). At most 10 runs a minute.
    #[arg(long, value_name = "CMD")]
    pub on_alert: Option<String>,
    /// Append every alert to this file as one JSON line.
    #[arg(long, value_name = "FILE")]
    pub alert_log: Option<PathBuf>,
    /// Ring the terminal bell on alerts at or above `--fail-on`.
    #[arg(long)]
    pub bell: bool,
}

// ---- export -----------------------------------------------------------------------------

/// Output format of `plateau export`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, ValueEnum)]
pub enum ExportFormat {
    /// Comma-separated values with a header line per segment.
    #[default]
    Csv,
    /// Tab-separated values with a header line per segment.
    Tsv,
    /// One JSON object per row.
    Jsonl,
}

/// Options of `plateau export`.
#[derive(Debug, Clone, Args)]
pub struct ExportArgs {
    /// The log file (`-` for standard input).
    pub file: PathBuf,
    /// How the log is described.
    #[command(flatten)]
    pub input: InputArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = ExportFormat::Csv)]
    pub format: ExportFormat,
    /// Keep following the file as it is written (through truncation, rotation, deletion).
    #[arg(long)]
    pub follow: bool,
    /// Check the file by polling instead of file events (network filesystems: NFS, Lustre,
    /// GPFS).
    #[arg(long)]
    pub poll: bool,
    /// Polling period (e.g. 500ms, 2s).
    #[arg(long, value_name = "DURATION", default_value = "1s", value_parser = parse_interval)]
    pub poll_interval: Duration,
}

fn parse_interval(text: &str) -> Result<Duration, String> {
    let d = crate::units::parse_duration(text).map_err(|e| e.to_string())?;
    if d.is_zero() {
        Err("the polling period must be positive".to_string())
    } else {
        Ok(d)
    }
}

fn parse_jobs_every(text: &str) -> Result<Duration, String> {
    let d = crate::units::parse_duration(text).map_err(|e| e.to_string())?;
    if d.is_zero() {
        Err("the period between questions to the scheduler must be positive".to_string())
    } else {
        Ok(d)
    }
}

// ---- watch ------------------------------------------------------------------------------

/// Options of `plateau watch`.
#[derive(Debug, Clone, Args)]
pub struct WatchArgs {
    /// Log files, glob patterns in quotes (`'runs/*/md.log'`: files that appear later are
    /// added) or `-` for standard input. Runs may also come from `--source-command`,
    /// `--jobs` or `[[run]]` in plateau.toml.
    #[arg(value_name = "FILE|GLOB|-")]
    pub files: Vec<PathBuf>,
    /// How the logs are described.
    #[command(flatten)]
    pub input: InputArgs,
    /// Runs read from commands and batch jobs.
    #[command(flatten)]
    pub sources: SourceArgs,
    /// Targets and thresholds.
    #[command(flatten)]
    pub alerts: AlertArgs,
    /// Stages: chains of logs and minimization tolerances.
    #[command(flatten)]
    pub stages: StageArgs,
    /// Check the files by polling instead of file events (network filesystems: NFS,
    /// Lustre, GPFS).
    #[arg(long)]
    pub poll: bool,
    /// Polling period (e.g. 500ms, 2s).
    #[arg(long, value_name = "DURATION", default_value = "1s", value_parser = parse_interval)]
    pub poll_interval: Duration,
    /// Rows kept at full resolution per run (default 10000, at least 2000); older rows
    /// are folded into block summaries so memory stays bounded on endless runs.
    #[arg(long, value_name = "N")]
    pub keep_rows: Option<usize>,
    /// Folder the `w` key writes run reports into (default: the current folder).
    #[arg(long, value_name = "DIR")]
    pub report_dir: Option<PathBuf>,
}

// ---- demo -------------------------------------------------------------------------------

/// Arguments of `plateau demo`.
#[derive(Debug, Clone, Args)]
#[command(
    after_help = "The runs are invented and written into a temporary folder that is removed when \
the dashboard ends (q, an error or a signal). Without --scenario: healthy, settling, heating, \
drifting, blowing up and stalling runs at once."
)]
pub struct DemoArgs {
    /// Show one scenario alone instead of the standard mix.
    #[arg(long, value_name = "NAME", value_parser = scenario_values())]
    pub scenario: Option<Scenario>,
}

/// The scenario names with what each shows, for help, completions and errors.
fn scenario_values() -> impl clap::builder::TypedValueParser<Value = Scenario> {
    use clap::builder::TypedValueParser as _;
    let values: Vec<clap::builder::PossibleValue> = Scenario::ALL
        .iter()
        .map(|s| clap::builder::PossibleValue::new(s.name()).help(s.description()))
        .collect();
    clap::builder::PossibleValuesParser::new(values).try_map(|name: String| parse_scenario(&name))
}

// ---- runs from commands and batch jobs --------------------------------------------------

/// Runs whose rows come from a command's output or from the user's batch jobs; shared by
/// `watch` and `check --follow`.
#[derive(Debug, Clone, Default, Args)]
pub struct SourceArgs {
    /// Follow a command's standard output as a run, e.g.
    /// `--source-command 'ssh node7 tail -c +{start-byte} -F /scratch/md.log'`. One
    /// argument, split into words like a simple shell (quotes and backslashes only; nothing
    /// expanded; no shell unless you write `sh -c`). Restarted with back-off when it exits;
    /// `{start-byte}` in it resumes where reading stopped. Repeatable.
    #[arg(long = "source-command", value_name = "'CMD ARGS'")]
    pub source_command: Vec<String>,
    /// Follow the logs of your batch jobs (Slurm): jobs are added as they start and
    /// finished when they end.
    #[arg(long)]
    pub jobs: bool,
    /// With `--jobs`: a job's logs, as a glob relative to its working directory (or
    /// absolute); `{job}` and `{name}` stand for its id and name. Default `*.log`.
    #[arg(long, value_name = "PATTERN", requires = "jobs")]
    pub log_glob: Option<String>,
    /// With `--jobs`: logs under this folder are read on the job's node through the
    /// scheduler (node-local scratch), even if a folder of that name is visible here.
    /// Repeatable.
    #[arg(long = "remote-dir", value_name = "DIR", requires = "jobs")]
    pub remote_dir: Vec<PathBuf>,
    /// With `--jobs`: how often the scheduler is asked for your jobs (default 5s).
    #[arg(long, value_name = "DURATION", requires = "jobs", value_parser = parse_jobs_every)]
    pub jobs_every: Option<Duration>,
}

// ---- generate ---------------------------------------------------------------------------

/// Arguments of `plateau generate`.
#[derive(Debug, Args)]
pub struct GenerateArgs {
    /// Scenario: equilibration, density-settling, heating, staged-heating, production,
    /// nve-drift, blow-up, stalled, thermostat-failure.
    #[arg(value_parser = parse_scenario, required_unless_present = "stages")]
    pub scenario: Option<Scenario>,
    /// Instead of a scenario: write an invented five-stage preparation (minimization,
    /// heating, constant volume, constant pressure, production) into this folder, as one
    /// log (prep.log) and as a chain of five (min.log heat.log nvt.log npt.log prod.log).
    #[arg(long, value_name = "DIR", conflicts_with = "scenario")]
    pub stages: Option<PathBuf>,
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

// ---- replay -----------------------------------------------------------------------------

/// Arguments of `plateau replay`.
#[derive(Debug, Clone, Args)]
pub struct ReplayArgs {
    /// The finished log to replay.
    pub source: PathBuf,
    /// The file to write (must not exist yet), or `-` for standard output.
    pub destination: PathBuf,
    /// Data rows written per second.
    #[arg(long, value_name = "R", default_value_t = 10.0, value_parser = parse_rate)]
    pub rows_per_second: f64,
    /// How the log is described (to tell its data rows from the other lines).
    #[command(flatten)]
    pub input: InputArgs,
}

pub(crate) fn parse_rate(text: &str) -> Result<f64, String> {
    match text.trim().parse::<f64>() {
        Ok(r) if r.is_finite() && r > 0.0 => Ok(r),
        _ => Err(format!(
            "'{text}' is not a positive number of rows per second"
        )),
    }
}

// ---- completions and manual page --------------------------------------------------------

/// Arguments of `plateau completions`.
#[derive(Debug, Clone, Args)]
#[command(after_help = "Install, for example:
  bash: plateau completions bash > ~/.local/share/bash-completion/completions/plateau
  zsh:  plateau completions zsh > ~/.zfunc/_plateau   (with ~/.zfunc in $fpath)
  fish: plateau completions fish > ~/.config/fish/completions/plateau.fish")]
pub struct CompletionsArgs {
    /// The shell to complete in.
    #[arg(value_enum)]
    pub shell: Shell,
}

/// Arguments of `plateau manpage`.
#[derive(Debug, Clone, Args)]
#[command(
    after_help = "Read it with `plateau manpage | man -l -`, or install every page with
`plateau manpage --dir ~/.local/share/man/man1`."
)]
pub struct ManpageArgs {
    /// Write plateau.1 and one page per subcommand into this folder (created if missing)
    /// instead of plateau.1 to standard output.
    #[arg(long, value_name = "DIR")]
    pub dir: Option<PathBuf>,
}

// ---- shared value parsers ---------------------------------------------------------------

/// Output format of `columns` and `report`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, ValueEnum)]
pub enum OutputFormat {
    /// Plain text for people.
    #[default]
    Text,
    /// JSON for programs.
    Json,
}

fn parse_delimiter(text: &str) -> Result<String, String> {
    crate::parse::DelimiterChoice::parse(text).map(|_| text.to_string())
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
