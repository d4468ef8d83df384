//! `plateau check FILE...`: alerts for job scripts, with an exit code.
//!
//! One line per alert on standard output (`FILE: severity kind [column] line N row N t=...:
//! message`); a status line per file on standard error. Exit codes (one policy, here):
//! 0 healthy, 1 an alert at or above `--fail-on` (default warning), 2 unreadable input or
//! bad arguments; 2 wins over 1 wins over 0.

pub mod follow;
pub mod hook;

use std::io::Write;
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

use clap::{Args, ValueEnum};

use crate::alert::{Alert, Severity, Target, Thresholds};
use crate::analysis::{AnalysisOptions, Analyzer};
use crate::cli::InputArgs;
use crate::config::Settings;
use crate::error::Error;
use crate::units::{self, Dimension, Schedule, TimeSpec};

use hook::{AlertHook, AlertLog, HookOutcome};

/// Exit code: healthy.
pub const EXIT_HEALTHY: u8 = 0;
/// Exit code: an alert at or above `--fail-on`.
pub const EXIT_ALERTS: u8 = 1;
/// Exit code: unreadable input or bad arguments.
pub const EXIT_ERROR: u8 = 2;

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
    /// Log files (`-` for standard input).
    #[arg(required = true)]
    pub files: Vec<PathBuf>,
    /// How the logs are described.
    #[command(flatten)]
    pub input: InputArgs,
    /// Targets and thresholds.
    #[command(flatten)]
    pub alerts: AlertArgs,
    /// Lowest severity that makes the exit code 1.
    #[arg(long, value_enum, default_value_t = FailOn::Warning)]
    pub fail_on: FailOn,
    /// Keep watching the files and print alerts as they happen; ends at `--until`, when
    /// the `--pid` process exits, or at the end of standard input.
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

fn usage(option: &str, e: impl std::fmt::Display) -> Error {
    Error::Usage(format!("{option}: {e}"))
}

fn schedule_target(
    text: &str,
    dim: Dimension,
    timestep: Option<f64>,
    option: &str,
) -> Result<Target, Error> {
    let s = Schedule::parse(text, dim, timestep).map_err(|e| usage(option, e))?;
    Target::schedule(s.points().to_vec())
        .ok_or_else(|| usage(option, "needs finite TIME=VALUE points"))
}

/// A temperature difference: a bare number or one with a `K` suffix (a Celsius offset
/// would be wrong for a difference).
fn temperature_difference(text: &str) -> Result<f64, Error> {
    let t = text.trim();
    let number = t.strip_suffix('K').unwrap_or(t).trim();
    match number.parse::<f64>() {
        Ok(v) if v.is_finite() && v >= 0.0 => Ok(v),
        _ => Err(usage(
            "--temperature-tolerance",
            format!("'{text}' is not a temperature difference in K"),
        )),
    }
}

/// `--until` as a time or a step count.
pub fn parse_until(text: &str) -> Result<TimeSpec, Error> {
    units::parse_time(text).map_err(|e| usage("--until", e))
}

/// Resolves thresholds (settings file, then `--threshold`, then the dedicated options) and
/// targets into analysis options.
pub fn analysis_options(settings: &Settings, args: &AlertArgs) -> Result<AnalysisOptions, Error> {
    let mut t: Thresholds = settings.alerts.clone();
    for kv in &args.threshold {
        let (k, v) = kv
            .split_once('=')
            .ok_or_else(|| usage("--threshold", format!("'{kv}' is not KEY=VALUE")))?;
        let value: f64 = v
            .trim()
            .parse()
            .map_err(|_| usage("--threshold", format!("'{v}' is not a number")))?;
        t.set(k, value).map_err(|e| usage("--threshold", e))?;
    }
    if let Some(x) = &args.temperature_tolerance {
        t.temperature_tolerance = temperature_difference(x)?;
    }
    if let Some(x) = &args.pressure_tolerance {
        let v = units::parse_quantity(x, Dimension::Pressure)
            .map_err(|e| usage("--pressure-tolerance", e))?;
        if !(v.is_finite() && v >= 0.0) {
            return Err(usage("--pressure-tolerance", "must be zero or more"));
        }
        t.pressure_tolerance = v;
    }
    if let Some(x) = &args.stall_after {
        let d = units::parse_duration(x).map_err(|e| usage("--stall-after", e))?;
        if d.is_zero() {
            return Err(usage("--stall-after", "must be longer than zero"));
        }
        t.stall_after_seconds = Some(d.as_secs_f64());
    }
    t.validate().map_err(|e| usage("--threshold", e))?;
    let ts = settings.timestep_ps;
    let target_temperature = args
        .target_temperature
        .as_deref()
        .map(|x| schedule_target(x, Dimension::Temperature, ts, "--target-temperature"))
        .transpose()?;
    let target_pressure = args
        .target_pressure
        .as_deref()
        .map(|x| schedule_target(x, Dimension::Pressure, ts, "--target-pressure"))
        .transpose()?;
    let until_ps = match &args.until {
        Some(x) => parse_until(x)?.to_ps(ts),
        None => None,
    };
    let target_sem = match &args.target_sem {
        Some(x) => {
            let (c, v) = x
                .split_once('=')
                .ok_or_else(|| usage("--target-sem", format!("'{x}' is not COLUMN=SEM")))?;
            let v: f64 = v
                .trim()
                .parse()
                .ok()
                .filter(|v: &f64| v.is_finite() && *v > 0.0)
                .ok_or_else(|| usage("--target-sem", format!("'{v}' is not a positive number")))?;
            Some((c.trim().to_string(), v))
        }
        None => None,
    };
    Ok(AnalysisOptions {
        atoms: settings.atoms,
        constraints: settings.constraints,
        dof: settings.dof,
        ensemble: settings.ensemble,
        target_temperature,
        target_pressure,
        thresholds: t,
        until_ps,
        target_sem,
    })
}

/// Where alerts go besides standard output.
struct Sinks {
    hook: Option<AlertHook>,
    log: Option<AlertLog>,
    bell: bool,
    fail_at: Severity,
}

impl Sinks {
    fn new(args: &CheckArgs) -> Result<Sinks, Error> {
        let hook = args
            .on_alert
            .as_deref()
            .map(AlertHook::new)
            .transpose()
            .map_err(Error::Usage)?;
        let log = match &args.alert_log {
            Some(p) => Some(AlertLog::open(p).map_err(|source| Error::Read {
                path: p.clone(),
                source,
            })?),
            None => None,
        };
        Ok(Sinks {
            hook,
            log,
            bell: args.bell,
            fail_at: args.fail_on.severity(),
        })
    }

    fn emit(&mut self, out: &mut dyn Write, file: &str, alert: &Alert) -> Result<(), Error> {
        super::emit(out, &format!("{file}: {}\n", alert.one_line()))?;
        out.flush().map_err(Error::Output)?;
        if let Some(log) = &mut self.log {
            if let Err(e) = log.append(alert, file) {
                eprintln!("plateau: cannot append to {}: {e}", log.path().display());
            }
        }
        if self.bell && alert.severity >= self.fail_at {
            eprint!("\x07");
        }
        if let Some(hook) = self
            .hook
            .as_mut()
            .filter(|_| alert.severity >= self.fail_at)
        {
            match hook.fire(alert, file, Instant::now()) {
                HookOutcome::Started | HookOutcome::RateLimited => {}
                HookOutcome::Failed(e) => {
                    eprintln!("plateau: --on-alert command could not be started: {e}");
                }
            }
            for f in hook.reap() {
                eprintln!("plateau: {f}");
            }
        }
        Ok(())
    }

    fn finish(&mut self) {
        if let Some(hook) = &mut self.hook {
            for f in hook.finish(Duration::from_secs(10)) {
                eprintln!("plateau: {f}");
            }
            if hook.skipped > 0 {
                eprintln!(
                    "plateau: --on-alert was not run for {} alerts (at most {} runs per {} s)",
                    hook.skipped,
                    hook::HOOK_MAX_RUNS,
                    hook::HOOK_WINDOW.as_secs()
                );
            }
        }
    }
}

/// Combines exit codes: 2 wins over 1 wins over 0.
pub fn combine_exit(a: u8, b: u8) -> u8 {
    a.max(b)
}

fn check_file(
    path: &Path,
    args: &CheckArgs,
    sinks: &mut Sinks,
    out: &mut dyn Write,
) -> Result<u8, Error> {
    let (settings, table) = super::load(path, &args.input)?;
    let opts = analysis_options(&settings, &args.alerts)?;
    let mut analyzer = Analyzer::new(opts);
    let analysis = analyzer.update(&table, true, None, false);
    let file = path.display().to_string();
    let mut worst: Option<Severity> = None;
    for a in &analyzer.engine().alerts_by_row() {
        sinks.emit(out, &file, a)?;
        worst = worst.max(Some(a.severity));
    }
    let failing = analyzer
        .engine()
        .alerts()
        .iter()
        .filter(|a| a.severity >= sinks.fail_at)
        .count();
    eprintln!(
        "{file}: {} ({} rows, {} alerts, {failing} at or above {})",
        analysis.status,
        table.rows(),
        analyzer.engine().alerts().len(),
        sinks.fail_at
    );
    Ok(if failing > 0 {
        EXIT_ALERTS
    } else {
        EXIT_HEALTHY
    })
}

/// Runs `plateau check`.
pub fn run(args: &CheckArgs, out: &mut dyn Write) -> Result<u8, Error> {
    if args.pid.is_some() && !args.follow {
        return Err(Error::Usage("--pid needs --follow".to_string()));
    }
    if args.keep_rows.is_some() && !args.follow {
        return Err(Error::Usage("--keep-rows needs --follow".to_string()));
    }
    if args.follow {
        return follow::follow_run(args, out);
    }
    // Arguments are checked once before any file is read (bad arguments: exit 2).
    if let Some(u) = &args.alerts.until {
        parse_until(u)?;
    }
    let mut sinks = Sinks::new(args)?;
    let mut code = EXIT_HEALTHY;
    for path in &args.files {
        match check_file(path, args, &mut sinks, out) {
            Ok(c) => code = combine_exit(code, c),
            Err(e) if e.is_broken_pipe() => return Err(e),
            Err(e @ Error::Usage(_)) | Err(e @ Error::Config(_)) => {
                sinks.finish();
                return Err(e);
            }
            Err(e) => {
                eprintln!("plateau: error: {e}");
                code = combine_exit(code, EXIT_ERROR);
            }
        }
    }
    sinks.finish();
    Ok(code)
}
