//! Runs that are not files named on the command line: a command's standard output
//! (`--source-command`, `[[run]]` in plateau.toml) and the logs of the user's batch jobs
//! (`--jobs`). Used by `watch` and `check --follow`.
//!
//! - **Commands** are argument lists: `--source-command` takes one value split into words
//!   like a simple shell (quotes and backslashes only, nothing expanded, no shell unless the
//!   user writes `sh -c`); `[[run]] command = [...]` is a list already. Each becomes a
//!   [`CommandSource`] restarted with back-off whenever it exits (`{start-byte}` in it
//!   resumes at the byte where reading stopped; without it a restart is a new generation
//!   and the Contract's restart rule keeps rows from being counted twice).
//! - **Jobs**: a [`JobFeed`] runs [`JobWatcher`] rounds on a thread of its own (a round asks
//!   the scheduler and may list a folder through a step, which can take seconds) and keeps
//!   what it found for the caller's loop, which takes it without waiting
//!   ([`JobFeed::apply`]): each log found becomes a run tagged with its job
//!   ([`RunJob`]); when a job ends its sources end by themselves (a visible file is read to
//!   its end, a step ends with the job), which finishes their runs.

use std::collections::BTreeMap;
use std::fmt;
use std::path::{Path, PathBuf};
use std::sync::mpsc::{self, Receiver, RecvTimeoutError, Sender, TryRecvError};
use std::sync::Arc;
use std::thread::{self, JoinHandle};
use std::time::{Duration, SystemTime};

use crate::cli::SourceArgs;
use crate::config::Settings;
use crate::error::Error;
use crate::follow::{
    AlwaysRestart, Backoff, Clock, CommandControl, CommandSource, CommandSpec, FollowOptions,
};
use crate::live::{Live, RunId, RunJob, RunSource, RunSpec};
use crate::scheduler::{DiscoveryOptions, Job, JobEvent, JobWatcher, Reading, Scheduler};

use super::check::hook::split_command;

/// How often the scheduler is asked for the user's jobs unless told otherwise.
pub const DEFAULT_JOBS_EVERY: Duration = Duration::from_secs(5);

/// A run read from a command's output: the name shown and the command.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct CommandRun {
    pub label: String,
    pub spec: CommandSpec,
}

/// A `--source-command` value as a command: split into words, never through a shell.
pub fn parse_source_command(text: &str) -> Result<CommandSpec, String> {
    let words = split_command(text, "--source-command")?;
    CommandSpec::from_words(&words)
        .ok_or_else(|| "--source-command: the program (first word) is empty".to_string())
}

/// The command runs asked for: the `--source-command` values, or, when the command line
/// names neither a file nor a command, the settings' `[[run]]` entries.
pub fn command_runs(
    args: &SourceArgs,
    files_given: bool,
    settings: &Settings,
) -> Result<Vec<CommandRun>, Error> {
    if !args.source_command.is_empty() {
        return args
            .source_command
            .iter()
            .map(|text| {
                let spec = parse_source_command(text).map_err(Error::Usage)?;
                Ok(CommandRun {
                    label: spec.display(),
                    spec,
                })
            })
            .collect();
    }
    if files_given {
        return Ok(Vec::new());
    }
    Ok(settings
        .runs
        .iter()
        .filter_map(|run| {
            let spec = CommandSpec::from_words(&run.command)?;
            Some(CommandRun {
                label: run.name.clone().unwrap_or_else(|| spec.display()),
                spec,
            })
        })
        .collect())
}

/// Starts each command run in `live`. Returns the controls that end them.
pub fn start_commands(
    live: &mut Live,
    runs: &[CommandRun],
    follow: &FollowOptions,
    clock: Arc<dyn Clock>,
) -> Result<Vec<CommandControl>, Error> {
    let mut controls = Vec::new();
    for run in runs {
        let (source, control) = CommandSource::new(
            run.label.clone(),
            run.spec.clone(),
            Box::new(AlwaysRestart),
            Backoff::default(),
            clock.clone(),
            follow,
        );
        let spec = RunSpec {
            source: RunSource::Other(run.spec.display()),
            label: run.label.clone(),
            found_by: None,
            job: None,
        };
        live.add_source(spec, Box::new(source))
            .map_err(|e| Error::Usage(e.to_string()))?;
        controls.push(control);
    }
    Ok(controls)
}

/// Job discovery settings from the command line over `[jobs]` in the settings; `None`
/// without `--jobs`. Relative `--remote-dir` folders are taken from `cwd`. Returns the
/// options and how often to ask the scheduler.
pub fn discovery(
    args: &SourceArgs,
    settings: &Settings,
    cwd: &Path,
    follow: &FollowOptions,
) -> Option<(DiscoveryOptions, Duration)> {
    if !args.jobs {
        return None;
    }
    let mut options = DiscoveryOptions {
        follow: follow.clone(),
        ..DiscoveryOptions::default()
    };
    if let Some(g) = args.log_glob.clone().or(settings.jobs.log_glob.clone()) {
        options.log_glob = g;
    }
    options.node_local = if args.remote_dir.is_empty() {
        settings.jobs.remote.clone()
    } else {
        args.remote_dir.iter().map(|p| cwd.join(p)).collect()
    };
    let every = args
        .jobs_every
        .or(settings.jobs.every)
        .unwrap_or(DEFAULT_JOBS_EVERY);
    // A folder that is not visible is listed (a step each time) at most as often as the
    // jobs are asked for, and at least every 15 s.
    options.remote_listing_every = every
        .max(Duration::from_secs(1))
        .min(Duration::from_secs(15));
    Some((options, every))
}

/// What job discovery did, for the user.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum JobNote {
    /// A job seen running for the first time.
    Started(Job),
    /// A log of a job is followed, as run `run`; `through` is the scheduler's command when
    /// it is read on the job's node.
    Following {
        job: Job,
        path: PathBuf,
        run: RunId,
        through: Option<String>,
    },
    /// A job ended; its runs finish once their sources have read what is left.
    Ended { job: Job, runs: Vec<RunId> },
    /// Something the user should know (the scheduler did not answer, a log could not be
    /// added); discovery goes on.
    Problem(String),
}

fn job_words(job: &Job) -> String {
    format!("job {} ({})", job.shown_id, job.name)
}

impl fmt::Display for JobNote {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            JobNote::Started(job) => {
                write!(f, "{} started", job_words(job))?;
                if let Some(node) = &job.node {
                    write!(f, " on {node}")?;
                }
                write!(f, " in {}", job.workdir.display())
            }
            JobNote::Following {
                job, path, through, ..
            } => match through {
                None => write!(f, "{}: following {}", job_words(job), path.display()),
                Some(command) => write!(
                    f,
                    "{}: following {} on its node, through `{command}`",
                    job_words(job),
                    path.display()
                ),
            },
            JobNote::Ended { job, runs } => write!(
                f,
                "{} ended ({}); {} log{} finishing",
                job_words(job),
                job.state,
                runs.len(),
                if runs.len() == 1 { "" } else { "s" }
            ),
            JobNote::Problem(text) => f.write_str(text),
        }
    }
}

enum FeedItem {
    Event(Box<JobEvent>),
    /// A round is over: jobs not ended in the scheduler's answer (`None`: no answer).
    Round(Option<usize>),
}

/// Job discovery on its own thread, taken in by the caller's loop; see the module
/// documentation.
pub struct JobFeed {
    items: Receiver<FeedItem>,
    stop: Option<Sender<()>>,
    thread: Option<JoinHandle<()>>,
    /// Jobs not ended in the last answer; `None` before it or when the scheduler failed.
    active: Option<usize>,
    /// Running jobs and their runs.
    running: BTreeMap<String, (Job, Vec<RunId>)>,
    /// Jobs seen ending.
    ended: usize,
    /// The latest problem, until the scheduler answers again.
    problem: Option<String>,
}

impl fmt::Debug for JobFeed {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.debug_struct("JobFeed")
            .field("active", &self.active)
            .field("running", &self.running.keys().collect::<Vec<_>>())
            .field("ended", &self.ended)
            .finish_non_exhaustive()
    }
}

impl JobFeed {
    /// Starts rounds every `every` (the first at once). Fails on a log glob that is not a
    /// valid pattern.
    pub fn start(
        scheduler: Arc<dyn Scheduler>,
        options: DiscoveryOptions,
        every: Duration,
        clock: Arc<dyn Clock>,
    ) -> Result<JobFeed, Error> {
        let mut watcher = JobWatcher::new(scheduler, options, clock).map_err(Error::Usage)?;
        let (tx, items) = mpsc::channel();
        let (stop, stopped) = mpsc::channel::<()>();
        let thread = thread::Builder::new()
            .name("plateau-jobs".into())
            .spawn(move || {
                'rounds: loop {
                    for event in watcher.poll(SystemTime::now()) {
                        if tx.send(FeedItem::Event(Box::new(event))).is_err() {
                            break 'rounds;
                        }
                    }
                    if tx.send(FeedItem::Round(watcher.active())).is_err() {
                        break;
                    }
                    match stopped.recv_timeout(every) {
                        Err(RecvTimeoutError::Timeout) => {}
                        Ok(()) | Err(RecvTimeoutError::Disconnected) => break,
                    }
                }
                watcher.end_all();
            })
            .map_err(Error::Output)?;
        Ok(JobFeed {
            items,
            stop: Some(stop),
            thread: Some(thread),
            active: None,
            running: BTreeMap::new(),
            ended: 0,
            problem: None,
        })
    }

    /// Takes in what discovery found since the last call, without waiting: logs become
    /// runs of `live`. Returns what happened, for the user.
    pub fn apply(&mut self, live: &mut Live) -> Vec<JobNote> {
        let mut notes = Vec::new();
        loop {
            let item = match self.items.try_recv() {
                Ok(item) => item,
                Err(TryRecvError::Empty | TryRecvError::Disconnected) => break,
            };
            let event = match item {
                FeedItem::Round(active) => {
                    if active.is_some() {
                        self.problem = None;
                    }
                    self.active = active;
                    continue;
                }
                FeedItem::Event(event) => *event,
            };
            match event {
                JobEvent::Started(job) => {
                    self.running
                        .insert(job.id.0.clone(), (job.clone(), Vec::new()));
                    notes.push(JobNote::Started(job));
                }
                JobEvent::LogFound(found) => {
                    let through = match &found.reading {
                        Reading::Direct => None,
                        Reading::Scheduler { command } => Some(command.display()),
                    };
                    let job = found.job.clone();
                    let spec = RunSpec {
                        source: match &through {
                            None => RunSource::Path(found.path.clone()),
                            Some(command) => RunSource::Other(command.clone()),
                        },
                        label: found.path.display().to_string(),
                        found_by: None,
                        job: Some(RunJob {
                            id: job.shown_id.clone(),
                            name: job.name.clone(),
                        }),
                    };
                    match live.add_source(spec, found.source) {
                        Ok(run) => {
                            if let Some((_, runs)) = self.running.get_mut(&job.id.0) {
                                runs.push(run);
                            }
                            notes.push(JobNote::Following {
                                job,
                                path: found.path,
                                run,
                                through,
                            });
                        }
                        Err(e) => {
                            notes.push(JobNote::Problem(format!("{}: {e}", job_words(&found.job))))
                        }
                    }
                }
                JobEvent::Ended(job) => {
                    let runs = self
                        .running
                        .remove(&job.id.0)
                        .map(|(_, runs)| runs)
                        .unwrap_or_default();
                    self.ended += 1;
                    notes.push(JobNote::Ended { job, runs });
                }
                JobEvent::Problem(text) => {
                    self.problem = Some(text.clone());
                    notes.push(JobNote::Problem(text));
                }
            }
        }
        notes
    }

    /// `true` once the scheduler answered that none of the user's jobs is left to run
    /// (none pending, running, suspended or ending).
    pub fn nothing_left(&self) -> bool {
        self.active == Some(0) && self.running.is_empty()
    }

    /// One line about the jobs for a dashboard: how many run, wait and ended, or why the
    /// scheduler could not tell.
    pub fn summary(&self) -> String {
        if let Some(p) = &self.problem {
            if self.active.is_none() {
                return format!("jobs: {p}");
            }
        }
        let Some(active) = self.active else {
            return "jobs: asking the scheduler".to_string();
        };
        let running = self.running.len();
        let waiting = active.saturating_sub(running);
        let mut text = format!("jobs: {running} running");
        if waiting > 0 {
            text.push_str(&format!(", {waiting} waiting"));
        }
        if self.ended > 0 {
            text.push_str(&format!(", {} ended", self.ended));
        }
        text
    }

    /// Stops the rounds and ends every reader (waits for at most one round).
    pub fn stop(mut self) {
        self.halt();
    }

    fn halt(&mut self) {
        if let Some(stop) = self.stop.take() {
            let _ = stop.send(());
        }
        if let Some(t) = self.thread.take() {
            let _ = t.join();
        }
    }
}

impl Drop for JobFeed {
    fn drop(&mut self) {
        if let Some(stop) = self.stop.take() {
            let _ = stop.send(());
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::config::RunConfig;

    #[test]
    fn source_commands_are_word_lists_without_a_shell() {
        let spec = parse_source_command(
            "srun --overlap --jobid=12 tail -c +{start-byte} -F '/scratch/my run/md.log'",
        )
        .unwrap();
        assert_eq!(spec.program(), "srun");
        let args: Vec<String> = spec
            .args()
            .iter()
            .map(|a| a.to_string_lossy().into_owned())
            .collect();
        assert_eq!(
            args,
            [
                "--overlap",
                "--jobid=12",
                "tail",
                "-c",
                "+{start-byte}",
                "-F",
                "/scratch/my run/md.log"
            ]
        );
        assert!(spec.resumes());
        // Shell syntax is kept as text: nothing is expanded, piped or substituted.
        let spec = parse_source_command("cat $HOME/x.log | head; $(id) *.log").unwrap();
        let args: Vec<_> = spec.args().iter().map(|a| a.to_str().unwrap()).collect();
        assert_eq!(args, ["$HOME/x.log", "|", "head;", "$(id)", "*.log"]);
        for bad in ["", "   ", "tail 'x", "tail \"x", "tail x\\", "'' x"] {
            let e = parse_source_command(bad).unwrap_err();
            assert!(e.contains("--source-command"), "{bad:?}: {e}");
        }
    }

    #[test]
    fn command_runs_come_from_the_command_line_else_the_settings() {
        let settings = Settings {
            runs: vec![
                RunConfig {
                    command: vec!["ssh".into(), "n1".into(), "tail -F x".into()],
                    name: Some("heat".into()),
                },
                RunConfig {
                    command: vec!["tail".into(), "-F".into(), "a b.log".into()],
                    name: None,
                },
            ],
            ..Settings::default()
        };
        let none = SourceArgs::default();
        let from_file = command_runs(&none, false, &settings).unwrap();
        assert_eq!(from_file.len(), 2);
        assert_eq!(from_file[0].label, "heat");
        assert_eq!(from_file[0].spec.args()[1], "tail -F x");
        assert_eq!(from_file[1].label, "tail -F 'a b.log'");
        // A file named on the command line: the settings' runs are not added.
        assert!(command_runs(&none, true, &settings).unwrap().is_empty());
        let given = SourceArgs {
            source_command: vec!["tail -F one.log".into(), "tail -F two.log".into()],
            ..SourceArgs::default()
        };
        let runs = command_runs(&given, true, &settings).unwrap();
        let labels: Vec<_> = runs.iter().map(|r| r.label.as_str()).collect();
        assert_eq!(labels, ["tail -F one.log", "tail -F two.log"]);
        let bad = SourceArgs {
            source_command: vec!["tail 'x".into()],
            ..SourceArgs::default()
        };
        assert!(matches!(
            command_runs(&bad, false, &settings),
            Err(Error::Usage(m)) if m.contains("--source-command")
        ));
    }

    #[test]
    fn discovery_options_from_the_command_line_over_the_settings() {
        let follow = FollowOptions::default();
        let mut settings = Settings::default();
        settings.jobs.log_glob = Some("out/*.txt".into());
        settings.jobs.remote = vec![PathBuf::from("/scratch")];
        settings.jobs.every = Some(Duration::from_secs(3));
        let cwd = Path::new("/home/me");
        assert!(discovery(&SourceArgs::default(), &settings, cwd, &follow).is_none());
        let jobs = SourceArgs {
            jobs: true,
            ..SourceArgs::default()
        };
        let (o, every) = discovery(&jobs, &settings, cwd, &follow).unwrap();
        assert_eq!(o.log_glob, "out/*.txt");
        assert_eq!(o.node_local, [PathBuf::from("/scratch")]);
        assert_eq!(every, Duration::from_secs(3));
        let given = SourceArgs {
            jobs: true,
            log_glob: Some("{name}.log".into()),
            remote_dir: vec![PathBuf::from("tmp"), PathBuf::from("/local")],
            jobs_every: Some(Duration::from_secs(1)),
            ..SourceArgs::default()
        };
        let (o, every) = discovery(&given, &settings, cwd, &follow).unwrap();
        assert_eq!(o.log_glob, "{name}.log");
        assert_eq!(
            o.node_local,
            [PathBuf::from("/home/me/tmp"), PathBuf::from("/local")]
        );
        assert_eq!(every, Duration::from_secs(1));
        let (o, every) = discovery(&jobs, &Settings::default(), cwd, &follow).unwrap();
        assert_eq!(o.log_glob, crate::scheduler::DEFAULT_LOG_GLOB);
        assert!(o.node_local.is_empty());
        assert_eq!(every, DEFAULT_JOBS_EVERY);
    }
}
