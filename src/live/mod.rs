//! The live-run engine: following runs while they are written, parsing their new lines,
//! analysing them incrementally, raising alerts, recording arrival times and keeping memory
//! bounded. `check --follow`, `export --follow` and `watch` all drive it; they differ only
//! in what they do with it (print alerts, write rows, draw a dashboard).
//!
//! Pieces:
//! - [`RunSpec`] / [`RunSource`] (`source.rs`): a run and where its rows come from.
//! - [`LiveRun`] (`run.rs`): one run's parser, arrival times, analyser, chart history and
//!   what the follower said about its source; plain data, driven from outside.
//! - [`Live`] (`engine.rs`): the follower ([`crate::follow::FollowSet`]) and every run,
//!   events routed to their run, glob patterns that find more runs as files appear.
//! - [`bound_memory`] (`memory.rs`): folding the oldest rows past the memory cap.
//! - [`History`] (`history.rs`): min/max/mean buckets of forgotten rows, for charts.
//! - [`LiveStages`] (`stages.rs`): the run's stage list, judged as `report` judges a
//!   finished file, again after every tenth more rows and once at the end.
//! - [`ChainFollow`] (`chain.rs`): a chain of files (`--chain`) followed as one run, one
//!   file live at a time, the next one waited for; time continued as `report --chain` does.
//! - `end.rs`: when following can end (`--until` reached, `--pid` exited).
//!
//! Driving it (no thread of its own: the caller decides where it runs):
//! ```text
//! let (mut live, rx) = Live::start(options, clock)?;
//! live.add_argument(path)?;
//! loop {
//!     let (source, event) = rx.recv_timeout(tick)?;
//!     live.apply(source, event, now);     // parse new lines, note what happened
//!     live.analyse();                      // statistics and alerts of runs with new rows
//!     live.check_stalls(now);              // stalled output, against the wall clock
//! }
//! ```

mod chain;
mod end;
mod engine;
mod history;
mod memory;
mod run;
mod source;
mod stages;

use std::path::Path;
use std::time::{SystemTime, UNIX_EPOCH};

pub use chain::{ChainFollow, QUIET_SECONDS};
pub use end::{process_alive, reached};
pub use engine::{is_pattern, Live, LiveError, LiveOptions, Pattern};
pub use history::{Bucket, Envelope, History, SeriesView, HISTORY_BUCKETS};
pub use memory::{bound_memory, bound_memory_with_history, folding_note};
pub use run::{Feed, Happened, LiveRun, Notice, Presence, REFRESH_SECONDS};
pub use source::{RunId, RunJob, RunSource, RunSpec};
pub use stages::{ChainFiles, LiveStages, MIN_NEW_ROWS};

/// Seconds since the Unix epoch (0 for a time before it).
pub fn seconds(t: SystemTime) -> f64 {
    t.duration_since(UNIX_EPOCH)
        .map(|d| d.as_secs_f64())
        .unwrap_or(0.0)
}

/// The wall clock now, in seconds since the Unix epoch.
pub fn now_seconds() -> f64 {
    seconds(SystemTime::now())
}

/// Bytes looked at when guessing a row tag.
pub const SNIFF_BYTES: u64 = 256 * 1024;

/// Looks at the start of `file` for data rows marked by a leading word
/// ([`crate::parse::sniff::sniff_row_tag`]) and returns that word. Standard input,
/// anything that is not a regular file (a named pipe can be read only once: reading its
/// start here would take those bytes from the real reader) and unreadable files give
/// `None` (reading them fails later, with the path).
pub fn sniff_row_tag(file: &Path) -> Option<String> {
    sniff_layout(file, &crate::parse::ParseOptions::default())?.row_tag
}

/// Looks at the start of `file` for its layout ([`crate::parse::sniff::sniff_layout`]):
/// the separator its data lines agree on and the row tag. `None` for standard input and
/// unreadable files.
pub fn sniff_layout(
    file: &Path,
    options: &crate::parse::ParseOptions,
) -> Option<crate::parse::sniff::LayoutGuess> {
    use std::io::Read;
    if file == Path::new("-") || !std::fs::metadata(file).ok()?.is_file() {
        return None;
    }
    let handle = std::fs::File::open(file).ok()?;
    let mut start = Vec::new();
    handle.take(SNIFF_BYTES).read_to_end(&mut start).ok()?;
    Some(crate::parse::sniff::sniff_layout(&start, options))
}
