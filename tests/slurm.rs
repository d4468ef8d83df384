//! Against a real Slurm: batch jobs write invented logs; plateau lists the jobs, finds their
//! logs, reads one directly and one through `srun --overlap` (its folder marked as
//! node-local), survives the reading step being cancelled, and sees the jobs end.
//!
//! These need a running single-node Slurm (`bash scripts/slurm-single-node.sh up`, as
//! root), so they are ignored by a plain `cargo test`; `.ci/run` starts Slurm and runs
//! them with `cargo test --test slurm -- --ignored`, or says why it could not.
#![cfg(unix)]
// Test helpers may unwrap: a failure there is a test failure.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use std::collections::BTreeMap;
use std::fs;
use std::path::{Path, PathBuf};
use std::process::Command;
use std::sync::Arc;
use std::time::{Duration, Instant, SystemTime};

use plateau::follow::{FollowEvent, FollowOptions, FollowSet, SourceId, SystemClock, WatchMode};
use plateau::scheduler::{
    DiscoveryOptions, JobEvent, JobId, JobState, JobWatcher, Reading, Scheduler, Slurm,
};

const NEEDS_SLURM: &str = "needs a running Slurm: bash scripts/slurm-single-node.sh up";
/// Long enough never to be reached in a passing run.
const PATIENCE: Duration = Duration::from_secs(120);

fn run(program: &str, args: &[&str]) -> String {
    let out = Command::new(program).args(args).output().unwrap();
    assert!(
        out.status.success(),
        "{program} {args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

/// A folder for one job, readable by the job (jobs run as the submitting user).
fn job_dir(name: &str) -> tempfile::TempDir {
    tempfile::Builder::new()
        .prefix(&format!("plateau-slurm-{name}-"))
        .tempdir()
        .unwrap()
}

/// Submits a job that writes a header and `rows` invented rows to `run.log`, one every
/// `every_ms`, then waits `linger_s` seconds (a job's clean-up after its last row).
fn submit_writer(dir: &Path, name: &str, rows: usize, every_ms: u64, linger_s: u64) -> String {
    let script = format!(
        "#!/bin/sh\n\
         printf '# step temperature potential\\n' > run.log\n\
         i=0\n\
         while [ $i -lt {rows} ]; do\n\
           printf '%d %d.%d -%d.5\\n' $((i * 10)) $((300 + i % 7)) $((i % 10)) $((4000 + i % 13)) >> run.log\n\
           i=$((i + 1))\n\
           sleep {secs}\n\
         done\n\
         sleep {linger_s}\n",
        secs = every_ms as f64 / 1000.0
    );
    fs::write(dir.join("job.sh"), script).unwrap();
    submit(dir, name, "job.sh")
}

fn submit(dir: &Path, name: &str, script: &str) -> String {
    let d = dir.to_str().unwrap();
    let out = run(
        "sbatch",
        &[
            "--parsable",
            &format!("--chdir={d}"),
            &format!("--output={d}/slurm.out"),
            &format!("--job-name={name}"),
            &format!("{d}/{script}"),
        ],
    );
    out.trim().split(';').next().unwrap().to_string()
}

fn hostname() -> String {
    run("hostname", &["-s"]).trim().to_string()
}

/// Everything one test follows: the watcher's events for its job, and the data per source.
struct Harness {
    watcher: JobWatcher,
    set: FollowSet,
    rx: plateau::follow::FollowReceiver,
    job: JobId,
    sources: BTreeMap<SourceId, PathBuf>,
    text: BTreeMap<SourceId, String>,
    follow_events: Vec<(SourceId, FollowEvent)>,
    found: Vec<(PathBuf, Reading)>,
    started: bool,
    ended: Option<JobState>,
}

impl Harness {
    fn new(job: &str, options: DiscoveryOptions) -> Self {
        let scheduler: Arc<dyn Scheduler> = Arc::new(Slurm::new());
        let watcher = JobWatcher::new(scheduler, options, Arc::new(SystemClock)).unwrap();
        let (set, rx) = FollowSet::start(FollowOptions::default(), Arc::new(SystemClock)).unwrap();
        Self {
            watcher,
            set,
            rx,
            job: JobId(job.to_string()),
            sources: BTreeMap::new(),
            text: BTreeMap::new(),
            follow_events: Vec::new(),
            found: Vec::new(),
            started: false,
            ended: None,
        }
    }

    /// One discovery round (other tests' jobs are ignored), then the follower's events
    /// for a moment.
    fn round(&mut self) {
        for event in self.watcher.poll(SystemTime::now()) {
            match event {
                JobEvent::Started(j) if j.id == self.job => {
                    assert_eq!(j.state, JobState::Running);
                    self.started = true;
                }
                JobEvent::LogFound(found) if found.job.id == self.job => {
                    let id = self.set.add_source(found.source).unwrap();
                    self.sources.insert(id, found.path.clone());
                    self.found.push((found.path, found.reading));
                }
                JobEvent::Ended(j) if j.id == self.job => self.ended = Some(j.state),
                JobEvent::Problem(p) => eprintln!("discovery: {p}"),
                _ => {}
            }
        }
        let until = Instant::now() + Duration::from_millis(300);
        while let Ok((id, event)) = self
            .rx
            .recv_timeout(until.saturating_duration_since(Instant::now()))
        {
            if !self.sources.contains_key(&id) {
                continue;
            }
            if let FollowEvent::Data { bytes, .. } = &event {
                self.text
                    .entry(id)
                    .or_default()
                    .push_str(&String::from_utf8_lossy(bytes));
            }
            self.follow_events.push((id, event));
        }
    }

    fn rounds_until(&mut self, what: &str, done: impl Fn(&Self) -> bool) {
        let deadline = Instant::now() + PATIENCE;
        while !done(self) {
            assert!(
                Instant::now() < deadline,
                "{what} did not happen; found {:?}, events {:?}",
                self.found,
                self.follow_events
            );
            self.round();
        }
    }

    fn input_ended(&self) -> bool {
        !self.sources.is_empty()
            && self.sources.keys().all(|id| {
                self.follow_events
                    .iter()
                    .any(|(s, e)| s == id && matches!(e, FollowEvent::EndOfInput { .. }))
            })
    }

    fn only_text(&self) -> &str {
        assert_eq!(self.text.len(), 1, "one source expected: {:?}", self.found);
        self.text.values().next().unwrap()
    }
}

/// The row lines of a log, in order.
fn rows(text: &str) -> Vec<&str> {
    text.lines().filter(|l| !l.starts_with('#')).collect()
}

/// `squeue`'s answer to plateau's format, for a job whose name holds the characters job
/// names do hold (`|`, spaces); the state of one job; a job the controller never had.
#[test]
#[ignore = "needs a running Slurm: bash scripts/slurm-single-node.sh up"]
fn squeue_answer_and_job_states() {
    let dir = job_dir("list");
    fs::write(dir.path().join("job.sh"), "#!/bin/sh\nsleep 300\n").unwrap();
    let name = "heat stage|2, try 1";
    let id = submit(dir.path(), name, "job.sh");
    let slurm = Slurm::new();
    let job = JobId(id.clone());
    let deadline = Instant::now() + PATIENCE;
    let listed = loop {
        let listing = slurm.jobs(SystemTime::now()).unwrap();
        assert!(listing.bad_lines.is_empty(), "{:?}", listing.bad_lines);
        let mine = listing
            .jobs
            .into_iter()
            .find(|j| j.id == job)
            .expect(NEEDS_SLURM);
        if mine.state == JobState::Running {
            break mine;
        }
        assert!(Instant::now() < deadline, "job {id} never ran: {mine:?}");
        std::thread::sleep(Duration::from_millis(200));
    };
    assert_eq!(listed.name, name);
    assert_eq!(listed.shown_id, id);
    assert_eq!(listed.workdir, dir.path());
    assert_eq!(listed.node.as_deref(), Some(hostname().as_str()));
    let started = listed.started.unwrap();
    assert!(started <= SystemTime::now());
    assert_eq!(slurm.state_of(&job).unwrap(), Some(JobState::Running));

    run("scancel", &[&id]);
    let deadline = Instant::now() + PATIENCE;
    loop {
        match slurm.state_of(&job).unwrap() {
            Some(JobState::Ended(how)) => {
                assert_eq!(how, "cancelled");
                break;
            }
            Some(JobState::Ending | JobState::Running) => {}
            other => panic!("unexpected state {other:?}"),
        }
        assert!(Instant::now() < deadline);
        std::thread::sleep(Duration::from_millis(200));
    }
    // A job id the controller never had (ids count up from 1).
    assert_eq!(slurm.state_of(&JobId("99999999".into())).unwrap(), None);
}

/// A job whose folder is visible: found within a few rounds of its start, read directly,
/// every row once; marked ended when it ends, after which its source reads the rest and
/// ends its input.
#[test]
#[ignore = "needs a running Slurm: bash scripts/slurm-single-node.sh up"]
fn discovered_job_read_directly_until_its_end() {
    let dir = job_dir("direct");
    let id = submit_writer(dir.path(), "direct", 40, 50, 1);
    let mut h = Harness::new(&id, DiscoveryOptions::default());
    h.rounds_until("job start and its log", |h| {
        h.started && !h.found.is_empty()
    });
    assert_eq!(h.found, vec![(dir.path().join("run.log"), Reading::Direct)]);
    h.rounds_until("the job's end", |h| h.ended.is_some());
    assert_eq!(h.ended, Some(JobState::Ended("completed".into())));
    h.rounds_until("the end of the source's input", Harness::input_ended);
    let written = fs::read_to_string(dir.path().join("run.log")).unwrap();
    assert_eq!(rows(&written).len(), 40);
    assert_eq!(h.only_text(), written);
}

/// A job whose folder is marked node-local: its log is read by `srun --overlap ... tail`;
/// the reading step is cancelled mid-run and started again by plateau; every row the job
/// wrote arrives exactly once, in order; the job's end ends the source.
#[test]
#[ignore = "needs a running Slurm: bash scripts/slurm-single-node.sh up"]
fn read_through_a_step_survives_its_cancellation() {
    let dir = job_dir("remote");
    let rows_written = 150;
    // The job lingers a little after its last row: rows written in the very last moment
    // before a job ends can be lost with the step (see scheduler/watcher.rs).
    let id = submit_writer(dir.path(), "remote", rows_written, 50, 2);
    let options = DiscoveryOptions {
        node_local: vec![dir.path().to_path_buf()],
        remote_listing_every: Duration::from_secs(1),
        ..DiscoveryOptions::default()
    };
    let mut h = Harness::new(&id, options);
    h.rounds_until("the log found through the scheduler", |h| {
        !h.found.is_empty()
    });
    match &h.found[0].1 {
        Reading::Scheduler { command } => {
            assert_eq!(command.program(), "srun");
            assert!(command.args().iter().any(|a| a == "--overlap"));
        }
        Reading::Direct => panic!("a node-local folder must be read through the scheduler"),
    }
    h.rounds_until("40 rows", |h| {
        rows(h.text.values().next().map_or("", |t| t)).len() >= 40
    });

    // Cancel the reading step (as an administrator or a node problem would).
    let steps = run(
        "squeue",
        &[
            "--steps",
            &format!("--jobs={id}"),
            "--noheader",
            "--format=%i|%j",
        ],
    );
    let step = steps
        .lines()
        .find_map(|l| l.strip_suffix("|plateau-read"))
        .unwrap_or_else(|| panic!("no reading step in {steps:?}"))
        .to_string();
    run("scancel", &[&step]);

    h.rounds_until("the job's end", |h| h.ended.is_some());
    h.rounds_until("the end of the source's input", Harness::input_ended);
    let restarted = h.follow_events.iter().any(|(_, e)| {
        matches!(e, FollowEvent::Mode(WatchMode::Command { restarts, .. }) if *restarts >= 1)
    });
    assert!(
        restarted,
        "the step was cancelled, so the reader must have been started again"
    );
    let written = fs::read_to_string(dir.path().join("run.log")).unwrap();
    assert_eq!(rows(&written).len(), rows_written, "the writer's count");
    assert_eq!(h.only_text(), written, "every row once, in order");
    assert!(!h
        .follow_events
        .iter()
        .any(|(_, e)| matches!(e, FollowEvent::Truncated { .. })));
}
