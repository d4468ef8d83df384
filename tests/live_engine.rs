//! The live-run engine: runs found by glob patterns now and later, events routed to their
//! run, rows parsed and analysed, chart history of folded rows. Waits on conditions with a
//! generous timeout; nothing asserts on timing.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::fs::{self, OpenOptions};
use std::io::Write;
use std::path::Path;
use std::sync::Arc;
use std::time::{Duration, Instant};

use plateau::alert::{RunStatus, Thresholds};
use plateau::analysis::AnalysisOptions;
use plateau::follow::{FollowOptions, FollowReceiver, SystemClock};
use plateau::live::{self, Live, LiveOptions, LiveRun, Presence, RunId, RunSource, RunSpec};
use plateau::parse::ParseOptions;
use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

const PATIENCE: Duration = Duration::from_secs(20);

fn options() -> LiveOptions {
    LiveOptions {
        parse: ParseOptions::default(),
        analysis: Some(AnalysisOptions {
            thresholds: Thresholds::default(),
            ..AnalysisOptions::default()
        }),
        keep_rows: 2000,
        follow: FollowOptions::default(),
        guess_row_tag: true,
    }
}

fn log(rows: u64) -> Vec<u8> {
    let spec = ScenarioSpec::new(Scenario::Equilibration, LogStyle::Whitespace, rows);
    let mut text = Vec::new();
    write_log(&spec, &mut text).unwrap();
    text
}

/// An analysed run with no follower: its rows are handed over with `push_lines`.
fn fed_by_hand(keep_rows: usize) -> LiveRun {
    LiveRun::new(
        RunId(0),
        RunSpec::new(RunSource::Path(Path::new("x.log").to_path_buf())),
        ParseOptions::default(),
        options().analysis,
        keep_rows,
    )
}

/// Applies events until `done` holds.
fn pump(live: &mut Live, rx: &FollowReceiver, done: impl Fn(&Live) -> bool) {
    let deadline = Instant::now() + PATIENCE;
    while !done(live) {
        let left = deadline.saturating_duration_since(Instant::now());
        let (source, event) = rx
            .recv_timeout(left)
            .unwrap_or_else(|e| panic!("condition not met ({e}): {live:?}"));
        live.apply(source, event, live::now_seconds());
        live.analyse();
    }
}

#[test]
fn a_pattern_follows_matching_files_now_and_later() {
    let dir = tempfile::tempdir().unwrap();
    fs::write(dir.path().join("a.log"), log(50)).unwrap();
    fs::write(dir.path().join("notes.txt"), "not a log\n").unwrap();
    let (mut live, rx) = Live::start(options(), Arc::new(SystemClock)).unwrap();
    let pattern = dir.path().join("*.log");
    let ids = live.add_argument(&pattern).unwrap();
    assert_eq!(ids, vec![RunId(0)]);
    assert_eq!(live.patterns()[0].matched, 1);

    // A file that appears later is found by the next look.
    fs::write(dir.path().join("b.log"), log(30)).unwrap();
    assert_eq!(live.discover().unwrap(), vec![RunId(1)]);
    assert!(live.discover().unwrap().is_empty(), "found once only");
    let spec = live.run(RunId(1)).unwrap().spec().clone();
    assert_eq!(spec.found_by.as_deref(), pattern.to_str());

    pump(&mut live, &rx, |l| {
        l.runs().iter().map(LiveRun::rows_seen).collect::<Vec<_>>() == vec![50, 30]
    });
    let run = live.run(RunId(0)).unwrap();
    assert_eq!(run.feed().presence, Presence::Reading);
    assert_eq!(run.arrivals().len(), 50);
    assert!(run.analysis().is_some());
    live.stop();
}

#[test]
fn the_same_file_is_followed_once_and_standard_input_once() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("run.log");
    let (mut live, _rx) = Live::start(options(), Arc::new(SystemClock)).unwrap();
    let a = live.add_argument(&path).unwrap();
    let b = live
        .add(RunSpec::new(RunSource::Path(path.clone())))
        .unwrap();
    assert_eq!(a, vec![b]);
    assert_eq!(live.runs().len(), 1);
    live.add(RunSpec::new(RunSource::Stdin)).unwrap();
    let again = live.add(RunSpec::new(RunSource::Stdin));
    assert!(matches!(again, Err(live::LiveError::StdinTwice)));
    live.stop();
}

#[test]
fn rows_appended_later_reach_the_run_and_old_rows_fold_into_the_chart_history() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("run.log");
    let text = log(6000);
    let split = text.len() / 2
        + text[text.len() / 2..]
            .iter()
            .position(|&b| b == b'\n')
            .unwrap()
        + 1;
    fs::write(&path, &text[..split]).unwrap();
    let (mut live, rx) = Live::start(options(), Arc::new(SystemClock)).unwrap();
    live.add_argument(&path).unwrap();
    let first = |l: &Live| l.run(RunId(0)).unwrap().rows_seen();
    pump(&mut live, &rx, |l| first(l) > 2900);
    let mut f = OpenOptions::new().append(true).open(&path).unwrap();
    f.write_all(&text[split..]).unwrap();
    drop(f);
    pump(&mut live, &rx, |l| first(l) == 6000);
    let run = live.run(RunId(0)).unwrap();
    // Memory is bounded: the table keeps at most the cap, the rest is folded.
    assert!(run.table().rows() <= 2000 + 1000, "{}", run.table().rows());
    assert!(run.rows_forgotten() > 0);
    // The chart still sees every row of the (single) segment.
    let series = run.series(0, 1).unwrap();
    assert_eq!(series.rows(), 6000);
    let buckets = series.resample(0, 6000, 100);
    assert_eq!(buckets.iter().map(|b| b.rows).sum::<u64>(), 6000);
    live.stop();
}

#[test]
fn a_file_that_does_not_exist_yet_is_waited_for() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("later.log");
    let (mut live, rx) = Live::start(options(), Arc::new(SystemClock)).unwrap();
    live.add_argument(&path).unwrap();
    pump(&mut live, &rx, |l| {
        l.run(RunId(0)).unwrap().feed().presence == Presence::Waiting
    });
    fs::write(&path, log(20)).unwrap();
    pump(&mut live, &rx, |l| {
        l.run(RunId(0)).unwrap().rows_seen() == 20
    });
    assert!(!live.run(RunId(0)).unwrap().feed().notices.is_empty());
    live.stop();
}

#[test]
fn a_run_fed_by_hand_needs_no_thread() {
    let mut run = fed_by_hand(2000);
    let text = log(300);
    run.push_lines(&text, 100.0);
    assert!(run.analyse());
    assert!(!run.analyse(), "nothing new: no second analysis");
    assert_eq!(run.rows_seen(), 300);
    assert_eq!(run.last_row_arrival(), Some(100.0));
    // Far later with no row: stalled (the limit is at least a minute).
    assert!(run.check_stall(100.0 + 3600.0));
    assert!(run
        .active_alerts()
        .iter()
        .any(|a| a.kind == plateau::alert::AlertKind::Stalled));
    // The status says so at once, without waiting for a row that may never come.
    assert_eq!(run.analysis().unwrap().status, RunStatus::Stalled);
    let report = run.report().unwrap();
    assert_eq!(report.rows, 300);
}

#[test]
fn a_source_handed_over_ready_made_is_a_run_like_any_other() {
    use plateau::follow::ReaderSource;
    let (mut live, rx) = Live::start(options(), Arc::new(SystemClock)).unwrap();
    let reader = ReaderSource::new(
        "node42: tail -F md.log",
        std::io::Cursor::new(log(40)),
        Arc::new(SystemClock),
        &FollowOptions::default(),
    );
    let spec = RunSpec {
        source: RunSource::Other("node42: tail -F md.log".into()),
        label: "job 1234 md.log".into(),
        found_by: None,
        job: None,
    };
    // Such a run cannot be started from its description alone.
    assert!(matches!(
        live.add(spec.clone()),
        Err(live::LiveError::NeedsSource(_))
    ));
    let id = live.add_source(spec, Box::new(reader)).unwrap();
    pump(&mut live, &rx, |l| l.run(id).unwrap().ended());
    let run = live.run(id).unwrap();
    assert_eq!(run.rows_seen(), 40);
    assert_eq!(run.feed().presence, Presence::Ended);
    assert_eq!(run.spec().label, "job 1234 md.log");
    live.stop();
}

#[test]
fn a_run_with_only_its_preamble_is_waiting_not_settling() {
    let mut run = LiveRun::new(
        RunId(0),
        RunSpec::new(RunSource::Path(Path::new("x.log").to_path_buf())),
        ParseOptions::default(),
        options().analysis,
        2000,
    );
    let text = log(30);
    let header: Vec<u8> = String::from_utf8(text.clone())
        .unwrap()
        .lines()
        .take_while(|l| l.starts_with('#'))
        .map(|l| format!("{l}\n"))
        .collect::<String>()
        .into_bytes();
    assert!(!header.is_empty());
    run.push_lines(&header, 100.0);
    run.analyse();
    assert_eq!(run.rows_seen(), 0);
    assert_eq!(run.analysis().unwrap().status, RunStatus::Waiting);
    // The first rows end the wait.
    run.push_lines(&text[header.len()..], 101.0);
    run.analyse();
    assert_eq!(run.rows_seen(), 30);
    assert_ne!(run.analysis().unwrap().status, RunStatus::Waiting);
}

#[test]
fn runs_added_with_their_own_analysis_options_keep_them() {
    let dir = tempfile::tempdir().unwrap();
    let (a, b) = (dir.path().join("a.log"), dir.path().join("b.log"));
    fs::write(&a, log(50)).unwrap();
    fs::write(&b, log(50)).unwrap();
    let (mut live, rx) = Live::start(options(), Arc::new(SystemClock)).unwrap();
    let own = AnalysisOptions {
        atoms: Some(3000),
        ..AnalysisOptions::default()
    };
    let ida = live
        .add_with_analysis(RunSpec::new(RunSource::Path(a)), own)
        .unwrap();
    let idb = live.add(RunSpec::new(RunSource::Path(b))).unwrap();
    pump(&mut live, &rx, |l| {
        [ida, idb]
            .iter()
            .all(|&id| l.run(id).unwrap().rows_seen() == 50)
    });
    let atoms = |id| live.run(id).unwrap().analysis_options().unwrap().atoms;
    assert_eq!(atoms(ida), Some(3000));
    assert_eq!(atoms(idb), None, "the shared options");
    live.stop();
}

/// A run that writes a row now and then: its statistics are computed after a tenth more
/// rows, and also on every row read once it has been quiet for a second (at most once
/// every `REFRESH_SECONDS`), so that a slow run's statistics are not hours old.
#[test]
fn a_quiet_run_has_statistics_of_every_row_read() {
    let mut run = fed_by_hand(1_000_000);
    let text = log(1030);
    let lines: Vec<&[u8]> = text.split_inclusive(|&b| b == b'\n').collect();
    let count = |run: &LiveRun| {
        let a = run.analysis().unwrap();
        a.columns.iter().map(|c| c.count).max().unwrap()
    };
    // 1000 rows at once, then one row every 5 s.
    let header = lines.len() - 1030;
    run.push_lines(&lines[..header + 1000].concat(), 100.0);
    run.analyse();
    assert_eq!(count(&run), 1000);
    let mut now = 100.0;
    for line in &lines[header + 1000..header + 1010] {
        now += 5.0;
        run.push_lines(line, now);
        run.analyse();
    }
    assert_eq!(run.rows_seen(), 1010);
    assert_eq!(
        count(&run),
        1000,
        "fewer than a tenth more rows: not yet computed again"
    );
    // Half a second later: not quiet yet.
    assert!(!run.check_stall(now + 0.5));
    assert_eq!(count(&run), 1000);
    // Quiet for a second: every row read.
    run.check_stall(now + 1.5);
    assert_eq!(count(&run), 1010);
    // One more row, quiet again soon after: not before REFRESH_SECONDS since the last.
    now += 2.0;
    run.push_lines(lines[header + 1010], now);
    run.analyse();
    run.check_stall(now + 1.5);
    assert_eq!(count(&run), 1010);
    run.check_stall(now + live::REFRESH_SECONDS);
    assert_eq!(count(&run), 1011);
}

/// A followed run of `name=value` rows whose layout was set from its first lines: a name
/// first written later is not read, and the run says so once, naming the line.
#[test]
fn a_name_first_written_later_is_told_once_while_following() {
    let mut text = String::new();
    for r in 0..60 {
        text.push_str(&format!(
            "step={} time={}.0 temperature=300.{r}\n",
            r * 10,
            r
        ));
    }
    let mut parse = ParseOptions::default();
    plateau::parse::sniff::sniff_layout(text.as_bytes(), &parse).apply(&mut parse);
    assert!(parse.records.is_some());
    let mut run = LiveRun::new(
        RunId(0),
        RunSpec::new(RunSource::Path(Path::new("x.log").to_path_buf())),
        parse,
        options().analysis,
        2000,
    );
    run.push_lines(text.as_bytes(), 100.0);
    run.analyse();
    assert!(run.take_later_names().is_empty());
    run.push_lines(b"step=600 time=60.0 temperature=301 pressure=1.5\n", 101.0);
    run.push_lines(b"step=610 time=61.0 temperature=301 pressure=2.5\n", 102.0);
    run.analyse();
    let told = run.take_later_names();
    assert_eq!(told.len(), 1, "{told:?}");
    assert!(
        told[0].contains("line 61") && told[0].contains("pressure"),
        "{told:?}"
    );
    assert!(run.feed().notices.iter().any(|n| n.text == told[0]));
    assert!(run.take_later_names().is_empty(), "told once");
    assert_eq!(run.rows_seen(), 62, "the rows themselves are read");
}
