//! `plateau check --follow`: alerts as they happen, beside a running simulation.
//!
//! Every file (or standard input, `-`) is followed by name; complete lines are fed to a
//! parser per file, the analysis is updated incrementally (see `analysis` for the schedule)
//! and each new alert is printed (and logged, bell, `--on-alert`) at once. Stalled output
//! is checked twice a second against the rows' arrival times. Watching ends when
//! - every file reached `--until` (a simulated time, or a step count),
//! - the process given by `--pid` has exited (checked through `/proc/PID`, Linux), or
//! - standard input ended (when reading `-`),
//!
//! and then the remaining rows are judged as a finished file would be. The exit code is the
//! same as without `--follow`.
//!
//! Memory stays bounded on endless runs: past `--keep-rows` rows (`keep-rows` in
//! plateau.toml, default [`DEFAULT_KEEP_ROWS`]) the oldest rows are folded into block
//! summaries by the analyser and forgotten from the table and from the arrival times
//! (see `analysis::folded`); the user is told once, on standard error, from which row
//! and which statistics are approximate since.

use std::collections::BTreeMap;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::mpsc::RecvTimeoutError;
use std::sync::Arc;
use std::time::{Duration, SystemTime, UNIX_EPOCH};

use crate::analysis::{Analyzer, RunAnalysis, DEFAULT_KEEP_ROWS};
use crate::config::Settings;
use crate::error::Error;
use crate::follow::{FollowEvent, FollowOptions, FollowSet, SourceId, SystemClock};
use crate::mapping::Role;
use crate::parse::LogParser;
use crate::table::RunTable;
use crate::units::TimeSpec;

use super::{analysis_options, parse_until, CheckArgs, Sinks, EXIT_ALERTS, EXIT_HEALTHY};

/// How often the loop wakes up without data (stall checks, `--pid`).
const TICK: Duration = Duration::from_millis(500);

struct Run {
    label: String,
    parser: LogParser,
    analyzer: Analyzer,
    /// Arrival second (Unix epoch) of each row of the table.
    arrivals: Vec<f64>,
    /// Rows kept at full resolution before older rows are folded.
    keep_rows: usize,
    /// The user was told that rows are folded.
    fold_told: bool,
    emitted: usize,
    dirty: bool,
    ended: bool,
}

fn seconds(t: SystemTime) -> f64 {
    t.duration_since(UNIX_EPOCH)
        .map(|d| d.as_secs_f64())
        .unwrap_or(0.0)
}

/// True when the run's last row reached `until`.
pub fn reached(table: &RunTable, until: TimeSpec, timestep_ps: Option<f64>) -> bool {
    let Some(seg) = table.segments.last() else {
        return false;
    };
    let last = |role: Role| seg.column(role).and_then(|c| c.values().last().copied());
    match until {
        TimeSpec::Ps(t) => last(Role::Time).is_some_and(|x| x >= t),
        TimeSpec::Steps(n) => match last(Role::Step) {
            Some(s) => s >= n,
            None => match (timestep_ps, last(Role::Time)) {
                (Some(dt), Some(x)) => x >= n * dt,
                _ => false,
            },
        },
    }
}

/// Whether process `pid` still runs (Linux `/proc`): gone when its folder is missing, and
/// a zombie (exited, not yet reaped by its parent) counts as exited.
pub fn process_alive(pid: u32) -> bool {
    let stat = Path::new("/proc").join(pid.to_string()).join("stat");
    match std::fs::read_to_string(stat) {
        Ok(text) => {
            // Format: "pid (comm) state ...": the state follows the last ')'.
            let state = text
                .rsplit_once(')')
                .and_then(|(_, rest)| rest.trim_start().chars().next());
            !matches!(state, Some('Z') | Some('X'))
        }
        Err(_) => false,
    }
}

impl Run {
    fn emit_new(&mut self, sinks: &mut Sinks, out: &mut dyn Write) -> Result<(), Error> {
        let new: Vec<_> = self.analyzer.engine().alerts_since(self.emitted).to_vec();
        self.emitted += new.len();
        for a in &new {
            sinks.emit(out, &self.label, a)?;
        }
        Ok(())
    }

    fn bound_memory(&mut self) {
        bound_memory(
            &mut self.parser,
            &mut self.analyzer,
            &mut self.arrivals,
            self.keep_rows,
        );
    }

    /// Tells the user once that older rows are folded (standard error).
    fn tell_folding(&mut self, analysis: &RunAnalysis) {
        if self.fold_told {
            return;
        }
        if let Some(line) = folding_note(analysis) {
            self.fold_told = true;
            eprintln!("{}: {line}", self.label);
        }
    }

    fn track_rows(&mut self, arrival: f64) {
        let rows = self.parser.table().rows();
        if self.arrivals.len() > rows {
            self.arrivals.truncate(rows);
        }
        while self.arrivals.len() < rows {
            self.arrivals.push(arrival);
        }
    }
}

/// Folds and forgets the oldest rows once the last segment holds more than `keep_rows`
/// (rows already seen by the per-row detectors; see [`Analyzer::fold_past`]), with their
/// arrival times (`arrivals` holds one per row of the table, segment by segment). Call it
/// after `Analyzer::update`. Returns whether rows were forgotten.
pub fn bound_memory(
    parser: &mut LogParser,
    analyzer: &mut Analyzer,
    arrivals: &mut Vec<f64>,
    keep_rows: usize,
) -> bool {
    let Some(keep) = analyzer.fold_past(parser.table(), keep_rows) else {
        return false;
    };
    let mut kept = Vec::with_capacity(arrivals.len().min(parser.table().rows()));
    let mut start = 0usize;
    for seg in &parser.table().segments {
        let rows = seg.rows();
        let drop = rows.saturating_sub(keep);
        kept.extend_from_slice(arrivals.get(start + drop..start + rows).unwrap_or_default());
        start += rows;
    }
    *arrivals = kept;
    parser.forget_all_but_last(keep);
    true
}

/// Runs `plateau check --follow`.
pub fn follow_run(args: &CheckArgs, out: &mut dyn Write) -> Result<u8, Error> {
    let cwd = std::env::current_dir().unwrap_or_else(|_| PathBuf::from("."));
    let settings = Settings::resolve(&args.input, &cwd)?;
    let opts = analysis_options(&settings, &args.alerts)?;
    let until = args.alerts.until.as_deref().map(parse_until).transpose()?;
    let keep_rows = match args.keep_rows {
        Some(n) => crate::config::check_keep_rows(n)
            .map_err(|e| Error::Usage(format!("--keep-rows: {e}")))?,
        None => settings.keep_rows.unwrap_or(DEFAULT_KEEP_ROWS),
    };
    let mut sinks = Sinks::new(args)?;
    let (mut set, rx) = FollowSet::start(FollowOptions::default(), Arc::new(SystemClock))
        .map_err(|e| Error::Usage(format!("cannot start following: {e}")))?;
    let mut runs: BTreeMap<SourceId, Run> = BTreeMap::new();
    let mut stdin_used = false;
    for path in &args.files {
        let is_stdin = path.as_os_str() == "-";
        let id = if is_stdin {
            if stdin_used {
                return Err(Error::Usage(
                    "standard input (-) can be read only once".into(),
                ));
            }
            stdin_used = true;
            set.add_stdin()
        } else {
            set.add_path(path.clone())
        }
        .map_err(|e| Error::Usage(format!("cannot follow {}: {e}", path.display())))?;
        runs.insert(
            id,
            Run {
                label: path.display().to_string(),
                parser: LogParser::new(settings.parse.clone()),
                analyzer: Analyzer::new(opts.clone()),
                arrivals: Vec::new(),
                keep_rows,
                fold_told: false,
                emitted: 0,
                dirty: false,
                ended: false,
            },
        );
    }
    let mut errors = false;
    loop {
        match rx.recv_timeout(TICK) {
            Ok((id, event)) => {
                if let Some(run) = runs.get_mut(&id) {
                    match event {
                        FollowEvent::Data { bytes, arrival, .. } => {
                            run.parser.feed(&bytes);
                            run.track_rows(seconds(arrival));
                            run.dirty = true;
                        }
                        FollowEvent::EndOfInput { .. } => {
                            run.parser.finish();
                            run.ended = true;
                            run.dirty = true;
                        }
                        FollowEvent::Error { path, message } => {
                            eprintln!("plateau: {}: {message}", path.display());
                            errors = true;
                        }
                        _ => {}
                    }
                }
            }
            Err(RecvTimeoutError::Timeout) => {}
            Err(RecvTimeoutError::Disconnected) => break,
        }
        let now = seconds(SystemTime::now());
        for run in runs.values_mut() {
            if run.dirty {
                run.dirty = false;
                let analysis = run.analyzer.update(
                    run.parser.table(),
                    run.ended,
                    Some(&run.arrivals),
                    run.ended,
                );
                run.tell_folding(&analysis);
                run.bound_memory();
            }
            if !run.ended {
                let last_row = run.parser.table().rows().checked_sub(1);
                run.analyzer.check_stall(now, &run.arrivals, last_row);
            }
            run.emit_new(&mut sinks, out)?;
        }
        let all_reached = until.is_some_and(|u| {
            runs.values()
                .all(|r| reached(r.parser.table(), u, settings.timestep_ps))
        });
        let pid_gone = args.pid.is_some_and(|p| !process_alive(p));
        let input_over = stdin_used && runs.values().all(|r| r.ended);
        if all_reached || pid_gone || input_over {
            break;
        }
    }
    set.stop();
    let mut code = EXIT_HEALTHY;
    for run in runs.values_mut() {
        run.parser.finish();
        let analysis = run
            .analyzer
            .update(run.parser.table(), true, Some(&run.arrivals), true);
        run.emit_new(&mut sinks, out)?;
        run.tell_folding(&analysis);
        let failing = run
            .analyzer
            .engine()
            .alerts()
            .iter()
            .filter(|a| a.severity >= sinks.fail_at)
            .count();
        eprintln!(
            "{}: {} ({} rows, {} alerts, {failing} at or above {})",
            run.label,
            analysis.status,
            run.parser.table().rows() as u64 + run.analyzer.rows_forgotten(),
            run.analyzer.engine().alerts().len(),
            sinks.fail_at
        );
        if failing > 0 {
            code = EXIT_ALERTS;
        }
    }
    sinks.finish();
    if errors {
        code = super::combine_exit(code, super::EXIT_ERROR);
    }
    Ok(code)
}

/// The sentence that tells the user a run's older rows are folded, if they are.
pub fn folding_note(analysis: &RunAnalysis) -> Option<String> {
    analysis.folding.as_ref().map(|f| f.describe())
}
