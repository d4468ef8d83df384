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

// ---- the commands as a user runs them ------------------------------------------------------

/// The job ids of the reading steps (`plateau-read`) of job `id`.
fn reading_steps(id: &str) -> Vec<String> {
    let steps = run(
        "squeue",
        &[
            "--steps",
            &format!("--jobs={id}"),
            "--noheader",
            "--format=%i|%j",
        ],
    );
    steps
        .lines()
        .filter_map(|l| l.strip_suffix("|plateau-read"))
        .map(str::to_string)
        .collect()
}

/// Lines a child writes on one of its pipes, gathered by a thread.
fn gather(pipe: impl std::io::Read + Send + 'static) -> Arc<std::sync::Mutex<Vec<String>>> {
    use std::io::BufRead;
    let lines = Arc::new(std::sync::Mutex::new(Vec::new()));
    let keep = lines.clone();
    std::thread::spawn(move || {
        for line in std::io::BufReader::new(pipe).lines() {
            let Ok(line) = line else { return };
            keep.lock().unwrap().push(line);
        }
    });
    lines
}

fn wait_for_line(lines: &std::sync::Mutex<Vec<String>>, what: &str, pred: impl Fn(&str) -> bool) {
    let deadline = Instant::now() + PATIENCE;
    loop {
        if lines.lock().unwrap().iter().any(|l| pred(l)) {
            return;
        }
        assert!(
            Instant::now() < deadline,
            "{what}: not seen in {:?}",
            lines.lock().unwrap()
        );
        std::thread::sleep(Duration::from_millis(100));
    }
}

/// `plateau check --jobs --follow`, as a job script or a login-node script runs it: three
/// submitted jobs are found as they start (one read through `srun --overlap` because its
/// folder is marked remote), the reading step is cancelled mid-run and started again
/// without a row counted twice, each job is marked ended when it ends, and the watch ends
/// by itself once none of the user's jobs is left, with each run finished and every row
/// counted once.
#[test]
#[ignore = "needs a running Slurm: bash scripts/slurm-single-node.sh up"]
fn check_jobs_follow_sees_three_jobs_through_to_their_end() {
    let dirs = [job_dir("cj-heat"), job_dir("cj-hold"), job_dir("cj-prod")];
    let names = ["cj heat", "cj-hold", "cj-prod"];
    let rows_written = [40, 60, 150];
    let ids: Vec<String> = (0..3)
        .map(|i| submit_writer(dirs[i].path(), names[i], rows_written[i], 50, 2))
        .collect();
    let alerts = tempfile::tempdir().unwrap();
    let alert_log = alerts.path().join("alerts.jsonl");
    let mut child = Command::new(env!("CARGO_BIN_EXE_plateau"))
        .args(["check", "--jobs", "--follow", "--log-glob", "run.log"])
        .arg("--remote-dir")
        .arg(dirs[2].path())
        .args(["--jobs-every", "1s", "--alert-log"])
        .arg(&alert_log)
        .stdout(std::process::Stdio::piped())
        .stderr(std::process::Stdio::piped())
        .spawn()
        .unwrap();
    let out = gather(child.stdout.take().unwrap());
    let err = gather(child.stderr.take().unwrap());
    for i in 0..3 {
        let started = format!("plateau: job {} ({}) started on", ids[i], names[i]);
        wait_for_line(&err, "a job's start", |l| l.starts_with(&started));
    }
    let remote_log = dirs[2].path().join("run.log");
    let through = format!(
        "plateau: job {} ({}): following {} on its node, through `srun --overlap --jobid={}",
        ids[2],
        names[2],
        remote_log.display(),
        ids[2]
    );
    wait_for_line(&err, "the remote log read through a step", |l| {
        l.starts_with(&through)
    });
    // Cancel the reading step while the job still writes (it writes for 7.5 s).
    let deadline = Instant::now() + PATIENCE;
    let steps = loop {
        let steps = reading_steps(&ids[2]);
        if !steps.is_empty() {
            break steps;
        }
        assert!(
            Instant::now() < deadline,
            "no reading step of job {}",
            ids[2]
        );
        std::thread::sleep(Duration::from_millis(200));
    };
    std::thread::sleep(Duration::from_secs(1));
    run("scancel", &[&steps[0]]);
    // plateau attaches a new reading step (after its back-off) while the job runs.
    let deadline = Instant::now() + PATIENCE;
    while !reading_steps(&ids[2]).iter().any(|s| s != &steps[0]) {
        assert!(
            Instant::now() < deadline,
            "no new reading step after {} was cancelled",
            steps[0]
        );
        std::thread::sleep(Duration::from_millis(100));
    }

    let deadline = Instant::now() + PATIENCE;
    let status = loop {
        if let Some(status) = child.try_wait().unwrap() {
            break status;
        }
        if Instant::now() > deadline {
            let _ = child.kill();
            panic!(
                "check --jobs --follow did not end: {:?}",
                err.lock().unwrap()
            );
        }
        std::thread::sleep(Duration::from_millis(200));
    };
    std::thread::sleep(Duration::from_millis(300)); // the pipes' last lines
    let err = err.lock().unwrap().clone();
    assert!(
        status.code().is_some_and(|c| c == 0 || c == 1),
        "{status:?}: {err:?}"
    );
    for i in 0..3 {
        let log = dirs[i].path().join("run.log");
        let written = fs::read_to_string(&log).unwrap();
        assert_eq!(rows(&written).len(), rows_written[i]);
        let ended = format!("plateau: job {} ({}) ended (completed)", ids[i], names[i]);
        assert!(
            err.iter().any(|l| l.starts_with(&ended)),
            "{ended}: {err:?}"
        );
        if i < 2 {
            let direct = format!(
                "plateau: job {} ({}): following {}",
                ids[i],
                names[i],
                log.display()
            );
            assert!(err.contains(&direct), "{direct}: {err:?}");
        }
        // Every row once, after the step's cancellation too; the run is finished.
        let summary = format!(
            "{} (job {} {}): finished ({} rows,",
            log.display(),
            ids[i],
            names[i],
            rows_written[i]
        );
        assert!(
            err.iter().any(|l| l.starts_with(&summary)),
            "{summary}: {err:?}"
        );
    }
    // Alerts, if any were raised on these invented rows, carry their job's id.
    let text = fs::read_to_string(&alert_log).unwrap_or_default();
    for line in text.lines() {
        let v: serde_json::Value = serde_json::from_str(line).unwrap();
        let job = v["job"].as_str().unwrap();
        assert!(ids.iter().any(|id| id == job), "{line}");
    }
    let printed = out.lock().unwrap().clone();
    assert_eq!(printed.len(), text.lines().count(), "{printed:?}");
}

/// `plateau watch --jobs` in a pseudo-terminal: three jobs appear in the overview with
/// their id and name within seconds of starting, one read through the scheduler, each
/// marked finished when it ends.
#[test]
#[ignore = "needs a running Slurm: bash scripts/slurm-single-node.sh up"]
fn watch_jobs_shows_three_jobs_in_the_overview() {
    use portable_pty::{native_pty_system, CommandBuilder, PtySize};
    use std::io::Read;

    let dirs = [job_dir("wj-a"), job_dir("wj-b"), job_dir("wj-c")];
    let names = ["wj-alpha", "wj-beta", "wj-gamma"];
    let ids: Vec<String> = (0..3)
        .map(|i| submit_writer(dirs[i].path(), names[i], 80 + 20 * i, 50, 2))
        .collect();
    let pair = native_pty_system()
        .openpty(PtySize {
            rows: 40,
            cols: 120,
            pixel_width: 0,
            pixel_height: 0,
        })
        .unwrap();
    let mut cmd = CommandBuilder::new(env!("CARGO_BIN_EXE_plateau"));
    cmd.args([
        "watch",
        "--jobs",
        "--log-glob",
        "run.log",
        "--jobs-every",
        "1s",
    ]);
    cmd.arg("--remote-dir");
    cmd.arg(dirs[2].path());
    cmd.env("TERM", "xterm-256color");
    let mut child = pair.slave.spawn_command(cmd).unwrap();
    drop(pair.slave);
    let mut reader = pair.master.try_clone_reader().unwrap();
    let mut writer = pair.master.take_writer().unwrap();
    let (tx, output) = std::sync::mpsc::channel::<Vec<u8>>();
    std::thread::spawn(move || {
        let mut buf = [0u8; 8192];
        while let Ok(n) = reader.read(&mut buf) {
            if n == 0 || tx.send(buf[..n].to_vec()).is_err() {
                return;
            }
        }
    });
    let mut screen = vt100::Parser::new(40, 120, 0);
    let mut wait = |what: &str, done: &dyn Fn(&str) -> bool| {
        let deadline = Instant::now() + PATIENCE;
        while !done(&screen.screen().contents()) {
            let left = deadline.saturating_duration_since(Instant::now());
            match output.recv_timeout(left) {
                Ok(bytes) => screen.process(&bytes),
                Err(_) => panic!("{what}: not seen; screen:\n{}", screen.screen().contents()),
            }
        }
        screen.screen().contents()
    };
    let line_of = |text: &str, id: &str, name: &str| {
        text.lines()
            .find(|l| l.contains(&format!("{id} {name} run.log")))
            .map(str::to_string)
    };
    let all_there = |text: &str| (0..3).all(|i| line_of(text, &ids[i], names[i]).is_some());
    let seen = wait("three jobs in the overview", &all_there);
    assert!(seen.contains("jobs: "), "{seen}");
    let all_finished = |text: &str| {
        (0..3).all(|i| line_of(text, &ids[i], names[i]).is_some_and(|l| l.contains("finished")))
    };
    let end = wait("each job marked finished", &all_finished);
    eprintln!("the overview at the end:\n{end}");
    writer.write_all(b"q").unwrap();
    writer.flush().unwrap();
    let deadline = Instant::now() + PATIENCE;
    loop {
        if let Some(status) = child.try_wait().unwrap() {
            assert!(status.success(), "{status:?}");
            break;
        }
        assert!(Instant::now() < deadline, "watch did not quit on q");
        std::thread::sleep(Duration::from_millis(100));
    }
}
