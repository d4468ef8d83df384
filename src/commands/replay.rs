//! `plateau replay SRC DEST`: writes a finished log into DEST at a pace, to rehearse a live
//! run (watch DEST while it grows) or to demonstrate on real data.
//!
//! DEST receives exactly the bytes of SRC. Lines before the first data row (preamble,
//! header) are written at once; then each data row is written `1/rows-per-second` after the
//! previous one, with the lines between rows (free text, a repeated header) written as soon
//! as they are reached. A final line without its newline is written last, as it is. Data
//! rows are recognised by plateau's own reader with the same options as every other command
//! (`--row-tag`, `--comment`, `--delimiter`, `plateau.toml`), so a replayed log grows as the
//! original did. SRC is read as a stream: memory stays bounded whatever its size.

use std::fs::{File, OpenOptions};
use std::io::{self, BufRead, BufReader, BufWriter, Read, Write};
use std::path::Path;
use std::time::{Duration, Instant};

pub use crate::cli::ReplayArgs;
use crate::config::Settings;
use crate::error::Error;
use crate::parse::{LogParser, ParseOptions};

/// Waits until a moment given in seconds after the replay started.
pub trait Pacer {
    /// Returns at or after `seconds` after the start.
    fn wait_until(&mut self, seconds: f64);
}

/// The wall clock: sleeps.
#[derive(Debug)]
pub struct SleepingPacer {
    start: Instant,
}

impl SleepingPacer {
    /// A pacer whose start is now.
    pub fn starting_now() -> SleepingPacer {
        SleepingPacer {
            start: Instant::now(),
        }
    }
}

impl Pacer for SleepingPacer {
    fn wait_until(&mut self, seconds: f64) {
        let due = Duration::from_secs_f64(seconds.max(0.0));
        let elapsed = self.start.elapsed();
        if due > elapsed {
            std::thread::sleep(due - elapsed);
        }
    }
}

/// What a replay wrote.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct Replayed {
    /// Data rows (paced).
    pub rows: u64,
    /// Other complete lines (preamble, header, text between rows).
    pub other_lines: u64,
    /// Bytes of a final line without its newline (written last), or 0.
    pub partial_bytes: u64,
}

/// Rows kept by the reader while replaying (only the last row's line number is needed).
const KEEP_ROWS: usize = 64;

/// The line number of the newest data row the parser has seen.
fn newest_row_line(parser: &LogParser) -> Option<u64> {
    parser
        .table()
        .segments
        .iter()
        .rev()
        .find_map(|s| s.lines.last())
}

/// Copies `source` to `out` line by line, waiting before each data row until its moment
/// (row k at `k / rows_per_second` seconds; the first at 0). `out` is flushed before each
/// wait, so a reader of the destination sees everything written so far.
pub fn replay(
    source: impl Read,
    out: &mut impl Write,
    options: ParseOptions,
    rows_per_second: f64,
    pacer: &mut impl Pacer,
) -> io::Result<Replayed> {
    let mut reader = BufReader::with_capacity(1 << 16, source);
    let mut parser = LogParser::new(options);
    let mut line = Vec::with_capacity(256);
    let mut done = Replayed::default();
    loop {
        line.clear();
        if reader.read_until(b'\n', &mut line)? == 0 {
            break;
        }
        if line.last() != Some(&b'\n') {
            // The source ends in the middle of a line: written as it is, never parsed.
            out.write_all(&line)?;
            done.partial_bytes = line.len() as u64;
            break;
        }
        let before = newest_row_line(&parser);
        parser.feed(&line);
        if newest_row_line(&parser) != before {
            out.flush()?;
            pacer.wait_until(done.rows as f64 / rows_per_second);
            done.rows += 1;
            if done.rows.is_multiple_of(4 * KEEP_ROWS as u64) {
                parser.forget_all_but_last(KEEP_ROWS);
            }
        } else {
            done.other_lines += 1;
        }
        out.write_all(&line)?;
    }
    out.flush()?;
    Ok(done)
}

/// An error writing `path`, naming it (the kind is kept: a closed pipe stays quiet).
fn write_error(path: &Path, e: io::Error) -> Error {
    Error::Output(io::Error::new(e.kind(), format!("{}: {e}", path.display())))
}

/// Runs `plateau replay`.
pub fn run(args: &ReplayArgs, out: &mut dyn Write) -> Result<u8, Error> {
    let cwd = std::env::current_dir().unwrap_or_else(|_| Path::new(".").to_path_buf());
    let mut settings = Settings::resolve(&args.input, &cwd)?;
    super::guess_row_tag(&args.source, &mut settings);
    let source = File::open(&args.source).map_err(|source| Error::Read {
        path: args.source.clone(),
        source,
    })?;
    let mut pacer = SleepingPacer::starting_now();
    let read_error = |e: io::Error| Error::Read {
        path: args.source.clone(),
        source: e,
    };
    if args.destination == Path::new("-") {
        let mut writer = BufWriter::new(out);
        replay(
            source,
            &mut writer,
            settings.parse,
            args.rows_per_second,
            &mut pacer,
        )
        .map_err(Error::Output)?;
        return Ok(0);
    }
    let destination = OpenOptions::new()
        .write(true)
        .create_new(true)
        .open(&args.destination)
        .map_err(|e| match e.kind() {
            io::ErrorKind::AlreadyExists => Error::Usage(format!(
                "{} exists; replay writes a new file (remove it or choose another name)",
                args.destination.display()
            )),
            _ => write_error(&args.destination, e),
        })?;
    let mut writer = BufWriter::new(destination);
    // A failed read of the source and a failed write of the destination are told apart.
    let mut tracking = TrackedWrite {
        inner: &mut writer,
        failed: false,
    };
    match replay(
        source,
        &mut tracking,
        settings.parse,
        args.rows_per_second,
        &mut pacer,
    ) {
        Ok(_) => Ok(0),
        Err(e) if tracking.failed => Err(write_error(&args.destination, e)),
        Err(e) => Err(read_error(e)),
    }
}

/// A writer that remembers whether a write failed.
struct TrackedWrite<'a, W: Write> {
    inner: &'a mut W,
    failed: bool,
}

impl<W: Write> Write for TrackedWrite<'_, W> {
    fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
        self.inner.write(buf).inspect_err(|_| self.failed = true)
    }
    fn flush(&mut self) -> io::Result<()> {
        self.inner.flush().inspect_err(|_| self.failed = true)
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::cli::parse_rate;

    /// Records the moments it was asked to wait for.
    #[derive(Default)]
    struct RecordingPacer {
        waits: Vec<f64>,
    }

    impl Pacer for RecordingPacer {
        fn wait_until(&mut self, seconds: f64) {
            self.waits.push(seconds);
        }
    }

    /// Writes into a shared buffer and records its length at each wait.
    fn replayed(text: &[u8], rate: f64) -> (Vec<u8>, Vec<f64>, Replayed) {
        let mut out = Vec::new();
        let mut pacer = RecordingPacer::default();
        let done = replay(text, &mut out, ParseOptions::default(), rate, &mut pacer).unwrap();
        (out, pacer.waits, done)
    }

    #[test]
    fn copies_the_exact_bytes_and_paces_the_rows() {
        let text = b"# a preamble line\n# step  temperature(K)\n0 300.1\r\n1 299.5\nnote: free text\n2 301.0\n3 30";
        let (out, waits, done) = replayed(text, 4.0);
        assert_eq!(out, text);
        assert_eq!(waits, vec![0.0, 0.25, 0.5]);
        assert_eq!(
            done,
            Replayed {
                rows: 3,
                other_lines: 3,
                partial_bytes: 4
            }
        );
    }

    #[test]
    fn restarts_and_repeated_headers_are_rows_and_lines_as_the_reader_sees_them() {
        let text = b"step energy\n0 -10.0\n10 -10.5\n20 -10.2\nstep energy\n10 -10.4\n20 -10.1\n";
        let (out, waits, done) = replayed(text, 1.0);
        assert_eq!(out, text);
        assert_eq!(done.rows, 5);
        assert_eq!(done.other_lines, 2);
        assert_eq!(waits, vec![0.0, 1.0, 2.0, 3.0, 4.0]);
    }

    #[test]
    fn tagged_rows_are_paced_when_the_tag_is_known() {
        let text = b"starting\nDATA step temp\nDATA 0 300\nwarning: slow\nDATA 1 301\n";
        let options = ParseOptions {
            row_tag: Some("DATA".to_string()),
            ..ParseOptions::default()
        };
        let mut out = Vec::new();
        let mut pacer = RecordingPacer::default();
        let done = replay(&text[..], &mut out, options, 2.0, &mut pacer).unwrap();
        assert_eq!(out, text);
        assert_eq!(done.rows, 2);
        assert_eq!(pacer.waits, vec![0.0, 0.5]);
    }

    #[test]
    fn a_long_log_keeps_every_byte() {
        let mut text = String::from("step value\n");
        for i in 0..5000 {
            text.push_str(&format!("{i} {}\n", (i as f64).sin()));
        }
        let (out, waits, done) = replayed(text.as_bytes(), 1000.0);
        assert_eq!(out, text.as_bytes());
        assert_eq!(done.rows, 5000);
        assert_eq!(waits.last().copied(), Some(4.999));
    }

    #[test]
    fn rate_must_be_positive() {
        assert!(parse_rate("0").is_err());
        assert!(parse_rate("-3").is_err());
        assert!(parse_rate("nan").is_err());
        assert_eq!(parse_rate("2.5"), Ok(2.5));
    }
}
