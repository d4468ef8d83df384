//! Stages of a followed run: the invented five-stage preparation (src/scenario/stages.rs)
//! followed as it is written, its stage list judged as the rows come, and at its end the
//! same list as `plateau report` gives for the finished file. Waits on conditions with a
//! generous timeout; nothing asserts on timing.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::path::Path;
use std::sync::Arc;
use std::time::{Duration, Instant};

use plateau::analysis::AnalysisOptions;
use plateau::cli::{AlertArgs, InputArgs, StageArgs};
use plateau::commands::check::analysis_options;
use plateau::commands::report::analyse_run;
use plateau::config::Settings;
use plateau::follow::{FollowOptions, SystemClock};
use plateau::live::{self, Live, LiveOptions, LiveRun, RunId, RunSource, RunSpec};
use plateau::parse::ParseOptions;
use plateau::scenario::stages::{five_stage_logs, StageLogs, StagePlan};
use plateau::stages::{StageKind, StageRecord, StagedRun};

const PATIENCE: Duration = Duration::from_secs(30);

fn opts(dir: &Path) -> AnalysisOptions {
    let settings = Settings::resolve(&InputArgs::default(), dir).unwrap();
    analysis_options(&settings, &AlertArgs::default()).unwrap()
}

/// Following options for the stage tests: every row kept (no folding).
fn live_options(dir: &Path) -> LiveOptions {
    LiveOptions {
        parse: ParseOptions::default(),
        analysis: Some(opts(dir)),
        keep_rows: 1_000_000,
        follow: FollowOptions::default(),
        guess_row_tag: false,
    }
}

/// What `plateau report` (with `--chain` for several files) makes of finished files.
fn report_of(files: &[std::path::PathBuf]) -> (plateau::report::Report, StagedRun) {
    let (report, staged, _) = analyse_run(
        files,
        &InputArgs::default(),
        &AlertArgs::default(),
        &StageArgs::default(),
    )
    .unwrap();
    (report, staged)
}

fn report_stages(files: &[std::path::PathBuf]) -> Vec<StageRecord> {
    report_of(files).0.stages
}

/// The five-stage preparation of `plan` written as one log, `prep.log`, in a new folder.
fn written_prep(plan: &StagePlan) -> (StageLogs, tempfile::TempDir, std::path::PathBuf) {
    let logs = five_stage_logs(plan);
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("prep.log");
    std::fs::write(&path, &logs.one_log).unwrap();
    (logs, dir, path)
}

fn kinds(stages: &[StageRecord]) -> Vec<StageKind> {
    stages.iter().map(|s| s.kind).collect()
}

/// The one-log preparation fed by hand in uneven chunks (lines cut anywhere), analysed
/// after each: the current stage follows the writing, and the final list is the report's.
#[test]
fn a_followed_staged_log_ends_with_the_reports_stage_list() {
    let (logs, dir, path) = written_prep(&StagePlan::default());
    let expected = report_stages(std::slice::from_ref(&path));
    assert_eq!(expected.len(), 5, "{expected:#?}");

    let mut run = LiveRun::new(
        RunId(0),
        RunSpec::new(RunSource::Path(path.clone())),
        ParseOptions::default(),
        Some(opts(dir.path())),
        1_000_000,
    );
    let bytes = logs.one_log.as_bytes();
    let mut at = 0usize;
    let mut chunk = 977usize;
    let mut seen_current: Vec<StageKind> = Vec::new();
    while at < bytes.len() {
        let end = (at + chunk).min(bytes.len());
        run.push_lines(&bytes[at..end], 1_800_000_000.0 + at as f64 * 1e-4);
        run.analyse();
        if let Some(k) = run.stages().and_then(|s| s.current()).map(|s| s.kind) {
            if seen_current.last() != Some(&k) {
                seen_current.push(k);
            }
        }
        at = end;
        chunk = chunk * 7 % 4099 + 300;
    }
    // While written, the run was seen in its minimization, then heating, then later stages.
    assert_eq!(seen_current.first(), Some(&StageKind::Minimization));
    assert!(
        seen_current.contains(&StageKind::Heating),
        "{seen_current:?}"
    );
    run.conclude();
    let live = run.stages().unwrap();
    assert!(live.final_judgement);
    assert_eq!(live.rows_folded, 0);
    assert_eq!(
        serde_json::to_value(&live.stages).unwrap(),
        serde_json::to_value(&expected).unwrap()
    );
}

/// The same through the live engine, from a file on disk: a real follower, the report's list.
#[test]
fn the_live_engine_judges_a_file_it_follows() {
    let (logs, dir, path) = written_prep(&StagePlan::default());
    let expected = report_stages(std::slice::from_ref(&path));
    let options = live_options(dir.path());
    let (mut live, rx) = Live::start(options, Arc::new(SystemClock)).unwrap();
    live.add_argument(&path).unwrap();
    let rows = logs.truth.rows as u64;
    let deadline = Instant::now() + PATIENCE;
    while live.runs()[0].rows_seen() < rows {
        let left = deadline.saturating_duration_since(Instant::now());
        let (source, event) = rx.recv_timeout(left).expect("all rows read");
        live.apply(source, event, live::now_seconds());
        live.analyse();
    }
    let mut runs = live.stop();
    let run = &mut runs[0];
    assert!(run.stages().is_some());
    run.conclude();
    let got = &run.stages().unwrap().stages;
    assert_eq!(kinds(got), kinds(&expected));
    assert_eq!(
        serde_json::to_value(got).unwrap(),
        serde_json::to_value(&expected).unwrap()
    );
}

const NAMES: [&str; 5] = ["min.log", "heat.log", "nvt.log", "npt.log", "prod.log"];

/// Writes the chain's files one after another, each in pieces of 40 lines with a short
/// pause (a simulation writing its stages), the next file created once the previous is
/// complete.
fn write_chain_slowly(dir: std::path::PathBuf, files: [String; 5]) -> std::thread::JoinHandle<()> {
    use std::io::Write;
    std::thread::spawn(move || {
        for (name, text) in NAMES.iter().zip(files) {
            let mut f = std::fs::File::create(dir.join(name)).unwrap();
            let lines: Vec<&str> = text.split_inclusive('\n').collect();
            for piece in lines.chunks(40) {
                f.write_all(piece.concat().as_bytes()).unwrap();
                f.flush().unwrap();
                std::thread::sleep(Duration::from_millis(15));
            }
            std::thread::sleep(Duration::from_millis(150));
        }
    })
}

/// A chain followed through the live engine while a writer thread writes its stage files
/// one after another (later files do not exist when following starts): one run, the
/// files read in order, and at the end the stage list of `report --chain` on the finished
/// files, times continued across the files as report continues them.
#[test]
fn a_chain_followed_while_written_ends_with_report_chains_stage_list() {
    let logs = five_stage_logs(&StagePlan::default());
    let dir = tempfile::tempdir().unwrap();
    let files: Vec<std::path::PathBuf> = NAMES.iter().map(|n| dir.path().join(n)).collect();
    let options = live_options(dir.path());
    let (mut live, rx) = Live::start(options, Arc::new(SystemClock)).unwrap();
    let id = live.add_chain(&files).unwrap();
    assert_eq!(live.runs().len(), 1);
    let writer = write_chain_slowly(dir.path().to_path_buf(), logs.chain.clone());
    let rows = logs.truth.rows as u64;
    let deadline = Instant::now() + PATIENCE;
    let mut live_files = Vec::new();
    loop {
        let run = live.run(id).unwrap();
        let at = run.chain().unwrap().live();
        if live_files.last() != Some(&at) {
            live_files.push(at);
        }
        if run.rows_seen() >= rows && at == 4 {
            break;
        }
        let left = deadline.saturating_duration_since(Instant::now());
        assert!(!left.is_zero(), "not all rows read: {:?}", live.run(id));
        if let Ok((source, event)) = rx.recv_timeout(left.min(Duration::from_millis(200))) {
            live.apply(source, event, live::now_seconds());
        }
        live.analyse();
    }
    writer.join().unwrap();
    // Following went through the files in order.
    assert_eq!(live_files, vec![0, 1, 2, 3, 4]);
    let mut runs = live.stop();
    let run = &mut runs[0];
    run.conclude();
    assert_eq!(run.rows_seen(), rows);
    let expected = report_stages(&files);
    let got = &run.stages().unwrap().stages;
    assert_eq!(kinds(got), kinds(&expected), "{got:#?}");
    assert_eq!(
        serde_json::to_value(got).unwrap(),
        serde_json::to_value(&expected).unwrap()
    );
}

/// `check --follow --chain` while the stage files are written: it follows to the last
/// file, ends when the `--pid` process exits, and its closing line lists the stages with
/// the verdicts `check --chain` gives on the finished files.
#[test]
fn check_follow_chain_lists_the_stages_of_check_chain() {
    use std::process::{Command as Std, Stdio};
    let logs = five_stage_logs(&StagePlan::default());
    let dir = tempfile::tempdir().unwrap();
    let files: Vec<std::path::PathBuf> = NAMES.iter().map(|n| dir.path().join(n)).collect();
    let mut job = Std::new("sleep").arg("600").spawn().unwrap();
    let bin = assert_cmd::cargo::cargo_bin("plateau");
    let follower = Std::new(&bin)
        .args([
            "check",
            "--follow",
            "--chain",
            "--stall-after",
            "1h",
            "--pid",
        ])
        .arg(job.id().to_string())
        .args(&files)
        .current_dir(dir.path())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    std::thread::sleep(Duration::from_millis(300));
    let writer = write_chain_slowly(dir.path().to_path_buf(), logs.chain.clone());
    writer.join().unwrap();
    // Let the follower read the last rows before the job ends.
    std::thread::sleep(Duration::from_millis(2500));
    job.kill().unwrap();
    job.wait().unwrap();
    let out = follower.wait_with_output().unwrap();
    let stderr = String::from_utf8_lossy(&out.stderr).into_owned();
    let finished = Std::new(&bin)
        .args(["check", "--chain"])
        .args(&files)
        .current_dir(dir.path())
        .output()
        .unwrap();
    let stages_of = |text: &str| -> String {
        let line = text
            .lines()
            .find(|l| l.contains("; stages: "))
            .unwrap_or_else(|| panic!("no stage list in {text}"));
        let list = line.split("; stages: ").nth(1).unwrap();
        list.split(';')
            .next()
            .unwrap()
            .trim_end_matches(')')
            .to_string()
    };
    let want = stages_of(&String::from_utf8_lossy(&finished.stderr));
    assert_eq!(stages_of(&stderr), want, "{stderr}");
    assert!(
        want.starts_with("minimization converged, heating followed-ramp"),
        "{want}"
    );
    assert!(stderr.contains("read up to file 5 of 5"), "{stderr}");
    assert!(
        stderr.contains(&format!("{} (chain of 5)", files[0].display())),
        "{stderr}"
    );
}

/// The run's onset row (through the run) and each analysed column's production mean and
/// count, as a finished file's report gives them for its last stage.
fn production_of(a: &plateau::analysis::RunAnalysis) -> (Option<usize>, Vec<(String, f64, usize)>) {
    let onset = a
        .equilibration
        .and_then(|e| e.row())
        .map(|r| a.first_row + r);
    let columns = a
        .columns
        .iter()
        .filter_map(|c| {
            let p = c.production.as_ref()?;
            Some((c.name.clone(), p.mean, p.count))
        })
        .collect();
    (onset, columns)
}

/// Follows `log` as it is written (uneven chunks), keeping at most `keep_rows` rows, and
/// returns the run once concluded.
fn follow_in_chunks(path: &Path, log: &str, keep_rows: usize) -> LiveRun {
    let mut run = LiveRun::new(
        RunId(0),
        RunSpec::new(RunSource::Path(path.to_path_buf())),
        ParseOptions::default(),
        Some(opts(path.parent().unwrap())),
        keep_rows,
    );
    let bytes = log.as_bytes();
    let (mut at, mut chunk) = (0usize, 977usize);
    while at < bytes.len() {
        let end = (at + chunk).min(bytes.len());
        run.push_lines(&bytes[at..end], 1_800_000_000.0 + at as f64 * 1e-4);
        run.analyse();
        at = end;
        chunk = chunk * 7 % 4099 + 300;
    }
    run.conclude();
    run
}

/// A followed one-log preparation: its statistics are those of the production stage
/// alone, as `report` gives them (onset, mean and count of every column), not of the
/// stages before it in the same segment.
#[test]
fn a_followed_preparation_has_the_production_statistics_of_report() {
    let (logs, _dir, path) = written_prep(&StagePlan::default());
    let (_, staged) = report_of(std::slice::from_ref(&path));
    let expected = production_of(&staged.analysis);
    let production = staged.stages.last().unwrap();
    assert_eq!(production.kind, StageKind::Production);
    assert_eq!(production.first_row as usize, logs.truth.production_row);

    let run = follow_in_chunks(&path, &logs.one_log, 1_000_000);
    let live = run.analysis().unwrap();
    let got = production_of(live);
    let onset = got.0.expect("an onset");
    assert!(
        onset >= logs.truth.production_row,
        "onset {onset} before production"
    );
    assert_eq!(got.0, expected.0);
    assert_eq!(got.1.len(), expected.1.len());
    for ((name, mean, count), (ename, emean, ecount)) in got.1.iter().zip(&expected.1) {
        assert_eq!((name, count), (ename, ecount));
        assert!(
            (mean - emean).abs() <= 1e-9 * emean.abs().max(1.0),
            "{name}: {mean} vs {emean}"
        );
    }
}

/// The same preparation with a long production, followed under a small memory cap: the
/// stages before the rows kept are still listed (as judged before they were folded), the
/// list is the report's, and the production statistics leave out everything before
/// production: the mean and count are exact once folded (analysis::folded), the onset is
/// on block means.
#[test]
fn a_folded_preparation_keeps_its_stages_and_its_production_statistics() {
    let plan = StagePlan {
        prod_rows: 9_000,
        ..StagePlan::default()
    };
    let (logs, _dir, path) = written_prep(&plan);
    let (_, staged) = report_of(std::slice::from_ref(&path));
    let (expected_onset, expected) = production_of(&staged.analysis);

    let keep = plateau::fold::MIN_KEEP_ROWS;
    let run = follow_in_chunks(&path, &logs.one_log, keep);
    let stages = run.stages().unwrap();
    assert!(stages.rows_folded > 0, "not folded: {stages:?}");
    assert_eq!(kinds(&stages.stages), kinds(&staged.stages));
    for (got, want) in stages.stages.iter().zip(&staged.stages) {
        assert_eq!(got.first_row, want.first_row, "{got:#?}");
        assert_eq!(got.rows, want.rows, "{got:#?}");
    }
    let live = run.analysis().unwrap();
    assert!(live.folding.is_some());
    let (onset, got) = production_of(live);
    let onset = onset.expect("an onset");
    assert!(
        onset >= logs.truth.production_row,
        "onset {onset} before production"
    );
    let expected_onset = expected_onset.unwrap();
    // Searched on block means once folded (analysis::folded): the same plateau, within ten
    // blocks of the report's onset.
    let block = live.folding.as_ref().unwrap().block_rows;
    assert!(
        onset.abs_diff(expected_onset) <= 10 * block,
        "onset {onset} vs {expected_onset} (blocks of {block})"
    );
    let sem_of = |a: &plateau::analysis::RunAnalysis, name: &str| {
        let p = a
            .columns
            .iter()
            .find(|c| c.name == name)?
            .production
            .as_ref()?;
        p.sem_block.or(p.sem_from_g)
    };
    for (name, mean, count) in &got {
        let (_, emean, _) = expected.iter().find(|e| &e.0 == name).unwrap();
        // Only production rows are in it, and its mean is the report's within the
        // report's standard error (3 SE).
        assert!(*count <= plan.prod_rows, "{name}: {count} rows");
        if let Some(se) = sem_of(&staged.analysis, name) {
            assert!(
                (mean - emean).abs() <= 3.0 * se + 1e-12,
                "{name}: {mean} vs {emean} ± {se}"
            );
        }
    }
}

/// Rows appended to a file of a chain after following moved past it are not read (the
/// stages are consecutive): the run says so once, and its rows stay those of the files in
/// order.
#[test]
fn rows_written_to_a_file_the_chain_moved_past_are_told_once_and_not_read() {
    let logs = five_stage_logs(&StagePlan::default());
    let dir = tempfile::tempdir().unwrap();
    let files: Vec<std::path::PathBuf> = NAMES.iter().map(|n| dir.path().join(n)).collect();
    for (path, text) in files.iter().zip(&logs.chain).take(2) {
        std::fs::write(path, text).unwrap();
    }
    let mut run = LiveRun::new(
        RunId(0),
        RunSpec::new(RunSource::Path(files[0].clone())),
        ParseOptions::default(),
        Some(opts(dir.path())),
        1_000_000,
    );
    run.set_chain(files.clone());
    let data = |text: &str| plateau::follow::FollowEvent::Data {
        bytes: text.as_bytes().to_vec(),
        first_line: 1,
        lines: text.matches('\n').count() as u64,
        arrival: std::time::SystemTime::now(),
    };
    let now = live::now_seconds();
    run.apply_chain(0, data(&logs.chain[0]), now);
    run.apply_chain(1, data(&logs.chain[1]), now);
    run.analyse();
    assert_eq!(
        run.chain().unwrap().live(),
        1,
        "moved on to the second file"
    );
    let rows = run.rows_seen();
    let told = |run: &LiveRun| {
        run.feed()
            .notices
            .iter()
            .filter(|n| n.text.contains("grew after following moved past it"))
            .count()
    };
    assert_eq!(told(&run), 0);
    // The first file grows twice after following moved past it.
    let late = logs.chain[1].lines().last().unwrap().to_string() + "\n";
    run.apply_chain(0, data(&late), now + 1.0);
    run.apply_chain(0, data(&late), now + 2.0);
    run.analyse();
    assert_eq!(told(&run), 1, "{:?}", run.feed().notices);
    let notice = run
        .feed()
        .notices
        .iter()
        .find(|n| n.text.contains("grew after"));
    assert!(notice.unwrap().text.contains("min.log"), "{notice:?}");
    assert_eq!(run.rows_seen(), rows, "late rows are not read");
}
