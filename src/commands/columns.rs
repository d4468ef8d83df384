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
use crate::table::{Metadata, PartialLine, Restart, RunTable, Segment, SkipReason};
use crate::text::{escape_control, escape_document, escape_json};
use crate::units::Dimension;

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
    /// Rows that carry their own names, when the log is written so: `json` (one object
    /// per line) or `pairs` (`name=value`); absent for a table.
    #[serde(skip_serializing_if = "Option::is_none")]
    pub records: Option<&'static str>,
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
    /// Decoration (rule) lines.
    pub decoration_lines: u64,
    /// `key = value` lines before the table.
    pub metadata_lines: u64,
    /// The first hundred of them.
    pub metadata: Vec<Metadata>,
    /// The separator the data lines agreed on, when found from the data (not whitespace
    /// or comma).
    pub delimiter_found: Option<Delimiter>,
    /// What the reader could not decide, with the exact option to add.
    pub hints: Vec<String>,
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
    /// What stayed ambiguous in this segment, with the option that settles it.
    pub ambiguous: Vec<String>,
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
    /// Why the role: `given`, `name`, `unit` or `data`.
    pub why: Option<&'static str>,
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
                        why: c.spec.role_source.map(RoleSource::why),
                        unit: c.spec.unit.map(|u| u.to_string()),
                        source_unit: c.spec.source_unit.map(|u| u.to_string()),
                        assumed: c.spec.assumed,
                        non_finite: c.non_finite,
                        overflow: c.overflow,
                    })
                    .collect(),
                map: map_line(&s.columns.iter().map(|c| c.spec.clone()).collect::<Vec<_>>()),
                ambiguous: ambiguous(s),
            })
            .collect();
        ColumnsView {
            schema_version: COLUMNS_SCHEMA_VERSION,
            file: file.to_string(),
            delimiter_setting: settings.parse.delimiter,
            records: settings.parse.records.as_ref().map(|r| match r.kind {
                crate::parse::RecordKind::Json => "json",
                crate::parse::RecordKind::Pairs => "pairs",
            }),
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
            decoration_lines: table.decoration_lines,
            metadata_lines: table.metadata_lines,
            metadata: table.metadata.clone(),
            delimiter_found: settings
                .layout_guess
                .as_ref()
                .and_then(|g| g.delimiter)
                .filter(|d| DelimiterChoice::fixed(*d) == settings.parse.delimiter),
            hints: hints(settings, table),
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
        if let Some(d) = self.delimiter_found {
            let _ = writeln!(
                o,
                "delimiter   {} (found from the data lines; set another with --delimiter)",
                d.name()
            );
        }
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
        if self.decoration_lines > 0 {
            let _ = writeln!(o, "decoration  {} rule line(s)", self.decoration_lines);
        }
        if self.metadata_lines > 0 {
            let _ = writeln!(o, "preamble    {} key/value line(s)", self.metadata_lines);
            for m in self.metadata.iter().take(10) {
                let _ = writeln!(
                    o,
                    "  {}: {} = {}",
                    m.line,
                    escape_control(&m.key),
                    escape_control(&m.value)
                );
            }
            if self.metadata_lines > 10 {
                let _ = writeln!(
                    o,
                    "  ... (first {} listed in --format json)",
                    self.metadata.len()
                );
            }
        }
        let _ = writeln!(o, "segments    {}", self.segments.len());
        for s in &self.segments {
            let header = match s.header_line {
                Some(l) if s.header_commented => {
                    format!("header at line {l} (behind a comment prefix)")
                }
                Some(l) => format!("header at line {l}"),
                None => match self.records {
                    Some("json") => "rows are JSON objects, their keys the names".to_string(),
                    Some(_) => "rows are name=value pairs".to_string(),
                    None => "no header".to_string(),
                },
            };
            // Self-named rows have no separator of their own.
            let split = match self.records {
                Some(_) => String::new(),
                None => format!(", {}-separated", s.delimiter.name()),
            };
            let span = match (s.first_line, s.last_line) {
                (Some(a), Some(b)) => format!(", lines {a}-{b}"),
                _ => String::new(),
            };
            let _ = writeln!(o);
            let _ = writeln!(
                o,
                "segment {}: {header}{split}, {} rows{span}",
                s.segment, s.rows
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
                "  {:>3}  {:<name_w$}  {:<12}  {:<5}  {:<8}  source unit",
                "#", "name", "role", "from", "unit"
            );
            for c in &s.columns {
                let idx = c.index.map_or("-".to_string(), |i| i.to_string());
                let role = match (c.role, c.role_source) {
                    (Some(r), Some(src)) if src != RoleSource::Given => format!("{r}?"),
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
                    "  {idx:>3}  {:<name_w$}  {role:<12}  {:<5}  {:<8}  {source}{notes}",
                    escape_control(&c.name),
                    c.why.unwrap_or("-"),
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
            for a in &s.ambiguous {
                let _ = writeln!(o, "  ambiguous: {}", escape_control(a));
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
                .any(|c| c.role_source.is_some_and(|r| r != RoleSource::Given))
        }) {
            let _ = writeln!(
                o,
                "roles marked ? are guessed (from: the column's name, its unit, or its values); \
                 fix them with --map ROLE=COLUMN[:UNIT]"
            );
        }
        for h in &self.hints {
            let _ = writeln!(o, "hint: {}", escape_control(h));
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

/// What stayed ambiguous in a segment: an energy column whose name does not say which
/// energy, a role found in more than one column, columns with no role at all.
fn ambiguous(seg: &Segment) -> Vec<String> {
    let mut out = Vec::new();
    for c in &seg.columns {
        let (Some(field), None) = (c.spec.field, c.spec.role) else {
            continue;
        };
        if c.spec.source_unit.map(|u| u.dimension()) == Some(Dimension::Energy) {
            let unit = c
                .spec
                .source_unit
                .map(|u| format!(":{u}"))
                .unwrap_or_default();
            out.push(format!(
                "column {} '{}' is an energy but its name does not say which: add --map \
                 potential={}{unit} (or kinetic, total, conserved)",
                field + 1,
                c.spec.name,
                field + 1
            ));
        }
    }
    for role in Role::ALL {
        let cols: Vec<usize> = seg
            .columns
            .iter()
            .filter(|c| c.spec.role == Some(role))
            .filter_map(|c| c.spec.field.map(|f| f + 1))
            .collect();
        if cols.len() > 1 && matches!(role, Role::Step | Role::Time) {
            let list: Vec<String> = cols.iter().map(usize::to_string).collect();
            out.push(format!(
                "{role} read in columns {}: the first orders the rows; to choose, add --map \
                 {role}=N",
                list.join(", ")
            ));
        }
    }
    let unnamed: Vec<String> = seg
        .columns
        .iter()
        .filter(|c| c.spec.role.is_none() && c.spec.source_unit.is_none())
        .filter_map(|c| c.spec.field.map(|f| format!("{} '{}'", f + 1, c.spec.name)))
        .collect();
    if !unnamed.is_empty() && unnamed.len() < seg.columns.len() {
        out.push(format!(
            "no role for column(s) {}: shown as they are; if one is a quantity plateau \
             checks, add --map ROLE=N",
            unnamed.join(", ")
        ));
    }
    out
}

/// When the reader found no rows, or skipped many lines: what it saw and the exact option
/// to add.
fn hints(settings: &Settings, table: &RunTable) -> Vec<String> {
    let mut out = Vec::new();
    let guess = settings.layout_guess.as_ref();
    let rows = table.rows();
    let not_numbers = table
        .skipped
        .iter()
        .filter(|s| matches!(s.reason, SkipReason::NotANumber { .. }))
        .count();
    if rows == 0 || not_numbers * 2 > rows {
        if let Some((d, n)) = guess
            .and_then(|g| {
                g.scores
                    .iter()
                    .find(|(d, n)| *n > 0 && !matches!(d, Delimiter::Whitespace))
            })
            .filter(|_| settings.parse.delimiter == DelimiterChoice::Auto)
        {
            out.push(format!(
                "{n} data line(s) split into numbers on '{}': add --delimiter {}",
                d.name(),
                d.option_value()
            ));
        }
    }
    if rows == 0 {
        if let Some((word, n)) = guess.and_then(|g| g.tag_candidate.clone()) {
            if settings.parse.row_tag.as_deref() != Some(word.as_str()) {
                out.push(format!(
                    "{n} line(s) start with '{word}' followed by numbers: add --row-tag {word}"
                ));
            }
        }
        if out.is_empty() {
            out.push(
                "no line reads as a row of numbers: if the rows start with a word, add \
                 --row-tag WORD; if their fields are separated by something unusual, add \
                 --delimiter CHAR"
                    .to_string(),
            );
        }
    }
    out
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
