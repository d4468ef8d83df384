//! `plateau check --follow`: alerts as they happen, beside a running simulation.
//!
//! Drives the live-run engine ([`crate::live`]): every file (or standard input, `-`) is
//! followed by name, complete lines are parsed, the analysis is updated incrementally and
//! each new alert is printed (and logged, bell, `--on-alert`) at once. Stalled output is
//! checked twice a second against the rows' arrival times. Watching ends when
//! - every file reached `--until` (a simulated time, or a step count),
//! - the process given by `--pid` has exited (checked through `/proc/PID`, Linux), or
//! - standard input ended (when reading `-`), or
//! - with `--jobs`, the scheduler says none of the user's jobs is left to run (none
//!   pending, running, suspended or ending) and every run has read its log to the end,
//! - the user pressed Ctrl-C (SIGINT), or SIGTERM or SIGHUP arrived (a second one of
//!   these ends at once, as usual),
//!
//! and then the remaining rows are judged as a finished file would be. The exit code is the
//! same as without `--follow`.
//!
//! Runs may also come from commands (`--source-command`, `[[run]]` in plateau.toml) and
//! from the user's batch jobs (`--jobs`; see [`crate::commands::sources`]): jobs are
//! added as they start, what discovery does is told on standard error (`plateau: job 12
//! (heat) started ...`), and their alerts carry the job id (on standard output, in
//! `--alert-log` and in `PLATEAU_ALERT_JOB`).
//!
//! Memory stays bounded on endless runs: past `--keep-rows` rows (`keep-rows` in
//! plateau.toml, default [`DEFAULT_KEEP_ROWS`]) the oldest rows are folded (see
//! [`crate::live::bound_memory`]); the user is told once, on standard error, from which
//! row and which statistics are approximate since.

use std::io::Write;
use std::path::PathBuf;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::RecvTimeoutError;
use std::sync::Arc;
use std::time::{Duration, Instant};

use crate::alert::Change;
use crate::analysis::DEFAULT_KEEP_ROWS;
use crate::cli::CheckArgs;
use crate::config::Settings;
use crate::error::Error;
use crate::follow::{FollowOptions, SystemClock};
use crate::live::{self, Happened, Live, LiveOptions, LiveRun, RunSource, RunSpec};
use crate::scheduler::{Scheduler, Slurm};

use super::super::sources::{self, JobFeed};

use super::{analysis_options, parse_until, Sinks, EXIT_ALERTS, EXIT_HEALTHY};

/// How often the loop wakes up without data (stall checks, `--pid`).
const TICK: Duration = Duration::from_millis(500);

/// After the `--pid` writer exits, following ends once no row arrived for this long
/// (longer than the one-second stat heartbeat, so the last append is found even without a
/// file event).
const DRAIN_QUIET: Duration = Duration::from_millis(1500);

/// Prints the alerts a run raised or escalated since `emitted` of its notices were
/// handled (an escalated alert is printed again, at its new severity; a cleared one is
/// not printed).
fn emit_new(
    run: &LiveRun,
    emitted: &mut usize,
    sinks: &mut Sinks,
    out: &mut dyn Write,
) -> Result<(), Error> {
    let notices = run.notices();
    if *emitted > notices.len() {
        // The run started over (its file was replaced): its alerts are new ones.
        *emitted = 0;
    }
    let mut changed: Vec<usize> = Vec::new();
    for n in notices.get(*emitted..).unwrap_or_default() {
        if n.change != Change::Cleared && !changed.contains(&n.alert) {
            changed.push(n.alert);
        }
    }
    *emitted = notices.len();
    let new: Vec<_> = changed
        .into_iter()
        .filter_map(|i| run.alerts().get(i).cloned())
        .collect();
    let job = run.spec().job.as_ref().map(|j| j.id.as_str());
    for a in &new {
        sinks.emit(out, &run.spec().label, job, a)?;
    }
    Ok(())
}

/// Tells the user once that older rows are folded, and that names of self-named rows
/// first seen late are not read (standard error).
fn tell_folding(run: &mut LiveRun) {
    let lines = run
        .take_folding_note()
        .into_iter()
        .chain(run.take_later_names());
    for line in lines.collect::<Vec<_>>() {
        let text = format!("{}: {line}", run_name(run));
        eprintln!("{}", crate::text::escape_control(&text));
    }
}

/// A run as named on standard error: its label, and its job when it has one.
fn run_name(run: &LiveRun) -> String {
    match &run.spec().job {
        Some(job) => format!("{} (job {})", run.spec().label, job),
        None => run.spec().label.clone(),
    }
}

/// The files of `--chain` when following: log files (no standard input), at least one.
pub fn chain_files(files: &[PathBuf]) -> Result<(), Error> {
    if files.is_empty() {
        return Err(Error::Usage(
            "--chain needs the log files of the stages, in order".to_string(),
        ));
    }
    if let Some(f) = files
        .iter()
        .find(|f| f.as_os_str() == "-" || live::is_pattern(f))
    {
        return Err(Error::Usage(format!(
            "--chain follows named files in order; '{}' is not one (no standard input or \
             patterns in a chain)",
            f.display()
        )));
    }
    Ok(())
}

/// The stages of a run in the closing line (`; stages: minimization converged, ...`), when
/// there is more than one; with the file being read for a chain.
fn stage_summary(run: &LiveRun) -> String {
    let mut out = String::new();
    if let Some(st) = run.stages().filter(|s| s.stages.len() > 1) {
        let list: Vec<String> = st
            .stages
            .iter()
            .map(|s| format!("{} {}", s.kind.name(), s.verdict))
            .collect();
        out.push_str(&format!("; stages: {}", list.join(", ")));
        if let Some(note) = st.folding_note() {
            out.push_str(&format!(" ({note})"));
        }
    }
    if let Some(c) = run.chain() {
        out.push_str(&format!(
            "; read up to file {} of {}",
            c.live() + 1,
            c.files().len()
        ));
    }
    out
}

/// SIGINT, SIGTERM and SIGHUP end the watch with its summary (the flag is set); a second
/// one ends the process at once (exit code 128 + the signal), as the user expects of a
/// second Ctrl-C.
fn end_on_signals() -> std::io::Result<Arc<AtomicBool>> {
    use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
    let flag = Arc::new(AtomicBool::new(false));
    for sig in [SIGINT, SIGTERM, SIGHUP] {
        // Order matters: the second signal finds the flag set and exits.
        signal_hook::flag::register_conditional_shutdown(sig, 128 + sig, Arc::clone(&flag))?;
        signal_hook::flag::register(sig, Arc::clone(&flag))?;
    }
    Ok(flag)
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
    let commands = sources::command_runs(&args.sources, !args.files.is_empty(), &settings)?;
    let follow = FollowOptions::default();
    let discovery = sources::discovery(&args.sources, &settings, &cwd, &follow);
    if args.files.is_empty() && commands.is_empty() && discovery.is_none() {
        return Err(Error::Usage(
            "nothing to follow: name a log FILE, or use --source-command, --jobs or [[run]] \
             in plateau.toml"
                .to_string(),
        ));
    }
    let mut sinks = Sinks::new(args)?;
    let options = LiveOptions {
        parse: settings.parse.clone(),
        analysis: Some(opts),
        keep_rows,
        follow: follow.clone(),
        guess_row_tag: settings.parse.row_tag.is_none(),
    };
    let clock = Arc::new(SystemClock);
    let (mut live, rx) =
        Live::start(options, clock.clone()).map_err(|e| Error::Usage(e.to_string()))?;
    live.set_stage_options(super::super::report::stage_options(&args.stages)?);
    if args.stages.chain {
        chain_files(&args.files)?;
        live.add_chain(&args.files)
            .map_err(|e| Error::Usage(e.to_string()))?;
    } else {
        for path in &args.files {
            let source = RunSource::from_argument(path);
            live.add(RunSpec::new(source))
                .map_err(|e| Error::Usage(e.to_string()))?;
        }
    }
    let controls = sources::start_commands(&mut live, &commands, &follow, clock.clone())?;
    let mut jobs = match discovery {
        Some((options, every)) => {
            let scheduler: Arc<dyn Scheduler> = Arc::new(Slurm::new());
            Some(JobFeed::start(scheduler, options, every, clock)?)
        }
        None => None,
    };
    let stdin_used = live
        .runs()
        .iter()
        .any(|r| r.spec().source == RunSource::Stdin);
    let mut emitted = vec![0usize; live.runs().len()];
    let mut errors = false;
    let interrupted = end_on_signals().map_err(Error::Output)?;
    // When the writer (`--pid`) has exited: when it was seen gone, and when the last row
    // arrived. Rows it wrote just before exiting are still read before the end.
    let mut writer_gone: Option<Instant> = None;
    let mut last_data = Instant::now();
    loop {
        let now = live::now_seconds();
        match rx.recv_timeout(TICK) {
            Ok((source, event)) => {
                if matches!(event, crate::follow::FollowEvent::Data { .. }) {
                    last_data = Instant::now();
                }
                if let Some((_, Happened::Error { path, message })) = live.apply(source, event, now)
                {
                    let text = format!("{}: {message}", path.display());
                    eprintln!("plateau: {}", crate::text::escape_control(&text));
                    errors = true;
                }
            }
            Err(RecvTimeoutError::Timeout) => {}
            Err(RecvTimeoutError::Disconnected) => break,
        }
        if let Some(feed) = jobs.as_mut() {
            for note in feed.apply(&mut live) {
                eprintln!("plateau: {note}");
            }
            emitted.resize(live.runs().len(), 0);
        }
        let now = live::now_seconds();
        live.analyse();
        live.check_stalls(now);
        for (id, done) in emitted.iter_mut().enumerate() {
            if let Some(run) = live.run_mut(live::RunId(id)) {
                tell_folding(run);
                emit_new(run, done, &mut sinks, out)?;
            }
        }
        let all_reached = until.is_some_and(|u| {
            live.runs()
                .iter()
                .all(|r| live::reached(r.table(), u, settings.timestep_ps))
        });
        if writer_gone.is_none() && args.pid.is_some_and(|p| !live::process_alive(p)) {
            writer_gone = Some(Instant::now());
            // Look at every file now rather than at the next heartbeat.
            live.poll_now();
        }
        // The writer is gone and everything it wrote has been read: no row for a quiet
        // spell longer than the stat heartbeat, counted from both its exit and the last row.
        let pid_gone = writer_gone.is_some_and(|gone| {
            gone.elapsed() >= DRAIN_QUIET && last_data.elapsed() >= DRAIN_QUIET
        });
        let input_over = stdin_used && live.runs().iter().all(LiveRun::ended);
        let jobs_over = jobs.as_ref().is_some_and(JobFeed::nothing_left)
            && live.runs().iter().all(LiveRun::ended);
        if jobs_over {
            eprintln!("plateau: none of your jobs is left to run");
        }
        if all_reached || pid_gone || input_over || jobs_over || interrupted.load(Ordering::SeqCst)
        {
            break;
        }
    }
    if let Some(feed) = jobs.take() {
        if !feed.nothing_left() {
            eprintln!("plateau: {}; no longer followed", feed.summary());
        }
        feed.stop();
    }
    for control in &controls {
        control.stop();
    }
    let mut runs = live.stop();
    let mut code = EXIT_HEALTHY;
    for (run, done) in runs.iter_mut().zip(emitted.iter_mut()) {
        let status = run.conclude().map(|a| a.status);
        emit_new(run, done, &mut sinks, out)?;
        tell_folding(run);
        let failing = run
            .alerts()
            .iter()
            .filter(|a| a.severity >= sinks.fail_at)
            .count();
        if let Some(status) = status {
            eprintln!(
                "{}: {} ({} rows, {} alerts, {failing} at or above {}{})",
                crate::text::escape_control(&run_name(run)),
                status,
                run.rows_seen(),
                run.alerts().len(),
                sinks.fail_at,
                stage_summary(run)
            );
        }
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
