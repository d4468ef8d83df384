//! `plateau watch FILE|GLOB|- ...`: the live dashboard (see [`crate::tui`]).
//!
//! Reads the settings as every command does (mapping options, `plateau.toml`), starts the
//! live-run engine on the files, patterns and standard input given, the commands
//! (`--source-command`, `[[run]]`) and the user's batch jobs (`--jobs`, through a
//! [`JobFeed`] the dashboard's engine takes in once a second), and hands it to the
//! dashboard. Refuses to start when standard output is not a terminal.

use std::path::{Path, PathBuf};
use std::sync::Arc;

use crate::analysis::DEFAULT_KEEP_ROWS;
use crate::config::Settings;
use crate::error::Error;
use crate::follow::{FollowOptions, SystemClock};
use crate::live::{Live, LiveOptions};
use crate::scheduler::{Scheduler, Slurm};
use crate::tui::{self, RunFeeder, WatchOptions};

use super::sources::{self, JobFeed};

pub use crate::cli::WatchArgs;

use super::check::{analysis_options, parse_until};

/// Runs `plateau watch`.
pub fn run(args: &WatchArgs) -> Result<u8, Error> {
    if !tui::stdout_is_terminal() {
        return Err(tui::not_a_terminal());
    }
    let cwd = std::env::current_dir().unwrap_or_else(|_| Path::new(".").to_path_buf());
    let settings = Settings::resolve(&args.input, &cwd)?;
    let opts = analysis_options(&settings, &args.alerts)?;
    let until = args.alerts.until.as_deref().map(parse_until).transpose()?;
    let keep_rows = match args.keep_rows {
        Some(n) => crate::config::check_keep_rows(n)
            .map_err(|e| Error::Usage(format!("--keep-rows: {e}")))?,
        None => settings.keep_rows.unwrap_or(DEFAULT_KEEP_ROWS),
    };
    let follow = FollowOptions {
        force_poll: args.poll,
        poll_interval: args.poll_interval,
        ..FollowOptions::default()
    };
    let commands = sources::command_runs(&args.sources, !args.files.is_empty(), &settings)?;
    let discovery = sources::discovery(&args.sources, &settings, &cwd, &follow);
    if args.files.is_empty() && commands.is_empty() && discovery.is_none() {
        return Err(Error::Usage(
            "nothing to watch: name a log FILE, GLOB or -, or use --source-command, --jobs or \
             [[run]] in plateau.toml"
                .to_string(),
        ));
    }
    let options = LiveOptions {
        guess_row_tag: settings.parse.row_tag.is_none(),
        parse: settings.parse.clone(),
        analysis: Some(opts),
        keep_rows,
        follow: follow.clone(),
    };
    let clock = Arc::new(SystemClock);
    let (mut live, rx) =
        Live::start(options, clock.clone()).map_err(|e| Error::Usage(e.to_string()))?;
    live.set_stage_options(super::report::stage_options(&args.stages)?);
    if args.stages.chain {
        super::check::follow::chain_files(&args.files)?;
        live.add_chain(&args.files)
            .map_err(|e| Error::Usage(e.to_string()))?;
    } else {
        for arg in &args.files {
            live.add_argument(arg)
                .map_err(|e| Error::Usage(e.to_string()))?;
        }
    }
    // The commands die with plateau (see follow::CommandSource); nothing to end here.
    sources::start_commands(&mut live, &commands, &follow, clock.clone())?;
    let feeder: Option<Box<dyn RunFeeder>> = match discovery {
        Some((options, every)) => {
            let scheduler: Arc<dyn Scheduler> = Arc::new(Slurm::new());
            Some(Box::new(JobsFeeder(JobFeed::start(
                scheduler, options, every, clock,
            )?)))
        }
        None => None,
    };
    let report_dir = args
        .report_dir
        .clone()
        .unwrap_or_else(|| PathBuf::from("."));
    tui::run(
        live,
        rx,
        WatchOptions {
            report_dir,
            until,
            timestep_ps: settings.timestep_ps,
        },
        feeder,
    )
}

/// The user's batch jobs as the dashboard's extra runs.
struct JobsFeeder(JobFeed);

impl RunFeeder for JobsFeeder {
    fn feed(&mut self, live: &mut Live) -> bool {
        // What discovery did is shown by the runs themselves and the header's summary.
        !self.0.apply(live).is_empty()
    }

    fn summary(&self) -> Option<String> {
        Some(self.0.summary())
    }
}
