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
use plateau::scenario::stages::{five_stage_logs, StagePlan};
use plateau::stages::{StageKind, StageRecord};

const PATIENCE: Duration = Duration::from_secs(30);

fn opts(dir: &Path) -> AnalysisOptions {
    let settings = Settings::resolve(&InputArgs::default(), dir).unwrap();
    analysis_options(&settings, &AlertArgs::default()).unwrap()
}

fn report_stages(files: &[std::path::PathBuf]) -> Vec<StageRecord> {
    analyse_run(
        files,
        &InputArgs::default(),
        &AlertArgs::default(),
        &StageArgs::default(),
    )
    .unwrap()
    .0
    .stages
}

fn kinds(stages: &[StageRecord]) -> Vec<StageKind> {
    stages.iter().map(|s| s.kind).collect()
}

/// The one-log preparation fed by hand in uneven chunks (lines cut anywhere), analysed
/// after each: the current stage follows the writing, and the final list is the report's.
#[test]
fn a_followed_staged_log_ends_with_the_reports_stage_list() {
    let logs = five_stage_logs(&StagePlan::default());
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("prep.log");
    std::fs::write(&path, &logs.one_log).unwrap();
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
    let logs = five_stage_logs(&StagePlan::default());
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("prep.log");
    std::fs::write(&path, &logs.one_log).unwrap();
    let expected = report_stages(std::slice::from_ref(&path));
    let options = LiveOptions {
        parse: ParseOptions::default(),
        analysis: Some(opts(dir.path())),
        keep_rows: 1_000_000,
        follow: FollowOptions::default(),
        guess_row_tag: false,
    };
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
