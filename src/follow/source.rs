//! The one small interface every kind of source implements.

use std::path::Path;

use super::{FollowEvent, Partial};

/// What a source says after one step.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Step {
    /// More data is ready right now: call `step` again soon.
    More,
    /// Nothing more for now: call again on the next wake-up.
    Idle,
    /// The source is finished for good (end of input).
    Finished,
}

/// A source of log bytes: a followed path, standard input, a command's output.
///
/// A [`super::FollowSet`] drives sources: non-blocking ones (files) are multiplexed on one
/// thread and stepped on wake-ups; blocking ones (pipes) get a thread each and are stepped
/// in a loop until they finish.
pub trait Source: Send {
    /// Name shown to the user and used in errors (a path, or `-`).
    fn label(&self) -> &str;

    /// The file this source follows, if any: its parent folder is watched for file events.
    fn watch_target(&self) -> Option<&Path> {
        None
    }

    /// `true` if `step` blocks until data arrives (a pipe); such a source gets its own thread.
    fn blocks(&self) -> bool;

    /// The unfinished last line held back, if any (reported as given up when the source is
    /// ended from outside, e.g. because its job ended).
    fn unfinished(&self) -> Option<Partial> {
        None
    }

    /// Does one bounded unit of work (at most one read buffer of data) and appends what
    /// happened to `out`.
    fn step(&mut self, out: &mut Vec<FollowEvent>) -> Step;
}
