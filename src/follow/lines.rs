//! Splitting a byte stream into complete lines, holding back the unfinished last one.

use super::Partial;
use crate::parse::endings;

/// What one chunk of input gave.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Piece {
    /// Complete lines, ending with `\n`.
    Lines {
        bytes: Vec<u8>,
        first_line: u64,
        lines: u64,
    },
    /// Line `line` grew past the length limit before its newline; it was skipped.
    Overlong { line: u64 },
}

/// Holds the unfinished last line and counts lines (1-based) within one file generation.
///
/// A line is complete at its `\n`, `\r\n` or lone `\r` (see [`crate::parse::endings`]). Memory is bounded: an unfinished line
/// longer than `max_line` is dropped and reported as [`Piece::Overlong`] once its newline
/// arrives.
#[derive(Debug, Clone)]
pub struct LineSplitter {
    partial: Vec<u8>,
    next_line: u64,
    max_line: usize,
    overlong: bool,
    /// Bytes taken in since the last newline, including those of an over-long line that
    /// were let go (a resumable source restarts its input at the start of this line).
    unfinished: u64,
    /// The last line ended with `\r`: a `\n` first in the next chunk belongs to it.
    skip_lf: bool,
}

impl LineSplitter {
    /// A splitter at line 1 that keeps unfinished lines of up to `max_line` bytes.
    pub fn new(max_line: usize) -> Self {
        Self {
            partial: Vec::new(),
            next_line: 1,
            max_line: max_line.max(1),
            overlong: false,
            unfinished: 0,
            skip_lf: false,
        }
    }

    /// Line number the next complete line will have.
    pub fn next_line(&self) -> u64 {
        self.next_line
    }

    /// Bytes of the unfinished last line held back.
    pub fn pending_bytes(&self) -> usize {
        self.partial.len()
    }

    /// Bytes of the unfinished last line taken in so far, counting the part of an over-long
    /// line that was let go: the input position of the line's start is the bytes taken in
    /// minus this.
    pub fn unfinished_bytes(&self) -> u64 {
        self.unfinished
    }

    /// Takes in `chunk` and appends the complete lines (and skipped over-long lines) to `out`.
    pub fn push(&mut self, mut chunk: &[u8], out: &mut Vec<Piece>) {
        if chunk.is_empty() {
            return;
        }
        if self.skip_lf {
            // The `\n` of a `\r\n` whose `\r` ended the last chunk: already counted.
            self.skip_lf = false;
            if let Some(rest) = chunk.strip_prefix(b"\n") {
                chunk = rest;
                self.unfinished = 0;
            }
        }
        match endings::complete_len(chunk) {
            0 => self.unfinished += chunk.len() as u64,
            last => self.unfinished = (chunk.len() - last) as u64,
        }
        self.split(chunk, out);
    }

    fn split(&mut self, mut chunk: &[u8], out: &mut Vec<Piece>) {
        while !chunk.is_empty() {
            if self.overlong {
                match endings::first_end(chunk) {
                    None => return,
                    Some(i) => {
                        out.push(Piece::Overlong {
                            line: self.next_line,
                        });
                        self.next_line += 1;
                        self.overlong = false;
                        self.skip_lf = i == chunk.len() && chunk.last() == Some(&b'\r');
                        chunk = chunk.get(i..).unwrap_or_default();
                        continue;
                    }
                }
            }
            match endings::complete_len(chunk) {
                0 => {
                    self.keep(chunk);
                    return;
                }
                end => {
                    let (head, tail) = chunk.split_at(end.min(chunk.len()));
                    let lines = endings::count_lines(head);
                    self.skip_lf = tail.is_empty() && head.last() == Some(&b'\r');
                    let mut bytes = std::mem::take(&mut self.partial);
                    bytes.extend_from_slice(head);
                    out.push(Piece::Lines {
                        bytes,
                        first_line: self.next_line,
                        lines,
                    });
                    self.next_line += lines;
                    self.keep(tail);
                    return;
                }
            }
        }
    }

    fn keep(&mut self, bytes: &[u8]) {
        if self.partial.len() + bytes.len() > self.max_line {
            self.partial = Vec::new();
            self.overlong = true;
        } else {
            self.partial.extend_from_slice(bytes);
        }
    }

    /// The unfinished line held back, if any, without changing anything.
    pub fn partial(&self) -> Option<Partial> {
        (self.overlong || !self.partial.is_empty()).then_some(Partial {
            line: self.next_line,
            bytes: self.partial.len(),
        })
    }

    /// Starts a new generation at line 1, giving up the unfinished line (returned).
    pub fn reset(&mut self) -> Option<Partial> {
        let dropped = self.partial();
        self.forget_unfinished();
        self.next_line = 1;
        dropped
    }

    /// Forgets the unfinished line but keeps the numbering: the input resumes at the start
    /// of that line, which will come again whole (a command restarted at a byte offset).
    pub fn forget_unfinished(&mut self) {
        self.partial = Vec::new();
        self.overlong = false;
        self.unfinished = 0;
        self.skip_lf = false;
    }
}

/// Keeps in `tail` the last `max` bytes of `tail` followed by `data`.
pub(crate) fn keep_last(tail: &mut Vec<u8>, data: &[u8], max: usize) {
    if data.len() >= max {
        tail.clear();
        tail.extend_from_slice(data.get(data.len() - max..).unwrap_or_default());
    } else {
        tail.extend_from_slice(data);
        let excess = tail.len().saturating_sub(max);
        tail.drain(..excess);
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn lines_of(pieces: &[Piece]) -> Vec<(u64, Vec<u8>)> {
        let mut v = Vec::new();
        for p in pieces {
            if let Piece::Lines {
                bytes, first_line, ..
            } = p
            {
                let mut k = 0u64;
                endings::for_each_line(bytes, |l| {
                    v.push((first_line + k, l.to_vec()));
                    k += 1;
                });
            }
        }
        v
    }

    #[test]
    fn half_line_is_held_until_its_newline() {
        let mut s = LineSplitter::new(100);
        let mut out = Vec::new();
        s.push(b"a 1\nb ", &mut out);
        assert_eq!(lines_of(&out), vec![(1, b"a 1".to_vec())]);
        assert_eq!(s.pending_bytes(), 2);
        out.clear();
        s.push(b"2\r\n", &mut out);
        assert_eq!(lines_of(&out), vec![(2, b"b 2".to_vec())]);
        assert_eq!(s.partial(), None);
    }

    #[test]
    fn reset_drops_partial_and_restarts_numbering() {
        let mut s = LineSplitter::new(100);
        let mut out = Vec::new();
        s.push(b"x\ny\nzz", &mut out);
        assert_eq!(s.reset(), Some(Partial { line: 3, bytes: 2 }));
        out.clear();
        s.push(b"q\n", &mut out);
        assert_eq!(lines_of(&out), vec![(1, b"q".to_vec())]);
    }

    #[test]
    fn overlong_line_is_skipped_and_counted() {
        let mut s = LineSplitter::new(4);
        let mut out = Vec::new();
        s.push(b"ok\n123", &mut out);
        s.push(b"456789", &mut out);
        assert_eq!(s.pending_bytes(), 0);
        s.push(b"0\nnext\n", &mut out);
        assert_eq!(
            out,
            vec![
                Piece::Lines {
                    bytes: b"ok\n".to_vec(),
                    first_line: 1,
                    lines: 1
                },
                Piece::Overlong { line: 2 },
                Piece::Lines {
                    bytes: b"next\n".to_vec(),
                    first_line: 3,
                    lines: 1
                },
            ]
        );
    }

    #[test]
    fn unfinished_bytes_count_the_let_go_part_of_an_overlong_line() {
        let mut s = LineSplitter::new(4);
        let mut out = Vec::new();
        s.push(b"ok\n12", &mut out);
        assert_eq!(s.unfinished_bytes(), 2);
        s.push(b"3456789", &mut out);
        assert_eq!(s.unfinished_bytes(), 9);
        assert_eq!(s.pending_bytes(), 0);
        s.push(b"0\nab", &mut out);
        assert_eq!(s.unfinished_bytes(), 2);
    }

    #[test]
    fn forgetting_the_unfinished_line_keeps_the_numbering() {
        let mut s = LineSplitter::new(100);
        let mut out = Vec::new();
        s.push(b"x\ny\nzz", &mut out);
        s.forget_unfinished();
        assert_eq!((s.partial(), s.unfinished_bytes()), (None, 0));
        out.clear();
        s.push(b"zzz\n", &mut out);
        assert_eq!(lines_of(&out), vec![(3, b"zzz".to_vec())]);
    }

    proptest::proptest! {
        #![proptest_config(proptest::prelude::ProptestConfig::with_cases(128))]
        /// Any chunking of the same bytes gives the same complete lines with the same numbers.
        #[test]
        fn chunking_does_not_matter(text in "[ab\\n\\r]{0,200}", cuts in proptest::collection::vec(0usize..200, 0..10)) {
            let bytes = text.as_bytes();
            let mut whole = LineSplitter::new(1000);
            let mut a = Vec::new();
            whole.push(bytes, &mut a);
            let mut cuts = cuts.into_iter().map(|c| c.min(bytes.len())).collect::<Vec<_>>();
            cuts.sort_unstable();
            let mut pieces = LineSplitter::new(1000);
            let mut b = Vec::new();
            let mut start = 0;
            for c in cuts.into_iter().chain(std::iter::once(bytes.len())) {
                pieces.push(&bytes[start..c], &mut b);
                start = c;
            }
            proptest::prop_assert_eq!(lines_of(&a), lines_of(&b));
            proptest::prop_assert_eq!(whole.partial(), pieces.partial());
            // Every line up to the last ending comes out, nothing after it.
            let complete = endings::complete_len(bytes);
            let mut want = Vec::new();
            let mut n = 1u64;
            endings::for_each_line(&bytes[..complete], |l| {
                want.push((n, l.to_vec()));
                n += 1;
            });
            proptest::prop_assert_eq!(lines_of(&b), want);
        }
    }
}
