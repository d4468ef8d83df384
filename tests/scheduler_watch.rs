//! Job discovery against a scheduler double: jobs start and end when the test says so,
//! and "the job's node" is a local folder reached by the double's commands (`tail`,
//! `find`), so the path through the scheduler runs for real without one.
#![cfg(unix)]
// Test helpers may unwrap: a failure there is a test failure.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use std::ffi::OsString;
use std::fs::{self, File, OpenOptions};
use std::io::Write;
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};
use std::time::{Duration, Instant, SystemTime};

use plateau::follow::{Backoff, CommandSpec, FollowEvent, Source, Step, SystemClock};
use plateau::scheduler::{
    listing_command, tail_command, DiscoveryOptions, Job, JobEvent, JobId, JobState, JobWatcher,
    Listing, Reading, Scheduler, SchedulerError,
};

const PATIENCE: Duration = Duration::from_secs(30);

/// A scheduler whose jobs the test sets. Paths on "the node" are `node_root` + path.
#[derive(Debug)]
struct Double {
    jobs: Mutex<Result<Vec<Job>, String>>,
    node_root: PathBuf,
}

impl Double {
    fn new(node_root: &Path) -> Arc<Self> {
        Arc::new(Self {
            jobs: Mutex::new(Ok(Vec::new())),
            node_root: node_root.to_path_buf(),
        })
    }

    fn set(&self, jobs: Vec<Job>) {
        *self.jobs.lock().unwrap() = Ok(jobs);
    }

    fn fail(&self, why: &str) {
        *self.jobs.lock().unwrap() = Err(why.to_string());
    }

    fn on_node(&self, path: &Path) -> PathBuf {
        self.node_root.join(path.strip_prefix("/").unwrap_or(path))
    }
}

impl Scheduler for Double {
    fn name(&self) -> &str {
        "double"
    }

    fn jobs(&self, _now: SystemTime) -> Result<Listing, SchedulerError> {
        match &*self.jobs.lock().unwrap() {
            Ok(jobs) => Ok(Listing {
                jobs: jobs.clone(),
                bad_lines: Vec::new(),
            }),
            Err(why) => Err(SchedulerError::Failed {
                program: "double".into(),
                status: "exit status: 1".into(),
                stderr: why.clone(),
            }),
        }
    }

    fn state_of(&self, job: &JobId) -> Result<Option<JobState>, SchedulerError> {
        let jobs = self.jobs(SystemTime::now())?;
        Ok(jobs
            .jobs
            .into_iter()
            .find(|j| &j.id == job)
            .map(|j| j.state))
    }

    fn follow_command(&self, _job: &Job, path: &Path) -> CommandSpec {
        let words: Vec<OsString> = tail_command(&self.on_node(path));
        CommandSpec::from_words(&words).unwrap()
    }

    fn list_command(&self, _job: &Job, dir: &Path, depth: usize) -> CommandSpec {
        CommandSpec::from_words(&listing_command(&self.on_node(dir), depth)).unwrap()
    }
}

fn job(id: &str, name: &str, workdir: &Path, started: SystemTime) -> Job {
    Job {
        id: JobId(id.into()),
        shown_id: id.into(),
        name: name.into(),
        state: JobState::Running,
        node: Some("node1".into()),
        workdir: workdir.to_path_buf(),
        started: Some(started),
    }
}

fn options() -> DiscoveryOptions {
    DiscoveryOptions {
        remote_listing_every: Duration::ZERO,
        end_grace: Duration::from_millis(200),
        backoff: Backoff {
            first: Duration::from_millis(10),
            max: Duration::from_millis(10),
            settled: Duration::from_secs(30),
        },
        ..DiscoveryOptions::default()
    }
}

fn watcher(double: &Arc<Double>, options: DiscoveryOptions) -> JobWatcher {
    let scheduler: Arc<dyn Scheduler> = double.clone();
    JobWatcher::new(scheduler, options, Arc::new(SystemClock)).unwrap()
}

fn append(path: &Path, text: &str) {
    let mut f = OpenOptions::new()
        .create(true)
        .append(true)
        .open(path)
        .unwrap();
    f.write_all(text.as_bytes()).unwrap();
}

fn set_old(path: &Path, age: Duration) {
    let f = File::options().write(true).open(path).unwrap();
    f.set_modified(SystemTime::now() - age).unwrap();
}

fn found(events: Vec<JobEvent>) -> Vec<plateau::scheduler::FoundLog> {
    events
        .into_iter()
        .filter_map(|e| match e {
            JobEvent::LogFound(f) => Some(f),
            _ => None,
        })
        .collect()
}

/// Steps a source until `done` holds for the text it gave (or it finished).
fn read_until(
    source: &mut dyn Source,
    events: &mut Vec<FollowEvent>,
    done: impl Fn(&str, &[FollowEvent]) -> bool,
) -> String {
    let deadline = Instant::now() + PATIENCE;
    loop {
        let text: String = events
            .iter()
            .filter_map(|e| match e {
                FollowEvent::Data { bytes, .. } => {
                    Some(String::from_utf8_lossy(bytes).into_owned())
                }
                _ => None,
            })
            .collect();
        if done(&text, events) {
            return text;
        }
        assert!(Instant::now() < deadline, "gave up; events: {events:?}");
        if source.step(events) == Step::Idle {
            std::thread::sleep(Duration::from_millis(5));
        }
    }
}

fn ended(events: &[FollowEvent]) -> bool {
    matches!(events.last(), Some(FollowEvent::EndOfInput { .. }))
}

/// A visible folder: the job's log is read directly; an old file there (an earlier run's)
/// is not its log; a log that appears later is found in a later round; when the job ends
/// its source reads the rest, then ends.
#[test]
fn visible_folder_is_read_directly() {
    let dir = tempfile::tempdir().unwrap();
    let work = dir.path().join("heat");
    fs::create_dir(&work).unwrap();
    append(&work.join("old.log"), "from an earlier run\n");
    set_old(&work.join("old.log"), Duration::from_secs(3600));
    append(&work.join("run.log"), "0 300\n");
    let double = Double::new(Path::new("/nonexistent"));
    let started = SystemTime::now() - Duration::from_secs(60);
    double.set(vec![job("11", "heat", &work, started)]);
    let mut w = watcher(&double, options());

    let events = w.poll(SystemTime::now());
    assert!(matches!(&events[0], JobEvent::Started(j) if j.id.0 == "11"));
    let mut logs = found(events);
    assert_eq!(logs.len(), 1);
    assert_eq!(logs[0].path, work.join("run.log"));
    assert_eq!(logs[0].reading, Reading::Direct);

    append(&work.join("stage2.log"), "0 310\n");
    let later = found(w.poll(SystemTime::now()));
    assert_eq!(later.len(), 1, "the new log only");
    assert_eq!(later[0].path, work.join("stage2.log"));

    let mut events = Vec::new();
    let source = logs[0].source.as_mut();
    read_until(source, &mut events, |t, _| t == "0 300\n");
    append(&work.join("run.log"), "10 301\n20 30");
    double.set(Vec::new());
    let round = w.poll(SystemTime::now());
    assert!(matches!(&round[..], [JobEvent::Ended(j)] if j.id.0 == "11"));
    let text = read_until(source, &mut events, |_, e| ended(e));
    assert_eq!(text, "0 300\n10 301\n");
    assert!(matches!(
        events.last(),
        Some(FollowEvent::EndOfInput { dropped: Some(p) }) if p.bytes == 5
    ));
}

/// A folder that does not exist here is listed and read on the node through the
/// scheduler's commands; rows appended while it runs arrive; the job's end ends the
/// source (its reader never exits by itself, so the grace period ends it).
#[test]
fn folder_not_visible_is_read_through_the_scheduler() {
    let node = tempfile::tempdir().unwrap();
    let work = PathBuf::from("/plateau-test-node-only/prod");
    let on_node = node.path().join("plateau-test-node-only/prod");
    fs::create_dir_all(&on_node).unwrap();
    append(&on_node.join("prod.log"), "# step energy\n0 -5.0\n");
    append(&on_node.join("notes.txt"), "not a log\n");
    let double = Double::new(node.path());
    double.set(vec![job(
        "12",
        "prod",
        &work,
        SystemTime::now() - Duration::from_secs(5),
    )]);
    let mut w = watcher(&double, options());
    let mut logs = found(w.poll(SystemTime::now()));
    assert_eq!(logs.len(), 1);
    assert_eq!(logs[0].path, work.join("prod.log"));
    assert!(matches!(&logs[0].reading, Reading::Scheduler { command } if command.resumes()));

    let source = logs[0].source.as_mut();
    let mut events = Vec::new();
    read_until(source, &mut events, |t, _| t == "# step energy\n0 -5.0\n");
    append(&on_node.join("prod.log"), "10 -5.1\n");
    read_until(source, &mut events, |t, _| t.ends_with("10 -5.1\n"));
    double.set(Vec::new());
    let round = w.poll(SystemTime::now());
    assert!(matches!(&round[..], [JobEvent::Ended(_)]));
    // The reader on the "node" never exits by itself (tail -F): the grace period ends it.
    let text = read_until(source, &mut events, |_, e| ended(e));
    assert_eq!(text, "# step energy\n0 -5.0\n10 -5.1\n");
}

/// Marking a visible folder node-local sends it through the scheduler.
#[test]
fn node_local_folder_goes_through_the_scheduler() {
    let node = tempfile::tempdir().unwrap();
    let work = node.path().join("scratch/job");
    fs::create_dir_all(&work).unwrap();
    append(&work.join("md.log"), "1 2\n");
    // The double's node sees the same files at the same paths.
    let double = Double::new(Path::new("/"));
    double.set(vec![job("13", "md", &work, SystemTime::now())]);
    let mut opts = options();
    opts.node_local = vec![node.path().join("scratch")];
    let mut w = watcher(&double, opts);
    let logs = found(w.poll(SystemTime::now()));
    assert_eq!(logs.len(), 1);
    assert!(matches!(logs[0].reading, Reading::Scheduler { .. }));
    w.end_all();
}

/// Two jobs in one folder: a log matching both globs goes to the first job only, and the
/// user is told once; `{job}` in the glob tells them apart.
#[test]
fn one_folder_two_jobs() {
    let dir = tempfile::tempdir().unwrap();
    let work = dir.path();
    append(&work.join("run-21.log"), "a\n");
    append(&work.join("run-22.log"), "b\n");
    let double = Double::new(Path::new("/nonexistent"));
    let t0 = SystemTime::now() - Duration::from_secs(1);
    double.set(vec![job("21", "a", work, t0), job("22", "b", work, t0)]);

    let mut w = watcher(&double, options());
    let events = w.poll(SystemTime::now());
    let problems = events
        .iter()
        .filter(|e| matches!(e, JobEvent::Problem(p) if p.contains("{job}")))
        .count();
    assert_eq!(problems, 2, "one per shared file");
    let logs = found(events);
    assert!(logs.iter().all(|l| l.job.id.0 == "21"));
    assert_eq!(logs.len(), 2);
    let again = w.poll(SystemTime::now());
    assert!(again.is_empty(), "told once: {again:?}");

    let mut opts = options();
    opts.log_glob = "run-{job}.log".into();
    let mut w = watcher(&double, opts);
    let logs = found(w.poll(SystemTime::now()));
    let pairs: Vec<(String, String)> = logs
        .iter()
        .map(|l| {
            (
                l.job.id.0.clone(),
                l.path.file_name().unwrap().to_string_lossy().into_owned(),
            )
        })
        .collect();
    assert_eq!(
        pairs,
        vec![
            ("21".to_string(), "run-21.log".to_string()),
            ("22".to_string(), "run-22.log".to_string())
        ]
    );
}

/// A scheduler that does not answer is reported once; nothing is marked ended meanwhile.
#[test]
fn scheduler_failure_is_told_once_and_ends_nothing() {
    let dir = tempfile::tempdir().unwrap();
    append(&dir.path().join("x.log"), "1\n");
    let double = Double::new(Path::new("/nonexistent"));
    double.set(vec![job("31", "x", dir.path(), SystemTime::now())]);
    let mut w = watcher(&double, options());
    assert_eq!(found(w.poll(SystemTime::now())).len(), 1);
    double.fail("Unable to contact slurm controller");
    let first = w.poll(SystemTime::now());
    assert!(matches!(&first[..], [JobEvent::Problem(p)] if p.contains("Unable to contact")));
    assert!(w.poll(SystemTime::now()).is_empty());
    assert_eq!(w.jobs().count(), 1);
}

/// Pending jobs are not followed until they run; a job that finished before plateau
/// looked is not followed at all.
#[test]
fn only_running_jobs_are_followed() {
    let dir = tempfile::tempdir().unwrap();
    let double = Double::new(Path::new("/nonexistent"));
    let mut pending = job("41", "p", dir.path(), SystemTime::now());
    pending.state = JobState::Pending;
    pending.started = None;
    let mut done = job("42", "d", dir.path(), SystemTime::now());
    done.state = JobState::Ended("completed".into());
    double.set(vec![pending.clone(), done]);
    let mut w = watcher(&double, options());
    assert!(w.poll(SystemTime::now()).is_empty());
    pending.state = JobState::Running;
    pending.started = Some(SystemTime::now());
    double.set(vec![pending]);
    let events = w.poll(SystemTime::now());
    assert!(matches!(&events[..], [JobEvent::Started(j)] if j.id.0 == "41"));
}

#[test]
fn too_many_logs_are_capped_and_told() {
    let dir = tempfile::tempdir().unwrap();
    for i in 0..5 {
        append(&dir.path().join(format!("r{i}.log")), "1\n");
    }
    let double = Double::new(Path::new("/nonexistent"));
    double.set(vec![job("51", "x", dir.path(), SystemTime::now())]);
    let mut opts = options();
    opts.max_logs_per_job = 3;
    let mut w = watcher(&double, opts);
    let events = w.poll(SystemTime::now());
    assert!(events
        .iter()
        .any(|e| matches!(e, JobEvent::Problem(p) if p.contains("more than 3"))));
    assert_eq!(found(events).len(), 3);
}

#[test]
fn a_bad_glob_is_refused() {
    let double = Double::new(Path::new("/nonexistent"));
    let scheduler: Arc<dyn Scheduler> = double;
    let mut opts = options();
    opts.log_glob = "[*.log".into();
    let e = JobWatcher::new(scheduler, opts, Arc::new(SystemClock)).unwrap_err();
    assert!(e.contains("[*.log"), "{e}");
}

/// The watcher's own thread hands events to the sink and stops on request.
#[test]
fn spawned_watcher_delivers_and_stops() {
    let dir = tempfile::tempdir().unwrap();
    append(&dir.path().join("run.log"), "1\n");
    let double = Double::new(Path::new("/nonexistent"));
    double.set(vec![job("61", "x", dir.path(), SystemTime::now())]);
    let (tx, rx) = std::sync::mpsc::channel();
    let handle = watcher(&double, options())
        .spawn(Duration::from_millis(20), move |e| tx.send(e).is_ok())
        .unwrap();
    let first = rx.recv_timeout(PATIENCE).unwrap();
    assert!(matches!(first, JobEvent::Started(_)));
    let second = rx.recv_timeout(PATIENCE).unwrap();
    assert!(matches!(second, JobEvent::LogFound(_)));
    handle.stop();
}

/// The commands' layer over discovery (`plateau watch --jobs`, `check --jobs --follow`):
/// a job whose folder is visible and one read through the scheduler become runs of the
/// live engine, tagged with their job; the scheduler's answer that nothing is left ends
/// the watch once both runs have read their logs to the end; every row counted once.
#[test]
fn job_feed_turns_jobs_into_tagged_runs_and_finishes_them() {
    use plateau::analysis::AnalysisOptions;
    use plateau::commands::sources::{JobFeed, JobNote};
    use plateau::live::{self, Live, LiveOptions, RunJob, RunSource};
    use plateau::parse::ParseOptions;

    let here = tempfile::tempdir().unwrap();
    let node = tempfile::tempdir().unwrap();
    let visible = here.path().join("heat");
    fs::create_dir(&visible).unwrap();
    append(
        &visible.join("heat.log"),
        "# step temperature\n0 300\n10 301\n",
    );
    let remote = PathBuf::from("/plateau-test-node-only/feed");
    let on_node = node.path().join("plateau-test-node-only/feed");
    fs::create_dir_all(&on_node).unwrap();
    append(&on_node.join("prod.log"), "# step temperature\n0 310\n");
    let double = Double::new(node.path());
    let started = SystemTime::now() - Duration::from_secs(5);
    let mut pending = job("42", "queued", &visible, started);
    pending.state = JobState::Pending;
    pending.started = None;
    double.set(vec![
        job("31", "heat", &visible, started),
        job("32", "prod", &remote, started),
        pending.clone(),
    ]);
    let scheduler: Arc<dyn Scheduler> = double.clone();
    let mut feed = JobFeed::start(
        scheduler,
        options(),
        Duration::from_millis(20),
        Arc::new(SystemClock),
    )
    .unwrap();
    let live_options = LiveOptions {
        parse: ParseOptions::default(),
        analysis: Some(AnalysisOptions::default()),
        keep_rows: 2000,
        follow: plateau::follow::FollowOptions::default(),
        guess_row_tag: false,
    };
    let (mut live, rx) = Live::start(live_options, Arc::new(SystemClock)).unwrap();
    let mut notes: Vec<JobNote> = Vec::new();
    let rows_of = |live: &Live, job: &str| {
        live.runs()
            .iter()
            .find(|r| r.spec().job.as_ref().is_some_and(|j| j.id == job))
            .map(|r| (r.rows_seen(), r.ended()))
    };
    // As the following loops do every tick: events, then analysis (which also reads the
    // first lines of an output whose layout is guessed from them).
    let pump = |live: &mut Live, notes: &mut Vec<JobNote>, feed: &mut JobFeed| {
        notes.extend(feed.apply(live));
        while let Ok((source, event)) = rx.recv_timeout(Duration::from_millis(20)) {
            live.apply(source, event, live::now_seconds());
        }
        live.analyse();
    };
    let deadline = Instant::now() + PATIENCE;
    while rows_of(&live, "31").map(|r| r.0) != Some(2)
        || rows_of(&live, "32").map(|r| r.0) != Some(1)
    {
        assert!(
            Instant::now() < deadline,
            "runs: {live:?}, notes: {notes:?}"
        );
        pump(&mut live, &mut notes, &mut feed);
    }
    assert_eq!(feed.summary(), "jobs: 2 running, 1 waiting");
    assert!(!feed.nothing_left());
    let heat = live
        .runs()
        .iter()
        .find(|r| r.spec().job.as_ref().is_some_and(|j| j.id == "31"))
        .unwrap();
    assert_eq!(
        heat.spec().job,
        Some(RunJob {
            id: "31".into(),
            name: "heat".into()
        })
    );
    assert_eq!(
        heat.spec().label,
        visible.join("heat.log").display().to_string()
    );
    assert_eq!(
        heat.spec().source,
        RunSource::Path(visible.join("heat.log"))
    );
    let texts: Vec<String> = notes.iter().map(ToString::to_string).collect();
    assert!(
        texts.contains(&format!(
            "job 31 (heat) started on node1 in {}",
            visible.display()
        )),
        "{texts:?}"
    );
    assert!(texts.iter().any(|t| t.starts_with("job 32 (prod): following /plateau-test-node-only/feed/prod.log on its node, through `tail")), "{texts:?}");

    // More rows, then every job ends: the runs read the rest and finish.
    append(&visible.join("heat.log"), "20 302\n");
    append(&on_node.join("prod.log"), "10 311\n");
    while rows_of(&live, "31").map(|r| r.0) != Some(3)
        || rows_of(&live, "32").map(|r| r.0) != Some(2)
    {
        assert!(
            Instant::now() < deadline,
            "runs: {live:?}, notes: {notes:?}"
        );
        pump(&mut live, &mut notes, &mut feed);
    }
    double.set(Vec::new());
    while !(feed.nothing_left() && live.runs().iter().all(|r| r.ended())) {
        assert!(
            Instant::now() < deadline,
            "runs: {live:?}, notes: {notes:?}"
        );
        pump(&mut live, &mut notes, &mut feed);
    }
    assert_eq!(rows_of(&live, "31"), Some((3, true)));
    assert_eq!(rows_of(&live, "32"), Some((2, true)));
    assert_eq!(live.runs().len(), 2, "one run per log, none twice");
    let ended: Vec<&str> = notes
        .iter()
        .filter_map(|n| match n {
            JobNote::Ended { job, runs } if runs.len() == 1 => Some(job.id.0.as_str()),
            _ => None,
        })
        .collect();
    assert_eq!(ended, ["31", "32"]);
    assert_eq!(feed.summary(), "jobs: 0 running, 2 ended");
    feed.stop();
    live.stop();
}

/// While the scheduler does not answer, the feed never says that nothing is left (a
/// watch must not end because the scheduler is down), and it says why it sees no jobs.
#[test]
fn job_feed_without_an_answer_waits() {
    use plateau::analysis::AnalysisOptions;
    use plateau::commands::sources::{JobFeed, JobNote};
    use plateau::live::{Live, LiveOptions};
    use plateau::parse::ParseOptions;

    let double = Double::new(Path::new("/nonexistent"));
    double.fail("slurm_load_jobs error: Unable to contact slurm controller");
    let scheduler: Arc<dyn Scheduler> = double.clone();
    let mut feed = JobFeed::start(
        scheduler,
        options(),
        Duration::from_millis(20),
        Arc::new(SystemClock),
    )
    .unwrap();
    let live_options = LiveOptions {
        parse: ParseOptions::default(),
        analysis: Some(AnalysisOptions::default()),
        keep_rows: 2000,
        follow: plateau::follow::FollowOptions::default(),
        guess_row_tag: false,
    };
    let (mut live, _rx) = Live::start(live_options, Arc::new(SystemClock)).unwrap();
    let deadline = Instant::now() + PATIENCE;
    let mut notes = Vec::new();
    while notes.is_empty() {
        assert!(Instant::now() < deadline);
        notes.extend(feed.apply(&mut live));
        std::thread::sleep(Duration::from_millis(10));
    }
    assert!(matches!(&notes[0], JobNote::Problem(p) if p.contains("Unable to contact")));
    assert!(!feed.nothing_left());
    assert!(
        feed.summary().contains("Unable to contact"),
        "{}",
        feed.summary()
    );
    // The scheduler answers again, with no job: now nothing is left.
    double.set(Vec::new());
    while !feed.nothing_left() {
        assert!(Instant::now() < deadline);
        feed.apply(&mut live);
        std::thread::sleep(Duration::from_millis(10));
    }
    assert_eq!(feed.summary(), "jobs: 0 running");
    feed.stop();
}
