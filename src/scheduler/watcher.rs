//! Job discovery: the user's running jobs, their logs, and how to read each one.
//!
//! Each round ([`JobWatcher::poll`]) asks the scheduler for the user's jobs once:
//! - a job seen running for the first time is reported ([`JobEvent::Started`]);
//! - its logs are the files matching the log glob, relative to its working directory
//!   (`{job}` and `{name}` in the glob stand for its id and name), modified since the job
//!   started (older files there belong to earlier runs). Each new one is reported with a
//!   ready source ([`JobEvent::LogFound`]). The glob is looked at again every round while
//!   the job runs, so logs that appear later are found too;
//! - a job no longer running (ending, ended, requeued, or gone from the list) is reported
//!   ([`JobEvent::Ended`]) and its sources are told to end: they read what is left, then
//!   report the end of their input.
//!
//! **Visible or not.** A job's folder is read directly when it can be listed from here
//! and is not under one of the `node_local` folders (node-local scratch that also exists,
//! as another folder, on this machine; marking a folder so also tests the scheduler path
//! on one node). Otherwise its files are listed and read on the job's node through the
//! scheduler ([`Scheduler::list_command`], [`Scheduler::follow_command`]); such listings
//! are steps, so they are repeated only every `remote_listing_every`.
//!
//! A file matching the glob of two jobs (several jobs in one folder) goes to the first
//! one; the user is told once, and `{job}` or `{name}` in the glob tells them apart.
//!
//! **Limit.** Read through a step, the rows written in the last moment before a job ends
//! can be lost: the scheduler ends the step with the job and drops output still in transit
//! (up to ~0.7 s of rows measured on a single-node Slurm). After the job's end no step can
//! be attached to read them. A folder visible from here has no such limit.

use std::collections::{BTreeMap, BTreeSet, HashMap};
use std::path::{Component, Path, PathBuf};
use std::sync::mpsc::{self, RecvTimeoutError};
use std::sync::Arc;
use std::thread::{self, JoinHandle};
use std::time::{Duration, Instant, SystemTime, UNIX_EPOCH};

use glob::{MatchOptions, Pattern};

use super::{run_captured, Job, JobId, Scheduler, WhileJobRuns};
use crate::follow::{
    Backoff, Clock, CommandControl, CommandSource, CommandSpec, EndSignal, Endable, FileFollower,
    FollowOptions, Source,
};

/// The log glob used when none is given.
pub const DEFAULT_LOG_GLOB: &str = "*.log";

/// Deepest folder level listed for a glob with `**`.
const MAX_DEPTH: usize = 8;

/// How long a remote listing may take.
const LISTING_LIMIT: Duration = Duration::from_secs(60);

const MATCH: MatchOptions = MatchOptions {
    case_sensitive: true,
    require_literal_separator: true,
    require_literal_leading_dot: true,
};

/// Settings of job discovery.
#[derive(Debug, Clone)]
pub struct DiscoveryOptions {
    /// Glob of a job's logs, relative to its working directory (or absolute); `{job}` and
    /// `{name}` stand for the job's id and name.
    pub log_glob: String,
    /// Folders whose files are always read through the scheduler, even when a folder of
    /// that name is visible here (node-local scratch).
    pub node_local: Vec<PathBuf>,
    /// How often a folder that is not visible is listed again (each listing is a step).
    pub remote_listing_every: Duration,
    /// How long a reader of an ended job may run on before it is ended.
    pub end_grace: Duration,
    /// A file last modified this long before its job started is not taken as its log
    /// (clocks of nodes differ a little).
    pub start_margin: Duration,
    /// At most this many logs per job.
    pub max_logs_per_job: usize,
    /// Restart delays of readers on nodes.
    pub backoff: Backoff,
    /// Settings of the sources made.
    pub follow: FollowOptions,
}

impl Default for DiscoveryOptions {
    fn default() -> Self {
        Self {
            log_glob: DEFAULT_LOG_GLOB.to_string(),
            node_local: Vec::new(),
            remote_listing_every: Duration::from_secs(15),
            end_grace: Duration::from_secs(30),
            start_margin: Duration::from_secs(10),
            max_logs_per_job: 8,
            backoff: Backoff::default(),
            follow: FollowOptions::default(),
        }
    }
}

/// How a log is read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Reading {
    /// Directly: its folder is visible from here.
    Direct,
    /// Through the scheduler, by this command (a step attached to the job).
    Scheduler { command: CommandSpec },
}

/// A log found for a running job, with the source that follows it (add it to a
/// [`crate::follow::FollowSet`]).
pub struct FoundLog {
    pub job: Job,
    pub path: PathBuf,
    pub reading: Reading,
    pub source: Box<dyn Source>,
}

impl std::fmt::Debug for FoundLog {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("FoundLog")
            .field("job", &self.job.id)
            .field("path", &self.path)
            .field("reading", &self.reading)
            .finish_non_exhaustive()
    }
}

/// What discovery reports.
#[derive(Debug)]
pub enum JobEvent {
    /// A job seen running for the first time (its logs may not exist yet).
    Started(Job),
    /// A log of a running job.
    LogFound(FoundLog),
    /// The job no longer runs (`job.state` says how it ended, if the scheduler still
    /// showed it); its sources end by themselves after reading what is left.
    Ended(Job),
    /// Something the user should know (the scheduler did not answer, an unreadable line of
    /// its answer, a log that matches two jobs); discovery goes on. Each is told once.
    Problem(String),
}

enum Ender {
    File(EndSignal),
    Command(CommandControl),
}

struct Tracked {
    job: Job,
    logs: Vec<(PathBuf, Ender)>,
    /// When the folder (not visible) may be listed again.
    next_listing: Option<Instant>,
    /// The user was told the job has more logs than allowed.
    capped: bool,
}

/// Finds the user's running jobs and their logs; see the module documentation.
pub struct JobWatcher {
    scheduler: Arc<dyn Scheduler>,
    options: DiscoveryOptions,
    clock: Arc<dyn Clock>,
    tracked: BTreeMap<JobId, Tracked>,
    claimed: HashMap<PathBuf, JobId>,
    told: BTreeSet<String>,
    /// Jobs not yet ended in the scheduler's last answer; `None` when it did not answer.
    active: Option<usize>,
}

impl std::fmt::Debug for JobWatcher {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("JobWatcher")
            .field("scheduler", &self.scheduler)
            .field("options", &self.options)
            .field("jobs", &self.tracked.keys().collect::<Vec<_>>())
            .finish_non_exhaustive()
    }
}

impl JobWatcher {
    /// A watcher asking `scheduler`; arrival times of the sources' data come from `clock`.
    /// Fails when the log glob is not a valid pattern.
    pub fn new(
        scheduler: Arc<dyn Scheduler>,
        options: DiscoveryOptions,
        clock: Arc<dyn Clock>,
    ) -> Result<Self, String> {
        let probe = substitute(&options.log_glob, "1", "name");
        Pattern::new(&probe).map_err(|e| format!("log glob `{}`: {e}", options.log_glob))?;
        if options.log_glob.trim().is_empty() {
            return Err("the log glob is empty".into());
        }
        Ok(Self {
            scheduler,
            options,
            clock,
            tracked: BTreeMap::new(),
            claimed: HashMap::new(),
            told: BTreeSet::new(),
            active: None,
        })
    }

    /// The jobs being followed now.
    pub fn jobs(&self) -> impl Iterator<Item = &Job> {
        self.tracked.values().map(|t| &t.job)
    }

    /// How many of the user's jobs had not ended (pending, running, suspended, ending or
    /// in a state plateau does not know) in the scheduler's last answer; `None` before
    /// the first answer and when the last round could not ask it. Lets a caller stop
    /// once nothing is left to run.
    pub fn active(&self) -> Option<usize> {
        self.active
    }

    /// One round: asks the scheduler, reports started and ended jobs, looks for logs.
    /// `now` is the wall-clock time (start times of jobs come from their time used).
    pub fn poll(&mut self, now: SystemTime) -> Vec<JobEvent> {
        let mut events = Vec::new();
        let listing = match self.scheduler.jobs(now) {
            Ok(l) => l,
            Err(e) => {
                self.active = None;
                let name = self.scheduler.name().to_string();
                self.tell(format!("cannot list the jobs ({name}): {e}"), &mut events);
                return events;
            }
        };
        self.active = Some(
            listing
                .jobs
                .iter()
                .filter(|j| !matches!(j.state, super::JobState::Ended(_)))
                .count(),
        );
        for bad in &listing.bad_lines {
            let text = format!(
                "{}: line {} of the job list skipped: {}",
                self.scheduler.name(),
                bad.line,
                bad.reason
            );
            self.tell(text, &mut events);
        }
        let by_id: HashMap<&JobId, &Job> = listing.jobs.iter().map(|j| (&j.id, j)).collect();
        // Ended: no longer running, or gone from the list.
        let over: Vec<JobId> = self
            .tracked
            .iter()
            .filter(|(id, _)| {
                by_id.get(id).is_none_or(|j| {
                    !j.state.is_running() && !matches!(j.state, super::JobState::Suspended)
                })
            })
            .map(|(id, _)| id.clone())
            .collect();
        for id in over {
            if let Some(t) = self.tracked.remove(&id) {
                let job = by_id.get(&id).map_or(t.job.clone(), |j| (*j).clone());
                self.end(t);
                events.push(JobEvent::Ended(job));
            }
        }
        for job in &listing.jobs {
            match self.tracked.get_mut(&job.id) {
                Some(t) => t.job = job.clone(),
                None if job.state.is_running() => {
                    self.tracked.insert(
                        job.id.clone(),
                        Tracked {
                            job: job.clone(),
                            logs: Vec::new(),
                            next_listing: None,
                            capped: false,
                        },
                    );
                    events.push(JobEvent::Started(job.clone()));
                }
                None => {}
            }
        }
        let ids: Vec<JobId> = self.tracked.keys().cloned().collect();
        for id in ids {
            self.find_logs(&id, &mut events);
        }
        events
    }

    /// Ends every reader (plateau is done watching).
    pub fn end_all(&mut self) {
        let tracked = std::mem::take(&mut self.tracked);
        for (_, t) in tracked {
            for (_, ender) in t.logs {
                match ender {
                    Ender::File(signal) => signal.end(),
                    Ender::Command(control) => control.stop(),
                }
            }
        }
        self.claimed.clear();
    }

    /// Runs rounds every `every` on a thread of its own, handing each event to `sink`
    /// until it returns `false` or the handle is stopped (the readers are ended then).
    pub fn spawn(
        mut self,
        every: Duration,
        mut sink: impl FnMut(JobEvent) -> bool + Send + 'static,
    ) -> std::io::Result<WatcherHandle> {
        let (stop, stopped) = mpsc::channel::<()>();
        let thread = thread::Builder::new()
            .name("plateau-jobs".into())
            .spawn(move || {
                'rounds: loop {
                    for event in self.poll(SystemTime::now()) {
                        if !sink(event) {
                            break 'rounds;
                        }
                    }
                    match stopped.recv_timeout(every) {
                        Err(RecvTimeoutError::Timeout) => {}
                        Ok(()) | Err(RecvTimeoutError::Disconnected) => break,
                    }
                }
                self.end_all();
            })?;
        Ok(WatcherHandle {
            stop,
            thread: Some(thread),
        })
    }

    fn tell(&mut self, text: String, events: &mut Vec<JobEvent>) {
        if self.told.insert(text.clone()) {
            events.push(JobEvent::Problem(text));
        }
    }

    fn end(&mut self, tracked: Tracked) {
        for (path, ender) in tracked.logs {
            self.claimed.remove(&path);
            match ender {
                Ender::File(signal) => signal.end(),
                Ender::Command(control) => control.finish_within(self.options.end_grace),
            }
        }
    }

    /// `true` when the folder is read directly: listable from here and not node-local.
    fn visible(&self, dir: &Path) -> bool {
        !self.options.node_local.iter().any(|p| dir.starts_with(p))
            && std::fs::read_dir(dir).is_ok()
    }

    fn find_logs(&mut self, id: &JobId, events: &mut Vec<JobEvent>) {
        let Some(t) = self.tracked.get(id) else {
            return;
        };
        let job = t.job.clone();
        let glob = substitute(
            &self.options.log_glob,
            &job.id.0,
            &Pattern::escape(&job.name),
        );
        let (base, rest) = split_glob(&job.workdir, &glob);
        let since = job
            .started
            .and_then(|s| s.checked_sub(self.options.start_margin));
        let direct = self.visible(&job.workdir);
        let candidates = if direct {
            local_matches(&base, &rest)
        } else {
            let now = Instant::now();
            if t.next_listing.is_some_and(|at| now < at) {
                return;
            }
            if let Some(t) = self.tracked.get_mut(id) {
                t.next_listing = Some(now + self.options.remote_listing_every);
            }
            match self.remote_matches(&job, &base, &rest) {
                Ok(found) => found,
                Err(e) => {
                    self.tell(
                        format!("job {}: cannot list {}: {e}", job.shown_id, base.display()),
                        events,
                    );
                    return;
                }
            }
        };
        for (path, modified) in candidates {
            if since.is_some_and(|s| modified.is_some_and(|m| m < s)) {
                continue;
            }
            match self.claimed.get(&path) {
                Some(owner) if owner == id => continue,
                Some(owner) => {
                    let text = format!(
                        "{} matches the log glob of jobs {owner} and {}; it is followed for job {owner} only (put {{job}} or {{name}} in the glob to tell them apart)",
                        path.display(),
                        job.id
                    );
                    self.tell(text, events);
                    continue;
                }
                None => {}
            }
            let Some(t) = self.tracked.get_mut(id) else {
                return;
            };
            if t.logs.len() >= self.options.max_logs_per_job {
                if !t.capped {
                    t.capped = true;
                    let text = format!(
                        "job {}: more than {} files match the log glob; only the first are followed",
                        job.shown_id, self.options.max_logs_per_job
                    );
                    self.tell(text, events);
                }
                return;
            }
            let (source, reading, ender) = if direct {
                let file = FileFollower::new(&path, self.clock.clone(), &self.options.follow);
                let (source, signal) = Endable::new(file);
                let source: Box<dyn Source> = Box::new(source);
                (source, Reading::Direct, Ender::File(signal))
            } else {
                let command = self.scheduler.follow_command(&job, &path);
                let policy = WhileJobRuns::new(self.scheduler.clone(), job.id.clone());
                let (source, control) = CommandSource::new(
                    path.display().to_string(),
                    command.clone(),
                    Box::new(policy),
                    self.options.backoff,
                    self.clock.clone(),
                    &self.options.follow,
                );
                let source: Box<dyn Source> = Box::new(source);
                (
                    source,
                    Reading::Scheduler { command },
                    Ender::Command(control),
                )
            };
            t.logs.push((path.clone(), ender));
            self.claimed.insert(path.clone(), id.clone());
            events.push(JobEvent::LogFound(FoundLog {
                job: job.clone(),
                path,
                reading,
                source,
            }));
        }
    }

    /// Lists `base` on the job's node and keeps the files matching `rest`.
    fn remote_matches(
        &self,
        job: &Job,
        base: &Path,
        rest: &str,
    ) -> Result<Vec<(PathBuf, Option<SystemTime>)>, String> {
        let depth = if rest.contains("**") {
            MAX_DEPTH
        } else {
            Path::new(rest).components().count().max(1)
        };
        let command = self.scheduler.list_command(job, base, depth);
        let out = run_captured(command.program(), command.args(), LISTING_LIMIT)
            .and_then(|c| c.into_stdout(&command.program().to_string_lossy()))
            .map_err(|e| e.to_string())?;
        let pattern = Pattern::new(rest).map_err(|e| e.to_string())?;
        let mut found: Vec<_> = parse_listing(&out)
            .into_iter()
            .filter(|(rel, _)| pattern.matches_path_with(rel, MATCH))
            .map(|(rel, modified)| (base.join(rel), Some(modified)))
            .collect();
        found.sort();
        Ok(found)
    }
}

/// Stops a [`JobWatcher`] started with [`JobWatcher::spawn`].
#[derive(Debug)]
pub struct WatcherHandle {
    stop: mpsc::Sender<()>,
    thread: Option<JoinHandle<()>>,
}

impl WatcherHandle {
    /// Stops the rounds, ends the readers and waits for the thread (at most one round).
    pub fn stop(mut self) {
        let _ = self.stop.send(());
        if let Some(t) = self.thread.take() {
            let _ = t.join();
        }
    }
}

impl Drop for WatcherHandle {
    fn drop(&mut self) {
        let _ = self.stop.send(());
    }
}

/// `{job}` and `{name}` replaced.
fn substitute(glob: &str, id: &str, name: &str) -> String {
    glob.replace("{job}", id).replace("{name}", name)
}

/// Splits a glob into the folder it starts from (the working directory joined with its
/// leading components free of wildcards) and the rest. An absolute glob starts from its
/// own leading folders.
fn split_glob(workdir: &Path, glob: &str) -> (PathBuf, String) {
    let full = if Path::new(glob).is_absolute() {
        PathBuf::from(glob)
    } else {
        workdir.join(glob)
    };
    let mut base = PathBuf::new();
    let mut rest = PathBuf::new();
    let mut wild = false;
    let components: Vec<Component> = full.components().collect();
    let last = components.len().saturating_sub(1);
    for (i, c) in components.into_iter().enumerate() {
        let text = c.as_os_str().to_string_lossy();
        wild = wild || i == last || text.contains(['*', '?', '[']);
        if wild {
            rest.push(c);
        } else {
            base.push(c);
        }
    }
    (base, rest.to_string_lossy().into_owned())
}

/// Files under `base` matching `rest`, with their modification times.
fn local_matches(base: &Path, rest: &str) -> Vec<(PathBuf, Option<SystemTime>)> {
    let pattern = format!("{}/{rest}", Pattern::escape(&base.to_string_lossy()));
    let Ok(paths) = glob::glob_with(&pattern, MATCH) else {
        return Vec::new();
    };
    let mut found: Vec<_> = paths
        .filter_map(Result::ok)
        .filter_map(|p| {
            let meta = std::fs::metadata(&p).ok()?;
            meta.is_file().then(|| (p, meta.modified().ok()))
        })
        .collect();
    found.sort();
    found
}

/// Reads [`super::listing_command`]'s output: `MTIME<TAB>RELATIVE PATH` per line. Lines
/// that are not so are skipped.
pub fn parse_listing(text: &str) -> Vec<(PathBuf, SystemTime)> {
    text.lines()
        .filter_map(|line| {
            let (mtime, rel) = line.split_once('\t')?;
            let secs: f64 = mtime.trim().parse().ok()?;
            if !secs.is_finite() || secs < 0.0 || rel.is_empty() {
                return None;
            }
            let rel = PathBuf::from(rel);
            if rel.is_absolute() || rel.components().any(|c| matches!(c, Component::ParentDir)) {
                return None;
            }
            Some((rel, UNIX_EPOCH + Duration::from_secs_f64(secs)))
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn globs_split_at_the_first_wildcard() {
        let w = Path::new("/w");
        let split = |g: &str| {
            let (base, rest) = split_glob(w, g);
            (base.to_string_lossy().into_owned(), rest)
        };
        assert_eq!(split("*.log"), ("/w".into(), "*.log".into()));
        assert_eq!(split("md.log"), ("/w".into(), "md.log".into()));
        assert_eq!(split("out/*.log"), ("/w/out".into(), "*.log".into()));
        assert_eq!(split("a/**/b.log"), ("/w/a".into(), "**/b.log".into()));
        assert_eq!(split("/abs/x*/y.log"), ("/abs".into(), "x*/y.log".into()));
        assert_eq!(split("r[12]/e.log"), ("/w".into(), "r[12]/e.log".into()));
    }

    #[test]
    fn placeholders() {
        assert_eq!(substitute("{name}-{job}.log", "7", "heat"), "heat-7.log");
        assert_eq!(
            substitute("{name}.log", "7", &Pattern::escape("a[1]*")),
            "a[[]1[]][*].log"
        );
    }

    /// Lines that are not `MTIME<TAB>PATH`, or that leave the folder, are skipped.
    #[test]
    fn listing_lines() {
        let text = "1700000000.5\tmd.log\ngarbage\n\t\n-1\tx.log\n1\t../up.log\n1\t/abs.log\n\
                    nan\tn.log\n12\tsub/a b.log\n\n3\t\n";
        let got = parse_listing(text);
        let names: Vec<&Path> = got.iter().map(|(p, _)| p.as_path()).collect();
        assert_eq!(names, [Path::new("md.log"), Path::new("sub/a b.log")]);
        assert_eq!(
            got[0].1,
            UNIX_EPOCH + Duration::from_secs_f64(1_700_000_000.5)
        );
    }
}
