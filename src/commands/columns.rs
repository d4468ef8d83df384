//! `plateau columns FILE`: the detected layout of a log and a ready-to-paste `--map` line.

use std::fmt::Write as _;
use std::io::Write;

use serde::Serialize;

pub use crate::cli::ColumnsArgs;
use crate::cli::OutputFormat;
use crate::config::Settings;
use crate::error::Error;
use crate::mapping::{map_line, Role, RoleSource};
use crate::parse::{Delimiter, DelimiterChoice};
use crate::table::{PartialLine, Restart, RunTable};
use crate::text::{escape_control, escape_document, escape_json};

/// Version of the JSON written by `columns --format json`.
pub const COLUMNS_SCHEMA_VERSION: u32 = 1;

/// What `columns` shows (also its JSON form).
#[derive(Debug, Clone, Serialize)]
pub struct ColumnsView {
    /// JSON schema version.
    pub schema_version: u32,
    /// The file read.
    pub file: String,
    /// The delimiter setting (`auto` or fixed).
    pub delimiter_setting: DelimiterChoice,
    /// Comment prefixes in force.
    pub comment_prefixes: Vec<String>,
    /// Row tag, if any.
    pub row_tag: Option<String>,
    /// Whether the row tag was guessed from the log.
    pub row_tag_guessed: bool,
    /// The settings file used, if any.
    pub config_file: Option<String>,
    /// The layout used, if any.
    pub layout: Option<String>,
    /// Time step in ps (`--timestep`), if given.
    pub timestep_ps: Option<f64>,
    /// Degrees of freedom (`--dof`, or 3N − constraints − 3 from `--atoms`), if known.
    pub degrees_of_freedom: Option<u64>,
    /// Ensemble (`--ensemble`), if given.
    pub ensemble: Option<crate::config::Ensemble>,
    /// Complete lines read.
    pub lines: u64,
    /// Rows in all segments.
    pub rows: usize,
    /// Segments.
    pub segments: Vec<SegmentView>,
    /// Number of skipped data-like lines.
    pub skipped_lines: u64,
    /// The first hundred skipped lines.
    pub skipped: Vec<SkippedView>,
    /// Free-text lines.
    pub text_lines: u64,
    /// Comment lines (not headers).
    pub comment_lines: u64,
    /// Blank lines.
    pub blank_lines: u64,
    /// Header lines.
    pub header_lines: u64,
    /// The ignored last line without newline, if any.
    pub partial_line: Option<PartialLine>,
    /// Mapping warnings.
    pub warnings: Vec<String>,
}

/// One segment in [`ColumnsView`].
#[derive(Debug, Clone, Serialize)]
pub struct SegmentView {
    /// 1-based segment number.
    pub segment: usize,
    /// Header line, if any.
    pub header_line: Option<u64>,
    /// Header behind a comment prefix.
    pub header_commented: bool,
    /// Detected delimiter.
    pub delimiter: Delimiter,
    /// Rows.
    pub rows: usize,
    /// First row's line.
    pub first_line: Option<u64>,
    /// Last row's line.
    pub last_line: Option<u64>,
    /// Repeated identical headers.
    pub header_repeats: u64,
    /// Restarts.
    pub restarts: Vec<Restart>,
    /// Columns.
    pub columns: Vec<ColumnView>,
    /// Ready-to-paste mapping for this segment.
    pub map: String,
}

/// One column in [`SegmentView`].
#[derive(Debug, Clone, Serialize)]
pub struct ColumnView {
    /// 1-based field index (null for a derived column).
    pub index: Option<usize>,
    /// Name.
    pub name: String,
    /// Unit text from the header.
    pub header_unit: Option<String>,
    /// Role.
    pub role: Option<Role>,
    /// Given or guessed.
    pub role_source: Option<RoleSource>,
    /// Stored (canonical) unit.
    pub unit: Option<String>,
    /// Unit in the file.
    pub source_unit: Option<String>,
    /// Unit assumed (not stated).
    pub assumed: bool,
    /// Values from `nan`/`inf` tokens.
    pub non_finite: u64,
    /// `****` fields.
    pub overflow: u64,
}

/// A skipped line in [`ColumnsView`].
#[derive(Debug, Clone, Serialize)]
pub struct SkippedView {
    /// 1-based line.
    pub line: u64,
    /// Kind of problem: `field-count`, `not-a-number` or `tagged-not-data`.
    pub kind: &'static str,
    /// Why, in words.
    pub reason: String,
}

impl ColumnsView {
    /// Builds the view of a parsed table.
    pub fn new(file: &str, settings: &Settings, table: &RunTable) -> ColumnsView {
        let segments = table
            .segments
            .iter()
            .enumerate()
            .map(|(i, s)| SegmentView {
                segment: i + 1,
                header_line: s.header_line,
                header_commented: s.header_commented,
                delimiter: s.delimiter,
                rows: s.rows(),
                first_line: s.lines.first(),
                last_line: s.lines.last(),
                header_repeats: s.header_repeats,
                restarts: s.restarts.clone(),
                columns: s
                    .columns
                    .iter()
                    .map(|c| ColumnView {
                        index: c.spec.field.map(|f| f + 1),
                        name: c.spec.name.clone(),
                        header_unit: c.spec.header_unit.clone(),
                        role: c.spec.role,
                        role_source: c.spec.role_source,
                        unit: c.spec.unit.map(|u| u.to_string()),
                        source_unit: c.spec.source_unit.map(|u| u.to_string()),
                        assumed: c.spec.assumed,
                        non_finite: c.non_finite,
                        overflow: c.overflow,
                    })
                    .collect(),
                map: map_line(&s.columns.iter().map(|c| c.spec.clone()).collect::<Vec<_>>()),
            })
            .collect();
        ColumnsView {
            schema_version: COLUMNS_SCHEMA_VERSION,
            file: file.to_string(),
            delimiter_setting: settings.parse.delimiter,
            comment_prefixes: settings.parse.comment_prefixes.clone(),
            row_tag: settings.parse.row_tag.clone(),
            row_tag_guessed: settings.row_tag_guessed,
            config_file: settings
                .config_file
                .as_ref()
                .map(|p| p.display().to_string()),
            layout: settings.layout.clone(),
            timestep_ps: settings.timestep_ps,
            degrees_of_freedom: settings.degrees_of_freedom(),
            ensemble: settings.ensemble,
            lines: table.lines,
            rows: table.rows(),
            segments,
            skipped_lines: table.skipped_count,
            skipped: table
                .skipped
                .iter()
                .map(|s| SkippedView {
                    line: s.line,
                    kind: s.reason.kind(),
                    reason: s.reason.to_string(),
                })
                .collect(),
            text_lines: table.text_lines,
            comment_lines: table.comment_lines,
            blank_lines: table.blank_lines,
            header_lines: table.header_lines,
            partial_line: table.partial_line,
            warnings: table.warnings.clone(),
        }
    }

    /// The text form.
    pub fn to_text(&self) -> String {
        let mut o = String::new();
        let _ = writeln!(o, "file        {}", escape_control(&self.file));
        let prefixes = if self.comment_prefixes.is_empty() {
            "(none)".to_string()
        } else {
            escape_control(&self.comment_prefixes.join(" ")).into_owned()
        };
        let _ = writeln!(o, "comments    {prefixes}");
        if let Some(tag) = &self.row_tag {
            let how = if self.row_tag_guessed {
                " (guessed from the log; set another with --row-tag)"
            } else {
                ""
            };
            let _ = writeln!(o, "row tag     {}{how}", escape_control(tag));
        }
        if let Some(f) = &self.config_file {
            match &self.layout {
                Some(l) => {
                    let _ = writeln!(o, "settings    {f} (layout {l})");
                }
                None => {
                    let _ = writeln!(o, "settings    {f}");
                }
            }
        }
        if let Some(dt) = self.timestep_ps {
            let _ = writeln!(o, "time step   {dt} ps");
        }
        if let Some(n) = self.degrees_of_freedom {
            let _ = writeln!(o, "N_df        {n}");
        }
        if let Some(e) = self.ensemble {
            let _ = writeln!(o, "ensemble    {}", e.to_string().to_uppercase());
        }
        let _ = writeln!(
            o,
            "lines       {} read: {} rows, {} skipped, {} free text, {} comments, {} headers, {} blank",
            self.lines,
            self.rows,
            self.skipped_lines,
            self.text_lines,
            self.comment_lines,
            self.header_lines,
            self.blank_lines
        );
        let _ = writeln!(o, "segments    {}", self.segments.len());
        for s in &self.segments {
            let header = match s.header_line {
                Some(l) if s.header_commented => {
                    format!("header at line {l} (behind a comment prefix)")
                }
                Some(l) => format!("header at line {l}"),
                None => "no header".to_string(),
            };
            let span = match (s.first_line, s.last_line) {
                (Some(a), Some(b)) => format!(", lines {a}-{b}"),
                _ => String::new(),
            };
            let _ = writeln!(o);
            let _ = writeln!(
                o,
                "segment {}: {header}, {}-separated, {} rows{span}",
                s.segment,
                s.delimiter.name(),
                s.rows
            );
            let name_w = s
                .columns
                .iter()
                .map(|c| escape_control(&c.name).chars().count())
                .max()
                .unwrap_or(4)
                .max(4);
            let _ = writeln!(
                o,
                "  {:>3}  {:<name_w$}  {:<12}  {:<8}  source unit",
                "#", "name", "role", "unit"
            );
            for c in &s.columns {
                let idx = c.index.map_or("-".to_string(), |i| i.to_string());
                let role = match (c.role, c.role_source) {
                    (Some(r), Some(RoleSource::Guessed)) => format!("{r}?"),
                    (Some(r), _) => r.to_string(),
                    (None, _) => "-".to_string(),
                };
                let source = match (&c.source_unit, c.index) {
                    (Some(u), _) if c.assumed => format!("{} (assumed)", escape_control(u)),
                    (Some(u), Some(_)) => escape_control(u).into_owned(),
                    (Some(_), None) => "derived from step".to_string(),
                    (None, _) => c.header_unit.clone().map_or("-".into(), |u| {
                        format!("{} (not understood)", escape_control(&u))
                    }),
                };
                let mut notes = String::new();
                if c.non_finite > 0 {
                    let _ = write!(notes, "  [{} non-finite]", c.non_finite);
                }
                if c.overflow > 0 {
                    let _ = write!(notes, "  [{} overflow ****]", c.overflow);
                }
                let _ = writeln!(
                    o,
                    "  {idx:>3}  {:<name_w$}  {role:<12}  {:<8}  {source}{notes}",
                    escape_control(&c.name),
                    escape_control(c.unit.as_deref().unwrap_or("-")),
                );
            }
            if s.header_repeats > 0 {
                let _ = writeln!(o, "  header repeated {} time(s)", s.header_repeats);
            }
            for r in &s.restarts {
                let _ = writeln!(
                    o,
                    "  restart at line {}: back to {}, {} row(s) replaced",
                    r.line, r.step, r.rows_replaced
                );
            }
            if s.map.is_empty() {
                let _ = writeln!(
                    o,
                    "  no roles found: name them with --map ROLE=COLUMN (e.g. --map step=1 --map temperature=3)"
                );
            } else {
                let _ = writeln!(o, "  map: {}", escape_control(&s.map));
            }
        }
        let _ = writeln!(o);
        if self.segments.iter().any(|s| {
            s.columns
                .iter()
                .any(|c| c.role_source == Some(RoleSource::Guessed))
        }) {
            let _ = writeln!(o, "roles marked ? are guessed from the header; fix them with --map ROLE=COLUMN[:UNIT]");
        }
        if self.skipped_lines > 0 {
            let _ = writeln!(o, "skipped lines: {}", self.skipped_lines);
            for s in self.skipped.iter().take(10) {
                let _ = writeln!(
                    o,
                    "  {}:{}: {}",
                    escape_control(&self.file),
                    s.line,
                    escape_control(&s.reason)
                );
            }
            if self.skipped_lines > 10 {
                let _ = writeln!(
                    o,
                    "  ... (first {} listed in --format json)",
                    self.skipped.len()
                );
            }
        }
        if let Some(p) = &self.partial_line {
            let _ = writeln!(
                o,
                "last line {} ({} bytes) has no newline: ignored (it may be a row cut in half)",
                p.line, p.bytes
            );
        }
        for w in &self.warnings {
            let _ = writeln!(o, "warning: {}", escape_control(w));
        }
        o
    }
}

/// Runs `plateau columns`.
pub fn run(args: &ColumnsArgs, out: &mut dyn Write) -> Result<u8, Error> {
    let (settings, table) = super::load(&args.file, &args.input)?;
    let view = ColumnsView::new(&args.file.display().to_string(), &settings, &table);
    let text = match args.format {
        OutputFormat::Text => escape_document(&view.to_text()).into_owned(),
        OutputFormat::Json => {
            let s = serde_json::to_string_pretty(&view)
                .map_err(|e| Error::Output(std::io::Error::other(e)))?;
            let mut s = escape_json(&s).into_owned();
            s.push('\n');
            s
        }
    };
    super::emit(out, &text)?;
    Ok(0)
}
