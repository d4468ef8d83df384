//! `plateau report FILE` (thin for now): rows, segments, skipped lines, and per column the
//! count, mean, minimum and maximum of the finite values in canonical units.
//!
//! The statistics issue replaces [`summarize`] and the text with the full analysis.

use std::fmt::Write as _;
use std::io::Write;
use std::path::PathBuf;

use clap::Args;
use serde::Serialize;

use crate::cli::{InputArgs, OutputFormat};
use crate::error::Error;
use crate::table::RunTable;

/// Options of `plateau report`.
#[derive(Debug, Clone, Args)]
pub struct ReportArgs {
    /// The log file (`-` for standard input).
    pub file: PathBuf,
    /// How the log is described.
    #[command(flatten)]
    pub input: InputArgs,
    /// Output format.
    #[arg(long, value_enum, default_value_t = OutputFormat::Text)]
    pub format: OutputFormat,
}

/// Count, mean, minimum and maximum of the finite values of one column.
#[derive(Debug, Clone, PartialEq, Serialize)]
pub struct ColumnSummary {
    /// Column name.
    pub name: String,
    /// Role, if any.
    pub role: Option<crate::mapping::Role>,
    /// Stored (canonical) unit.
    pub unit: Option<String>,
    /// Unit in the file.
    pub source_unit: Option<String>,
    /// Finite values.
    pub count: usize,
    /// Non-finite values (`nan`/`inf` tokens and `****`).
    pub non_finite: u64,
    /// Mean of the finite values (`None` without any).
    pub mean: Option<f64>,
    /// Minimum.
    pub min: Option<f64>,
    /// Maximum.
    pub max: Option<f64>,
}

/// Summarises each column of each segment.
pub fn summarize(table: &RunTable) -> Vec<Vec<ColumnSummary>> {
    table
        .segments
        .iter()
        .map(|s| {
            s.columns
                .iter()
                .map(|c| {
                    let mut count = 0usize;
                    let mut sum = 0.0;
                    let mut min = f64::INFINITY;
                    let mut max = f64::NEG_INFINITY;
                    for &v in c.values() {
                        if v.is_finite() {
                            count += 1;
                            sum += v;
                            min = min.min(v);
                            max = max.max(v);
                        }
                    }
                    ColumnSummary {
                        name: c.spec.name.clone(),
                        role: c.spec.role,
                        unit: c.spec.unit.map(|u| u.to_string()),
                        source_unit: c.spec.source_unit.map(|u| u.to_string()),
                        count,
                        non_finite: c.non_finite + c.overflow,
                        mean: (count > 0).then(|| sum / count as f64),
                        min: (count > 0).then_some(min),
                        max: (count > 0).then_some(max),
                    }
                })
                .collect()
        })
        .collect()
}

fn num(v: Option<f64>) -> String {
    match v {
        Some(x) if x != 0.0 && (x.abs() >= 1e6 || x.abs() < 1e-3) => format!("{x:.6e}"),
        Some(x) => format!("{x:.6}"),
        None => "-".to_string(),
    }
}

/// Runs `plateau report`.
pub fn run(args: &ReportArgs, out: &mut dyn Write) -> Result<u8, Error> {
    let (_settings, table) = super::load(&args.file, &args.input)?;
    let file = args.file.display().to_string();
    let summaries = summarize(&table);
    let text = match args.format {
        OutputFormat::Text => render_text(&file, &table, &summaries),
        OutputFormat::Json => {
            let value = serde_json::json!({
                "schema_version": 0,
                "file": file,
                "rows": table.rows(),
                "segments": table.segments.iter().zip(&summaries).enumerate().map(|(i, (s, cols))| {
                    serde_json::json!({
                        "segment": i + 1,
                        "rows": s.rows(),
                        "rows_replaced": s.restarts.iter().map(|r| r.rows_replaced).sum::<u64>(),
                        "columns": cols.iter().map(|c| serde_json::json!({
                            "name": c.name,
                            "role": c.role,
                            "unit": c.unit,
                            "source_unit": c.source_unit,
                            "count": c.count,
                            "non_finite": c.non_finite,
                            "mean": c.mean.map(super::json_f64),
                            "min": c.min.map(super::json_f64),
                            "max": c.max.map(super::json_f64),
                        })).collect::<Vec<_>>(),
                    })
                }).collect::<Vec<_>>(),
                "skipped_lines": table.skipped_count,
                "skipped": table.skipped.iter().map(|s| serde_json::json!({
                    "line": s.line, "reason": s.reason.to_string()
                })).collect::<Vec<_>>(),
                "text_lines": table.text_lines,
                "partial_line": table.partial_line,
            });
            let mut s = serde_json::to_string_pretty(&value)
                .map_err(|e| Error::Output(std::io::Error::other(e)))?;
            s.push('\n');
            s
        }
    };
    super::emit(out, &text)?;
    Ok(0)
}

fn render_text(file: &str, table: &RunTable, summaries: &[Vec<ColumnSummary>]) -> String {
    let mut o = String::new();
    let _ = writeln!(
        o,
        "{file}: {} rows in {} segment(s)",
        table.rows(),
        table.segments.len()
    );
    for (i, (seg, cols)) in table.segments.iter().zip(summaries).enumerate() {
        let _ = writeln!(o);
        let replaced = seg.restarts.iter().map(|r| r.rows_replaced).sum::<u64>();
        let _ = write!(o, "segment {}: {} rows", i + 1, seg.rows());
        if !seg.restarts.is_empty() {
            let _ = write!(
                o,
                ", {} restart(s) replaced {replaced} row(s)",
                seg.restarts.len()
            );
        }
        let _ = writeln!(o);
        let w = cols
            .iter()
            .map(|c| c.name.chars().count())
            .max()
            .unwrap_or(4)
            .max(4);
        let _ = writeln!(
            o,
            "  {:<w$}  {:<11}  {:<8}  {:>8}  {:>16}  {:>16}  {:>16}",
            "name", "role", "unit", "count", "mean", "min", "max"
        );
        for c in cols {
            let role = c.role.map_or("-".to_string(), |r| r.to_string());
            let _ = write!(
                o,
                "  {:<w$}  {role:<11}  {:<8}  {:>8}  {:>16}  {:>16}  {:>16}",
                c.name,
                c.unit.as_deref().unwrap_or("-"),
                c.count,
                num(c.mean),
                num(c.min),
                num(c.max)
            );
            if c.non_finite > 0 {
                let _ = write!(o, "  ({} non-finite)", c.non_finite);
            }
            let _ = writeln!(o);
        }
    }
    let _ = writeln!(o);
    let _ = writeln!(o, "skipped lines: {}", table.skipped_count);
    for s in table.skipped.iter().take(10) {
        let _ = writeln!(o, "  {file}:{}: {}", s.line, s.reason);
    }
    let _ = writeln!(o, "free-text lines: {}", table.text_lines);
    if let Some(p) = table.partial_line {
        let _ = writeln!(
            o,
            "last line {} has no newline: ignored (it may be a row cut in half)",
            p.line
        );
    }
    for w in &table.warnings {
        let _ = writeln!(o, "warning: {w}");
    }
    o
}
