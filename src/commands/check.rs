//! `plateau check FILE...`: alerts for job scripts, with an exit code.
//!
//! One line per alert on standard output (`FILE: severity kind [column] line N row N t=...:
//! message`); a status line per file on standard error. Exit codes (one policy, here):
//! 0 healthy, 1 an alert at or above `--fail-on` (default warning), 2 unreadable input or
//! bad arguments; 2 wins over 1 wins over 0.

pub mod follow;
pub mod hook;

use std::io::Write;
use std::time::{Duration, Instant};

use crate::alert::{Alert, Severity, Target, Thresholds};
use crate::analysis::AnalysisOptions;
pub use crate::cli::{AlertArgs, CheckArgs, FailOn};
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
        directed_segments: Vec::new(),
    })
}

/// Where alerts go besides standard output.
struct Sinks {
    hook: Option<AlertHook>,
    log: Option<AlertLog>,
    /// Alerts that could not be appended to the alert log (the first failure is told at
    /// once, the count at the end: a full disk does not flood standard error).
    log_failures: u64,
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
            log_failures: 0,
            bell: args.bell,
            fail_at: args.fail_on.severity(),
        })
    }

    /// Prints one alert of `file` (`job`: the batch job whose log it is) and hands it to
    /// the alert log, the bell and the hook.
    fn emit(
        &mut self,
        out: &mut dyn Write,
        file: &str,
        job: Option<&str>,
        alert: &Alert,
    ) -> Result<(), Error> {
        let line = match job {
            Some(id) => format!("{file} (job {id}): {}", alert.one_line()),
            None => format!("{file}: {}", alert.one_line()),
        };
        super::emit(out, &format!("{}\n", crate::text::escape_control(&line)))?;
        out.flush().map_err(Error::Output)?;
        if let Some(log) = &mut self.log {
            if let Err(e) = log.append(alert, file, job) {
                if self.log_failures == 0 {
                    let text = format!(
                        "cannot append to {}: {e} (checking goes on; alerts are still printed)",
                        log.path().display()
                    );
                    eprintln!("plateau: {}", crate::text::escape_control(&text));
                }
                self.log_failures += 1;
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
            match hook.fire(alert, file, job, Instant::now()) {
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
        if let (Some(log), n @ 1..) = (&self.log, self.log_failures) {
            let text = format!(
                "{n} alert(s) could not be appended to {}",
                log.path().display()
            );
            eprintln!("plateau: {}", crate::text::escape_control(&text));
        }
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
    paths: &[std::path::PathBuf],
    args: &CheckArgs,
    sinks: &mut Sinks,
    out: &mut dyn Write,
) -> Result<u8, Error> {
    let (report, staged, _) =
        super::report::analyse_run(paths, &args.input, &args.alerts, &args.stages)?;
    let file = report.source.path.clone();
    for a in &staged.alerts {
        sinks.emit(out, &file, None, a)?;
    }
    let failing = staged
        .all_alerts
        .iter()
        .filter(|a| a.severity >= sinks.fail_at)
        .count();
    let stages = if report.stages.len() > 1 {
        let list: Vec<String> = report
            .stages
            .iter()
            .map(|s| format!("{} {}", s.kind.name(), s.verdict))
            .collect();
        format!("; stages: {}", list.join(", "))
    } else {
        String::new()
    };
    eprintln!(
        "{}: {} ({} rows, {} alerts, {failing} at or above {}{stages})",
        crate::text::escape_control(&file),
        staged.analysis.status,
        staged.table.rows(),
        staged.all_alerts.len(),
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
    if !args.follow && (args.sources.jobs || !args.sources.source_command.is_empty()) {
        return Err(Error::Usage(
            "--jobs and --source-command need --follow (they read runs while they are written)"
                .to_string(),
        ));
    }
    if args.follow {
        return follow::follow_run(args, out);
    }
    // Arguments are checked once before any file is read (bad arguments: exit 2).
    if let Some(u) = &args.alerts.until {
        parse_until(u)?;
    }
    if args.files.is_empty() {
        return Err(Error::Usage(
            "name at least one log FILE (or use --follow with --jobs or --source-command)"
                .to_string(),
        ));
    }
    let mut sinks = Sinks::new(args)?;
    let mut code = EXIT_HEALTHY;
    // With --chain the files are one run; otherwise each file is a run of its own.
    let runs: Vec<Vec<std::path::PathBuf>> = if args.stages.chain {
        vec![args.files.clone()]
    } else {
        args.files.iter().map(|p| vec![p.clone()]).collect()
    };
    for paths in &runs {
        match check_file(paths, args, &mut sinks, out) {
            Ok(c) => code = combine_exit(code, c),
            Err(e) if e.is_broken_pipe() => return Err(e),
            Err(e @ Error::Usage(_)) | Err(e @ Error::Config(_)) => {
                sinks.finish();
                return Err(e);
            }
            Err(e) => {
                let text = e.to_string();
                eprintln!("plateau: error: {}", crate::text::escape_document(&text));
                code = combine_exit(code, EXIT_ERROR);
            }
        }
    }
    sinks.finish();
    Ok(code)
}
