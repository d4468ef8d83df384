//! Batch schedulers (I/O edge): the user's running jobs, and reading their logs on the
//! jobs' nodes through the scheduler itself. plateau builds no agent or daemon of its own:
//! the scheduler already runs wherever the jobs run.
//!
//! - [`Scheduler`] (this file): the small interface a scheduler implements — list the
//!   user's jobs, tell one job's state, and build the commands that read or list files on
//!   a job's node.
//! - [`Slurm`] (`slurm.rs`): `squeue --me` with an explicit format, `srun --overlap`.
//! - [`JobWatcher`] (`watcher.rs`): job discovery — finds each running job's logs by a
//!   glob relative to its working directory, reads them directly when that folder is
//!   visible from here and through a scheduler step when not, and reports jobs that start
//!   and end.
//! - `exec.rs`: runs a scheduler command with a time limit and captures its output.

mod exec;
mod slurm;
mod watcher;

use std::fmt;
use std::path::{Path, PathBuf};
use std::sync::Arc;
use std::time::{Duration, SystemTime};

use crate::follow::{CommandSpec, Restart, RestartPolicy, START_BYTE};

pub use exec::{run_captured, Captured};
pub use slurm::{parse_elapsed, parse_squeue, slurm_state, Slurm, SQUEUE_FORMAT, SQUEUE_SEPARATOR};
pub use watcher::{
    parse_listing, DiscoveryOptions, FoundLog, JobEvent, JobWatcher, Reading, WatcherHandle,
    DEFAULT_LOG_GLOB,
};

/// A job's identifier as the scheduler's commands take it (Slurm: the numeric job id, one
/// per array element).
#[derive(Debug, Clone, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct JobId(pub String);

impl fmt::Display for JobId {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(&self.0)
    }
}

/// Where a job is in its life, in plateau's terms.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum JobState {
    /// Waiting to run (queued, held, requeued, nodes booting).
    Pending,
    /// Running.
    Running,
    /// Suspended or stopped: it may run on.
    Suspended,
    /// Ending: its processes are being stopped.
    Ending,
    /// Ended; the scheduler's word for how (`completed`, `failed`, `timeout`, ...).
    Ended(String),
    /// A state plateau does not know, as the scheduler wrote it.
    Other(String),
}

impl JobState {
    /// `true` while the job runs (its logs may grow, a step can be attached).
    pub fn is_running(&self) -> bool {
        matches!(self, JobState::Running)
    }

    /// `true` once the job is ending or has ended.
    pub fn is_over(&self) -> bool {
        matches!(self, JobState::Ending | JobState::Ended(_))
    }
}

impl fmt::Display for JobState {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            JobState::Pending => f.write_str("pending"),
            JobState::Running => f.write_str("running"),
            JobState::Suspended => f.write_str("suspended"),
            JobState::Ending => f.write_str("ending"),
            JobState::Ended(how) | JobState::Other(how) => f.write_str(how),
        }
    }
}

/// One job as the scheduler lists it.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct Job {
    /// The identifier the scheduler's commands take.
    pub id: JobId,
    /// The identifier the user knows it by (Slurm: `123_4` for an array element).
    pub shown_id: String,
    /// The job's name.
    pub name: String,
    pub state: JobState,
    /// The node where its batch script runs (where its logs are), once it runs.
    pub node: Option<String>,
    /// Its working directory (absolute) on that node.
    pub workdir: PathBuf,
    /// When it started running, if it has.
    pub started: Option<SystemTime>,
}

/// A line of the scheduler's answer that could not be read.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct BadLine {
    /// 1-based line number in the answer.
    pub line: usize,
    pub reason: String,
}

/// The user's jobs, and the lines of the answer that could not be read (the others are
/// kept).
#[derive(Debug, Clone, Default, PartialEq, Eq)]
pub struct Listing {
    pub jobs: Vec<Job>,
    pub bad_lines: Vec<BadLine>,
}

/// Why a scheduler could not be asked.
#[derive(Debug, thiserror::Error)]
pub enum SchedulerError {
    /// The command could not be started (not installed, not on `PATH`).
    #[error("cannot run `{program}`: {source}")]
    Start {
        program: String,
        #[source]
        source: std::io::Error,
    },
    /// The command failed.
    #[error("`{program}` failed ({status}){}", stderr_suffix(.stderr))]
    Failed {
        program: String,
        status: String,
        stderr: String,
    },
    /// The command did not answer in time (it was ended).
    #[error("`{program}` gave no answer within {after:?}")]
    TimedOut { program: String, after: Duration },
}

fn stderr_suffix(stderr: &str) -> String {
    let text = stderr.trim();
    if text.is_empty() {
        String::new()
    } else {
        format!(": {text}")
    }
}

/// A batch scheduler, as plateau uses it. Implementations only build and run commands;
/// [`JobWatcher`] does the rest. To add one: implement this trait next to `slurm.rs`, with
/// unit tests of the parsing of its answers (malformed and empty lines included).
pub trait Scheduler: Send + Sync + fmt::Debug {
    /// Its name, for messages (`slurm`).
    fn name(&self) -> &str;

    /// The current user's jobs, in any state it still shows. `now` turns run times into
    /// start times.
    fn jobs(&self, now: SystemTime) -> Result<Listing, SchedulerError>;

    /// One job's state; `Ok(None)` when the scheduler no longer knows the job (it ended
    /// some time ago).
    fn state_of(&self, job: &JobId) -> Result<Option<JobState>, SchedulerError>;

    /// A command that prints the file `path` on the job's node from byte [`START_BYTE`] on
    /// and goes on printing what is appended ([`tail_command`] run through a step).
    fn follow_command(&self, job: &Job, path: &Path) -> CommandSpec;

    /// A command that lists the files under `dir` on the job's node, at most `depth`
    /// levels down, as [`listing_command`] prints them.
    fn list_command(&self, job: &Job, dir: &Path, depth: usize) -> CommandSpec;
}

/// The node-side command that follows `path` from byte [`START_BYTE`]: `tail -c +N -F`
/// (seeks to the offset, follows the file by name across rotation).
pub fn tail_command(path: &Path) -> Vec<std::ffi::OsString> {
    vec![
        "tail".into(),
        "-c".into(),
        format!("+{START_BYTE}").into(),
        "-F".into(),
        "--".into(),
        path.as_os_str().to_os_string(),
    ]
}

/// The node-side command that lists regular files under `dir` (absolute), at most `depth`
/// levels down: one line per file, its modification time in seconds since the Unix epoch,
/// a tab and its path relative to `dir` (GNU find's `-printf`).
pub fn listing_command(dir: &Path, depth: usize) -> Vec<std::ffi::OsString> {
    vec![
        "find".into(),
        dir.as_os_str().to_os_string(),
        "-mindepth".into(),
        "1".into(),
        "-maxdepth".into(),
        depth.max(1).to_string().into(),
        "-type".into(),
        "f".into(),
        "-printf".into(),
        "%T@\\t%P\\n".into(),
    ]
}

/// Restarts a job's reader while the job runs: asks the scheduler when the reader exits.
#[derive(Debug, Clone)]
pub struct WhileJobRuns {
    scheduler: Arc<dyn Scheduler>,
    job: JobId,
}

impl WhileJobRuns {
    /// The policy for a reader of `job`.
    pub fn new(scheduler: Arc<dyn Scheduler>, job: JobId) -> Self {
        Self { scheduler, job }
    }
}

impl RestartPolicy for WhileJobRuns {
    fn after_exit(&mut self) -> Restart {
        match self.scheduler.state_of(&self.job) {
            Ok(Some(state)) if state.is_running() => Restart::Yes,
            Ok(Some(state)) if state.is_over() => Restart::No,
            Ok(None) => Restart::No,
            Ok(Some(state)) => Restart::AskAgain(format!("job {} is {state}", self.job)),
            Err(e) => Restart::AskAgain(format!(
                "cannot ask {} about job {}: {e}",
                self.scheduler.name(),
                self.job
            )),
        }
    }
}
