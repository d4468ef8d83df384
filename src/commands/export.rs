//! `plateau export FILE [--follow] [--format csv|tsv|jsonl]`: the mapped rows in canonical
//! units, with their segment and source line, written as they arrive.
//!
//! - Without `--follow`, the file is read once as it is now (standard input `-`: until it
//!   ends). With `--follow`, the file is followed by name (growth, truncation, rotation,
//!   deletion, not existing yet) until interrupted; standard input until it ends.
//! - CSV and TSV write a header line (`segment`, `line`, then each column as
//!   `name (unit)`) before the first row of every segment; JSONL writes one object per row
//!   with the keys `segment`, `line` and the column names. Non-finite values are written as
//!   `nan`, `inf`, `-inf` (JSON: the strings `"nan"`, `"inf"`, `"-inf"`, per the Contract);
//!   a value a row did not write (self-named rows, JSON objects missing a key) is an empty
//!   field (JSON: `null`), never `nan`.
//! - Rows are written once. When the step counter goes back (a restart), the rows it
//!   replaces were already written; the new rows follow, with their step going back.
//! - After truncation, rotation or re-creation the file is read from its start again: its
//!   rows belong to new segments and their line numbers count from 1 again.
//! - What happens to the file (waiting, truncated, rotated, deleted, polling fallback,
//!   errors, an unfinished last line ignored, skipped lines) is told on standard error.

use std::fmt::Write as _;
use std::io::{BufWriter, Write};
use std::path::Path;
use std::sync::Arc;

use crate::analysis::DEFAULT_KEEP_ROWS;
pub use crate::cli::{ExportArgs, ExportFormat};
use crate::config::Settings;
use crate::error::Error;
use crate::follow::{FollowOptions, Partial, ReaderSource, Source, Step, SystemClock, WatchMode};
use crate::live::{self, Happened, Live, LiveOptions, LiveRun, RunId, RunSource, RunSpec};
use crate::table::Segment;

fn cannot_follow(file: &Path, e: impl std::fmt::Display) -> Error {
    Error::Read {
        path: file.to_path_buf(),
        source: std::io::Error::other(e.to_string()),
    }
}

/// Runs `plateau export`.
pub fn run(args: &ExportArgs, out: &mut dyn Write) -> Result<u8, Error> {
    let cwd = std::env::current_dir().unwrap_or_else(|_| Path::new(".").to_path_buf());
    let mut settings = Settings::resolve(&args.input, &cwd)?;
    super::guess_row_tag(&args.file, &mut settings);
    let label = args.file.display().to_string();
    let mut out = BufWriter::new(out);
    let mut exporter = Exporter::new(args.format, label.clone());
    let clock = Arc::new(SystemClock);
    let follow = FollowOptions {
        force_poll: args.poll,
        poll_interval: args.poll_interval,
        ..FollowOptions::default()
    };
    let source = RunSource::from_argument(&args.file);
    let stdin = source == RunSource::Stdin;
    if !args.follow && !stdin {
        // The file as it is now, once: the same run, fed by one plain read.
        let file = std::fs::File::open(&args.file).map_err(|source| Error::Read {
            path: args.file.clone(),
            source,
        })?;
        let mut run = LiveRun::new(
            RunId(0),
            RunSpec::new(source),
            settings.parse,
            None,
            DEFAULT_KEEP_ROWS,
        );
        let mut reader = ReaderSource::new(label, file, clock, &follow);
        let mut events = Vec::new();
        loop {
            let step = reader.step(&mut events);
            for event in events.drain(..) {
                let happened = run.apply(event, live::now_seconds());
                exporter.handle(&mut run, happened, &mut out)?;
            }
            if step == Step::Finished {
                break;
            }
        }
        exporter.end_generation(&run);
    } else {
        let options = LiveOptions {
            parse: settings.parse,
            analysis: None,
            keep_rows: DEFAULT_KEEP_ROWS,
            follow,
            guess_row_tag: false,
        };
        let (mut live, rx) =
            Live::start(options, clock).map_err(|e| cannot_follow(&args.file, e))?;
        let id = live
            .add(RunSpec::new(source))
            .map_err(|e| cannot_follow(&args.file, e))?;
        for (source, event) in rx.iter() {
            let Some((_, happened)) = live.apply(source, event, live::now_seconds()) else {
                continue;
            };
            let Some(run) = live.run_mut(id) else {
                break;
            };
            if !exporter.handle(run, happened, &mut out)? {
                break;
            }
        }
        if let Some(run) = live.run(id) {
            exporter.end_generation(run);
        }
        live.stop();
    }
    out.flush().map_err(Error::Output)?;
    Ok(0)
}

/// Writes each new row of a run once, and tells what happens to its file.
struct Exporter {
    format: ExportFormat,
    label: String,
    /// Segments of earlier generations of the file (before truncation or rotation).
    segment_base: usize,
    /// Per segment of the current generation: the last source line written.
    written: Vec<u64>,
    /// Global number of the segment whose header was written last.
    header_for: Option<usize>,
    /// Skipped lines already told about (current generation).
    skipped_told: u64,
    line: String,
}

impl Exporter {
    fn new(format: ExportFormat, label: String) -> Self {
        Self {
            format,
            label,
            segment_base: 0,
            written: Vec::new(),
            header_for: None,
            skipped_told: 0,
            line: String::new(),
        }
    }

    fn note(&self, text: &str) {
        eprintln!("plateau: {}: {text}", self.label);
    }

    fn note_dropped(&self, dropped: Option<Partial>) {
        if let Some(p) = dropped {
            self.note(&format!(
                "line {} has no newline ({} bytes); ignored, it may be a row cut in half",
                p.line, p.bytes
            ));
        }
    }

    /// Acts on what one follower event did to the run; `false` when the input is finished.
    fn handle(
        &mut self,
        run: &mut LiveRun,
        happened: Happened,
        out: &mut dyn Write,
    ) -> Result<bool, Error> {
        match happened {
            Happened::Lines { .. } => {
                self.write_new(run, out)?;
                out.flush().map_err(Error::Output)?;
            }
            Happened::Truncated { dropped } => {
                self.note_dropped(dropped);
                self.note("truncated; reading it again from its start");
                self.new_generation(run);
            }
            Happened::Rotated { dropped } => {
                self.note_dropped(dropped);
                self.note("replaced by a new file (rotation); reading the new one");
                self.new_generation(run);
            }
            Happened::Deleted { dropped } => {
                self.note_dropped(dropped);
                self.note("deleted; waiting for it to come back");
                self.new_generation(run);
            }
            Happened::Waiting => self.note("does not exist yet; waiting for it"),
            Happened::Appeared => {
                self.note("appeared; reading it");
                self.new_generation(run);
            }
            Happened::Ended { dropped } => {
                self.note_dropped(dropped);
                return Ok(false);
            }
            Happened::Error { path, message } => {
                eprintln!("plateau: {}: {message}", path.display());
            }
            Happened::Mode(WatchMode::PollingFallback { interval, reason }) => {
                self.note(&format!("polling every {interval:?}: {reason}"))
            }
            Happened::Mode(_) => {}
        }
        Ok(true)
    }

    fn tell_skipped(&mut self, run: &LiveRun) {
        let table = run.table();
        let new = table.skipped_count.saturating_sub(self.skipped_told);
        if new > 0 {
            // The first lines skipped are kept with their reason; later ones only counted.
            let first = usize::try_from(self.skipped_told)
                .ok()
                .and_then(|i| table.skipped.get(i))
                .map(|s| format!(" (line {}: {})", s.line, s.reason))
                .unwrap_or_default();
            self.note(&format!("{new} data-like line(s) skipped{first}"));
            self.skipped_told = table.skipped_count;
        }
    }

    /// The file starts over: new parser, new segments, line numbers from 1.
    fn new_generation(&mut self, run: &mut LiveRun) {
        self.end_generation(run);
        self.segment_base += run.table().segments.len();
        run.start_over();
        self.written.clear();
        self.skipped_told = 0;
    }

    fn end_generation(&mut self, run: &LiveRun) {
        self.tell_skipped(run);
    }

    fn write_new(&mut self, run: &mut LiveRun, out: &mut dyn Write) -> Result<(), Error> {
        let segments = &run.table().segments;
        self.written.resize(segments.len(), 0);
        for (i, seg) in segments.iter().enumerate() {
            let last = self.written.get(i).copied().unwrap_or(0);
            // Rows are in file order; a restart cuts the tail and appends later lines.
            let start = seg.lines.row_at_or_after(last + 1);
            if start >= seg.rows() {
                continue;
            }
            let number = self.segment_base + i + 1;
            if self.header_for != Some(number) && self.format != ExportFormat::Jsonl {
                self.line.clear();
                header(&mut self.line, self.format, seg);
                out.write_all(self.line.as_bytes()).map_err(Error::Output)?;
                self.header_for = Some(number);
            }
            for row in start..seg.rows() {
                self.line.clear();
                format_row(&mut self.line, self.format, number, seg, row);
                out.write_all(self.line.as_bytes()).map_err(Error::Output)?;
            }
            if let (Some(w), Some(l)) = (self.written.get_mut(i), seg.lines.last()) {
                *w = l;
            }
        }
        self.tell_skipped(run);
        // Rows written are not needed again, except the last ones that a restart may
        // replace: keep memory bounded on an endless run.
        run.forget_all_but_last(ROWS_KEPT_AFTER_WRITING);
        Ok(())
    }
}

/// Rows kept in memory after they were written (a restart usually goes back less far).
const ROWS_KEPT_AFTER_WRITING: usize = 4096;

fn separator(format: ExportFormat) -> char {
    if format == ExportFormat::Tsv {
        '\t'
    } else {
        ','
    }
}

/// A header field: quoted for CSV when needed (RFC 4180), tabs replaced for TSV.
fn field(line: &mut String, format: ExportFormat, text: &str) {
    match format {
        ExportFormat::Tsv => line.push_str(&text.replace(['\t', '\n', '\r'], " ")),
        _ if text.contains([',', '"', '\n', '\r']) => {
            line.push('"');
            line.push_str(&text.replace('"', "\"\""));
            line.push('"');
        }
        _ => line.push_str(text),
    }
}

fn header(line: &mut String, format: ExportFormat, seg: &Segment) {
    let sep = separator(format);
    line.push_str("segment");
    line.push(sep);
    line.push_str("line");
    for c in &seg.columns {
        line.push(sep);
        let name = match c.spec.unit {
            Some(u) => format!("{} ({u})", c.spec.name),
            None => c.spec.name.clone(),
        };
        field(line, format, &name);
    }
    line.push('\n');
}

/// A number as text that reads back to the same value; non-finite as `nan`, `inf`, `-inf`;
/// an absent value (the row did not write this column) as an empty field (JSON: `null`).
fn number(line: &mut String, v: f64, json: bool) {
    let q = if json { "\"" } else { "" };
    if crate::table::is_absent(v) {
        if json {
            line.push_str("null");
        }
    } else if v.is_nan() {
        let _ = write!(line, "{q}nan{q}");
    } else if v.is_infinite() {
        let sign = if v < 0.0 { "-" } else { "" };
        let _ = write!(line, "{q}{sign}inf{q}");
    } else if v == 0.0 || (1e-5..1e16).contains(&v.abs()) {
        let _ = write!(line, "{v}");
    } else {
        let _ = write!(line, "{v:e}");
    }
}

fn format_row(line: &mut String, format: ExportFormat, segment: usize, seg: &Segment, row: usize) {
    let src_line = seg.lines.get(row).unwrap_or(0);
    match format {
        ExportFormat::Jsonl => {
            let _ = write!(line, "{{\"segment\":{segment},\"line\":{src_line}");
            for c in &seg.columns {
                line.push(',');
                line.push_str(&serde_json::Value::from(c.spec.name.as_str()).to_string());
                line.push(':');
                number(line, c.values().get(row).copied().unwrap_or(f64::NAN), true);
            }
            line.push_str("}\n");
        }
        _ => {
            let sep = separator(format);
            let _ = write!(line, "{segment}{sep}{src_line}");
            for c in &seg.columns {
                line.push(sep);
                number(
                    line,
                    c.values().get(row).copied().unwrap_or(f64::NAN),
                    false,
                );
            }
            line.push('\n');
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    proptest::proptest! {
        #![proptest_config(proptest::prelude::ProptestConfig::with_cases(256))]
        /// Written numbers read back to the same value (Rust's float parser, IEEE 754
        /// round-trip of the shortest representation).
        #[test]
        fn numbers_read_back_exactly(bits in proptest::prelude::any::<u64>()) {
            let v = f64::from_bits(bits);
            let mut s = String::new();
            number(&mut s, v, false);
            let back: f64 = s.parse().unwrap();
            if v.is_nan() {
                proptest::prop_assert!(back.is_nan());
            } else {
                proptest::prop_assert_eq!(back.to_bits(), v.to_bits());
            }
        }
    }

    #[test]
    fn non_finite_values_are_words_and_json_strings() {
        let mut s = String::new();
        for v in [f64::NAN, f64::INFINITY, f64::NEG_INFINITY] {
            number(&mut s, v, false);
            s.push(' ');
            number(&mut s, v, true);
            s.push(' ');
        }
        assert_eq!(s, "nan \"nan\" inf \"inf\" -inf \"-inf\" ");
        let mut absent = String::new();
        number(&mut absent, crate::table::ABSENT, false);
        absent.push('|');
        number(&mut absent, crate::table::ABSENT, true);
        assert_eq!(absent, "|null");
    }

    #[test]
    fn header_fields_are_quoted_per_rfc_4180() {
        let mut s = String::new();
        field(&mut s, ExportFormat::Csv, "E \"pot\", total");
        assert_eq!(s, "\"E \"\"pot\"\", total\"");
        s.clear();
        field(&mut s, ExportFormat::Tsv, "a\tb");
        assert_eq!(s, "a b");
    }
}
