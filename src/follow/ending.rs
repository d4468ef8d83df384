//! A source that ends when told: a job's log read directly ends with its job.

use std::path::Path;
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::Arc;

use super::{FollowEvent, Partial, Source, Step};

/// Tells an [`Endable`] source that its input is over (its job ended).
#[derive(Debug, Clone, Default)]
pub struct EndSignal(Arc<AtomicBool>);

impl EndSignal {
    /// A signal not given yet.
    pub fn new() -> Self {
        Self::default()
    }

    /// Gives the signal: the source reads what is left, then ends.
    pub fn end(&self) {
        self.0.store(true, Ordering::Release);
    }

    /// `true` once the signal was given.
    pub fn is_ended(&self) -> bool {
        self.0.load(Ordering::Acquire)
    }
}

/// Wraps a non-blocking source (a followed file) so that it can be ended from outside:
/// once its [`EndSignal`] is given, the next steps read what is left, then report
/// [`FollowEvent::EndOfInput`] with the unfinished line given up, and the source finishes.
/// It is stepped as its inner source is (a [`super::FollowSet`] steps it at the latest at
/// the next stat check).
#[derive(Debug)]
pub struct Endable<S> {
    inner: S,
    signal: EndSignal,
}

impl<S: Source> Endable<S> {
    /// `inner`, ended by the returned signal.
    pub fn new(inner: S) -> (Self, EndSignal) {
        let signal = EndSignal::new();
        (
            Self {
                inner,
                signal: signal.clone(),
            },
            signal,
        )
    }
}

impl<S: Source> Source for Endable<S> {
    fn label(&self) -> &str {
        self.inner.label()
    }

    fn watch_target(&self) -> Option<&Path> {
        self.inner.watch_target()
    }

    fn blocks(&self) -> bool {
        self.inner.blocks()
    }

    fn unfinished(&self) -> Option<Partial> {
        self.inner.unfinished()
    }

    fn step(&mut self, out: &mut Vec<FollowEvent>) -> Step {
        // Read before looking at the signal, so that what was written just before the end
        // is not lost.
        let ended = self.signal.is_ended();
        match self.inner.step(out) {
            Step::More => Step::More,
            Step::Finished => Step::Finished,
            Step::Idle if ended => {
                out.push(FollowEvent::EndOfInput {
                    dropped: self.inner.unfinished(),
                });
                Step::Finished
            }
            Step::Idle => Step::Idle,
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::follow::{FileFollower, FollowOptions, SystemClock};
    use std::io::Write;

    fn text(events: &[FollowEvent]) -> String {
        events
            .iter()
            .filter_map(|e| match e {
                FollowEvent::Data { bytes, .. } => {
                    Some(String::from_utf8_lossy(bytes).into_owned())
                }
                _ => None,
            })
            .collect()
    }

    /// Lines written just before the end are read; the unfinished line is reported given up.
    #[test]
    fn ends_after_reading_what_is_left() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("run.log");
        std::fs::write(&path, "1 2\n").unwrap();
        let file = FileFollower::new(&path, Arc::new(SystemClock), &FollowOptions::default());
        let (mut source, signal) = Endable::new(file);
        let mut events = Vec::new();
        assert_eq!(source.step(&mut events), Step::Idle);
        let mut f = std::fs::OpenOptions::new()
            .append(true)
            .open(&path)
            .unwrap();
        f.write_all(b"3 4\n5 ").unwrap();
        signal.end();
        let mut steps = 0;
        while source.step(&mut events) != Step::Finished {
            steps += 1;
            assert!(steps < 100, "never finished: {events:?}");
        }
        assert_eq!(text(&events), "1 2\n3 4\n");
        assert_eq!(
            events.last(),
            Some(&FollowEvent::EndOfInput {
                dropped: Some(Partial { line: 3, bytes: 2 })
            })
        );
    }
}
