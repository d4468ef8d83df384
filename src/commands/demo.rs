//! `plateau demo [--scenario NAME]`: the dashboard on invented runs being written now.
//!
//! Starts a [`LiveDemo`] (the logs of the chosen scenarios, written at their paces into a
//! temporary folder), follows each log with the analysis options a user would give for
//! its run (size, thermostat and barostat targets, a stall limit that suits the demo's
//! paces), and opens the dashboard on them. The folder is removed however the dashboard
//! ends: `q`, an error, a signal (the dashboard returns and the demo is dropped) or a panic
//! (dropped while unwinding). Refuses to start when standard output is not a terminal.

use std::path::Path;
use std::sync::Arc;

use crate::analysis::{AnalysisOptions, DEFAULT_KEEP_ROWS};
pub use crate::cli::DemoArgs;
use crate::cli::{AlertArgs, InputArgs};
use crate::config::Settings;
use crate::demo::{DemoPlan, DemoRun, LiveDemo};
use crate::error::Error;
use crate::follow::{FollowOptions, SystemClock};
use crate::live::{Live, LiveOptions, RunSource, RunSpec};
use crate::parse::ParseOptions;
use crate::tui::{self, WatchOptions};

use super::check::analysis_options;

/// The refusal when standard output is not a terminal.
pub fn not_a_terminal() -> Error {
    Error::Usage(
        "plateau demo draws on a terminal, and standard output is not one; without a \
         terminal, write an example log with `plateau replay SRC DEST` (or `plateau \
         generate`) and follow it with `plateau check --follow DEST`"
            .to_string(),
    )
}

/// The analysis options for one demo run: what a user would say about it on the command
/// line (no settings file is read: the demo's logs are plateau's own), and the stall limit.
pub fn run_options(run: &DemoRun, plan: &DemoPlan) -> Result<AnalysisOptions, Error> {
    let facts = run.facts();
    let input = InputArgs {
        atoms: Some(facts.atoms),
        constraints: facts.constraints,
        ..InputArgs::default()
    };
    let alerts = AlertArgs {
        target_temperature: facts.target_temperature,
        target_pressure: facts.target_pressure,
        stall_after: Some(format!("{}ms", plan.stall_after.as_millis())),
        ..AlertArgs::default()
    };
    let settings = Settings::merge(&input, None, None)?;
    analysis_options(&settings, &alerts)
}

/// Runs `plateau demo`.
pub fn run(args: &DemoArgs) -> Result<u8, Error> {
    if !tui::stdout_is_terminal() {
        return Err(not_a_terminal());
    }
    let plan = DemoPlan::select(args.scenario);
    let per_run = plan
        .runs
        .iter()
        .map(|r| run_options(r, &plan))
        .collect::<Result<Vec<_>, Error>>()?;
    let demo = LiveDemo::start(&plan).map_err(|source| Error::Read {
        path: std::env::temp_dir(),
        source,
    })?;
    let code = watch_demo(&demo, per_run);
    // Removes the folder; a failure to remove it is reported, the dashboard's outcome first.
    let removed = demo.finish();
    let code = code?;
    removed.map_err(|source| Error::Read {
        path: std::env::temp_dir(),
        source,
    })?;
    Ok(code)
}

fn watch_demo(demo: &LiveDemo, per_run: Vec<AnalysisOptions>) -> Result<u8, Error> {
    let options = LiveOptions {
        parse: ParseOptions::default(),
        analysis: per_run.first().cloned(),
        keep_rows: DEFAULT_KEEP_ROWS,
        follow: FollowOptions::default(),
        guess_row_tag: true,
    };
    let (mut live, rx) =
        Live::start(options, Arc::new(SystemClock)).map_err(|e| Error::Usage(e.to_string()))?;
    for (path, analysis) in demo.paths().iter().zip(per_run) {
        let spec = RunSpec {
            label: label(path),
            source: RunSource::Path(path.clone()),
            found_by: None,
        };
        live.add_with_analysis(spec, analysis)
            .map_err(|e| Error::Usage(e.to_string()))?;
    }
    let report_dir = std::env::current_dir().unwrap_or_else(|_| Path::new(".").to_path_buf());
    tui::run(
        live,
        rx,
        WatchOptions {
            report_dir,
            until: None,
            timestep_ps: None,
        },
    )
}

/// A run's label: its file name (the temporary folder's name says nothing).
fn label(path: &Path) -> String {
    path.file_name().map_or_else(
        || path.display().to_string(),
        |n| n.to_string_lossy().into_owned(),
    )
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::scenario::Scenario;

    #[test]
    fn every_run_gets_its_own_facts_and_the_demo_stall_limit() {
        let plan = DemoPlan::of(&Scenario::ALL);
        for run in &plan.runs {
            let opts = run_options(run, &plan).expect("options");
            let facts = run.facts();
            assert_eq!(opts.atoms, Some(facts.atoms));
            assert_eq!(opts.constraints, facts.constraints);
            assert_eq!(
                opts.target_temperature.is_some(),
                facts.target_temperature.is_some()
            );
            assert_eq!(
                opts.target_pressure.is_some(),
                facts.target_pressure.is_some()
            );
            assert_eq!(
                opts.thresholds.stall_after_seconds,
                Some(plan.stall_after.as_secs_f64())
            );
        }
    }

    #[test]
    fn labels_are_file_names() {
        assert_eq!(
            label(Path::new("/tmp/plateau-demo-x/blow-up.out")),
            "blow-up.out"
        );
    }
}
