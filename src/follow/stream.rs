//! A source reading any `Read`: standard input, a pipe, a command's output.

use std::io::{self, Read};
use std::path::{Path, PathBuf};
use std::sync::Arc;

use super::lines::{LineSplitter, Piece};
use super::{Clock, FollowEvent, FollowOptions, Source, Step};

/// Reads a byte stream as it arrives; the end of the stream finishes the source.
///
/// Each read gives the complete lines that arrived; at the end of input an unfinished last
/// line is given up and reported in [`FollowEvent::EndOfInput`] (the Contract: it may be a
/// row cut in half).
#[derive(Debug)]
pub struct ReaderSource<R> {
    reader: R,
    label: String,
    clock: Arc<dyn Clock>,
    splitter: LineSplitter,
    buf: Vec<u8>,
    pieces: Vec<Piece>,
    finished: bool,
}

impl ReaderSource<io::Stdin> {
    /// Standard input, labelled `-`.
    pub fn stdin(clock: Arc<dyn Clock>, options: &FollowOptions) -> Self {
        Self::new("-", io::stdin(), clock, options)
    }
}

impl<R: Read + Send> ReaderSource<R> {
    /// A source reading `reader`, shown to the user as `label`.
    pub fn new(
        label: impl Into<String>,
        reader: R,
        clock: Arc<dyn Clock>,
        options: &FollowOptions,
    ) -> Self {
        // A pipe hands over at most its buffer (64 KiB on Linux) per read.
        let size = options.max_read_bytes.clamp(1, 1 << 20);
        Self {
            reader,
            label: label.into(),
            clock,
            splitter: LineSplitter::new(options.max_line_bytes),
            buf: vec![0; size],
            pieces: Vec::new(),
            finished: false,
        }
    }
}

impl<R: Read + Send> Source for ReaderSource<R> {
    fn label(&self) -> &str {
        &self.label
    }

    fn blocks(&self) -> bool {
        true
    }

    fn step(&mut self, out: &mut Vec<FollowEvent>) -> Step {
        if self.finished {
            return Step::Finished;
        }
        match self.reader.read(&mut self.buf) {
            Ok(0) => {
                self.finished = true;
                out.push(FollowEvent::EndOfInput {
                    dropped: self.splitter.partial(),
                });
                Step::Finished
            }
            Ok(n) => {
                let arrival = self.clock.now();
                let data = self.buf.get(..n).unwrap_or_default();
                self.splitter.push(data, &mut self.pieces);
                for piece in self.pieces.drain(..) {
                    out.push(piece.into_event(arrival, Path::new(&self.label)));
                }
                Step::More
            }
            Err(e) if e.kind() == io::ErrorKind::Interrupted => Step::More,
            Err(e) => {
                self.finished = true;
                out.push(FollowEvent::Error {
                    path: PathBuf::from(&self.label),
                    message: format!("read error: {e}"),
                });
                out.push(FollowEvent::EndOfInput {
                    dropped: self.splitter.partial(),
                });
                Step::Finished
            }
        }
    }
}
