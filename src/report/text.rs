//! Text and markdown renderings of a [`Report`], for people.

use std::fmt::Write as _;

use crate::alert::format_number;

use super::model::{ColumnReport, EquilibrationState, Report};
use crate::text::{escape_control, escape_document};

/// `mean ± error` rounded to the error's two significant digits.
pub fn value_with_error(mean: f64, error: Option<f64>) -> String {
    match error.filter(|e| e.is_finite() && *e > 0.0) {
        Some(e) if mean.is_finite() => {
            let exponent = e.log10().floor() as i32;
            let decimals = (1 - exponent).max(0) as usize;
            if decimals > 8 || mean.abs() >= 1e9 {
                format!("{mean:.4e} ± {e:.2e}")
            } else {
                format!("{mean:.decimals$} ± {e:.decimals$}")
            }
        }
        _ => format_number(mean, ""),
    }
}

/// Three significant digits (for spreads and g, where more digits are noise).
pub fn sig3(v: f64) -> String {
    if !v.is_finite() {
        return format_number(v, "");
    }
    if v == 0.0 {
        return "0".to_string();
    }
    let e = v.abs().log10().floor() as i32;
    if !(-3..6).contains(&e) {
        return format!("{v:.2e}");
    }
    let decimals = (2 - e).max(0) as usize;
    format!("{v:.decimals$}")
}

fn opt_number(v: Option<f64>, unit: &str) -> String {
    v.map(|x| format_number(x, unit))
        .unwrap_or_else(|| "-".to_string())
}

fn onset_text(c: &ColumnReport) -> String {
    match (c.equilibration_state, c.equilibration) {
        (EquilibrationState::Equilibrated, Some(o)) => match o.time {
            Some(t) => format!("{} ps", format_number(t, "")),
            None => format!("row {}", o.row),
        },
        (EquilibrationState::NotYet, _) => "not yet".to_string(),
        (EquilibrationState::TooShort, _) => "too short".to_string(),
        (EquilibrationState::Equilibrated, None) | (EquilibrationState::NotAnalysed, _) => {
            "-".to_string()
        }
    }
}

fn run_onset_text(r: &Report) -> String {
    match (r.equilibration_state, r.equilibration) {
        (EquilibrationState::Equilibrated, Some(o)) => {
            let when = match o.time {
                Some(t) => format!("row {} (t = {})", o.row, format_number(t, "ps")),
                None => format!("row {}", o.row),
            };
            if r.equilibration_from.is_empty() {
                format!("equilibrated from {when}")
            } else {
                format!(
                    "equilibrated from {when}, the latest onset of {}",
                    r.equilibration_from.join(", ")
                )
            }
        }
        (EquilibrationState::NotYet, _) => {
            "not equilibrated yet: the quantities that matter are still relaxing".to_string()
        }
        (EquilibrationState::TooShort, _) => "too few rows to judge equilibration".to_string(),
        (EquilibrationState::Equilibrated, None) | (EquilibrationState::NotAnalysed, _) => {
            "equilibration unknown".to_string()
        }
    }
}

fn pad(s: &str, width: usize) -> String {
    let n = s.chars().count();
    if n >= width {
        s.to_string()
    } else {
        format!("{s}{}", " ".repeat(width - n))
    }
}

fn column_rows(r: &Report) -> Vec<[String; 7]> {
    r.columns
        .iter()
        .map(|c| {
            let (mean, std, g, neff) = match &c.production {
                Some(p) => (
                    value_with_error(p.mean, p.sem.or(p.sem_from_g)),
                    p.std.map(sig3).unwrap_or_else(|| "-".to_string()),
                    p.inefficiency.map(sig3).unwrap_or_else(|| "-".to_string()),
                    p.effective_samples
                        .map(|n| format!("{n:.0}"))
                        .unwrap_or_else(|| "-".to_string()),
                ),
                None => (
                    "-".to_string(),
                    "-".to_string(),
                    "-".to_string(),
                    "-".to_string(),
                ),
            };
            let unit = escape_control(&c.unit);
            let unit = if c.unit_assumed {
                format!("{unit} (assumed)")
            } else {
                unit.into_owned()
            };
            let name = escape_control(&c.name).into_owned();
            [name, unit, onset_text(c), mean, std, g, neff]
        })
        .collect()
}

const COLUMN_HEADERS: [&str; 7] = ["column", "unit", "onset", "mean ± sem", "std", "g", "N_eff"];

fn findings(r: &Report) -> Vec<String> {
    let mut out = Vec::new();
    for c in &r.columns {
        if let Some(d) = &c.drift {
            let mut s = format!(
                "drift of {}{}: {} per {} ({}% interval {} .. {})",
                c.name,
                if d.conservation {
                    ""
                } else {
                    " (conserved only in NVE: shown, no alert)"
                },
                value_with_error(d.slope_per_ns, Some(d.stderr_per_ns)),
                d.per,
                format_number(d.confidence * 100.0, ""),
                format_number(d.ci_low_per_ns, ""),
                format_number(d.ci_high_per_ns, c.unit.as_str()),
            );
            if let Some(a) = d.per_atom_per_ns {
                s.push_str(&format!(", {} per atom", format_number(a, "")));
            }
            if let Some(k) = d.kt_per_ns_per_dof {
                s.push_str(&format!(
                    ", {} k_B·T/ns per degree of freedom",
                    format_number(k, "")
                ));
            }
            s.push_str(if d.significant {
                "; significant"
            } else {
                "; not significant"
            });
            out.push(s);
        }
        if let Some(f) = &c.fluctuation {
            out.push(format!(
                "fluctuation of {}: σ/mean = {}, canonical {} (band {} .. {}, N_df {}): {}",
                c.name,
                format_number(f.observed, ""),
                format_number(f.expected, ""),
                format_number(f.low, ""),
                format_number(f.high, ""),
                format_number(f.degrees_of_freedom, ""),
                f.verdict
            ));
        }
        if let Some(t) = &c.trend {
            if t.still_changing {
                out.push(format!(
                    "trend in {} after the run's onset: {} per ns, a change of {} ({} SEM; \
                     p = {} before Holm's correction): still changing",
                    c.name,
                    opt_number(t.slope_per_ns, c.unit.as_str()),
                    opt_number(t.change, c.unit.as_str()),
                    match (t.change, t.sem) {
                        (Some(ch), Some(se)) if se > 0.0 => sig3(ch.abs() / se),
                        _ => "-".to_string(),
                    },
                    opt_number(t.p_value, "")
                ));
            }
        }
    }
    out
}

fn header_lines(r: &Report) -> Vec<String> {
    let mut lines = Vec::new();
    lines.push(format!(
        "status: {} ({})   rows: {}   segments: {}   skipped lines: {}",
        r.status.name(),
        r.status_reason,
        r.rows,
        r.segments.len(),
        r.skipped_lines
    ));
    if let Some(e) = &r.ensemble {
        let mut s = format!("ensemble: {} ({}: {})", e.name, e.how, e.reason);
        if let Some(n) = r.degrees_of_freedom {
            s.push_str(&format!("   degrees of freedom: {}", format_number(n, "")));
        }
        lines.push(s);
    }
    lines.push(run_onset_text(r));
    if !r.restarts.is_empty() {
        let replaced: u64 = r.restarts.iter().map(|x| x.replaced).sum();
        lines.push(format!(
            "restarts: {} ({} rows replaced)",
            r.restarts.len(),
            replaced
        ));
    }
    if let Some(f) = &r.folding {
        lines.push(format!(
            "memory cap: {} rows at full resolution; rows before row {} folded into blocks of \
             {} rows; approximate: {}",
            f.keep_rows,
            f.full_resolution_from_row,
            f.block_rows,
            f.approximate.join(", ")
        ));
    }
    if r.source.last_line_ignored {
        lines.push(
            "the last line has no newline and was ignored (it may be a row cut in half)"
                .to_string(),
        );
    }
    if let Some(t) = &r.throughput {
        let mut s = format!("throughput: {} ns/day", format_number(t.ns_per_day, ""));
        if let Some(e) = &r.eta {
            s.push_str(&format!(
                ", {} s to {} ps",
                format_number(e.seconds, ""),
                format_number(e.until_ps, "")
            ));
        }
        lines.push(s);
    }
    lines
}

/// Plain text for a terminal. Text from the log (path, names, units, messages) has its
/// control characters escaped ([`crate::text`]).
pub fn render_text(r: &Report) -> String {
    escape_document(&render_text_raw(r)).into_owned()
}

/// The stage list is shown when the run has more than one stage, or its one stage is a
/// minimization or a heating ramp.
fn stages_shown(r: &Report) -> bool {
    use crate::stages::StageKind;
    r.stages.len() > 1
        || r.stages
            .iter()
            .any(|s| matches!(s.kind, StageKind::Minimization | StageKind::Heating))
}

fn stage_kind_words(st: &crate::stages::StageRecord) -> String {
    match st.conditions {
        Some(c) if st.kind != crate::stages::StageKind::Minimization => {
            format!("{} ({})", st.kind.name(), c.words())
        }
        _ => st.kind.name().to_string(),
    }
}

fn stage_rows(st: &crate::stages::StageRecord) -> String {
    format!(
        "{}-{}",
        st.first_row,
        (st.first_row + st.rows).saturating_sub(1)
    )
}

fn stage_times(st: &crate::stages::StageRecord) -> String {
    match (st.start_time, st.end_time) {
        (Some(a), Some(b)) => format!("{}-{}", format_number(a, ""), format_number(b, "")),
        _ => "-".to_string(),
    }
}

fn stage_detail_with_file(st: &crate::stages::StageRecord) -> String {
    match &st.file {
        Some(f) => format!("{} [{}]", st.detail, escape_control(f)),
        None => st.detail.clone(),
    }
}

fn stage_line(st: &crate::stages::StageRecord) -> String {
    let time = match (st.start_time, st.end_time) {
        (Some(_), Some(_)) => format!(", {} ps", stage_times(st)),
        _ => String::new(),
    };
    let file = st
        .file
        .as_deref()
        .map(|f| format!(", {}", escape_control(f)))
        .unwrap_or_default();
    format!(
        "{}. {:<36} rows {}{time}{file} ({}): {}",
        st.index + 1,
        stage_kind_words(st),
        stage_rows(st),
        st.started_by.words(),
        st.verdict
    )
}

/// Which stage the statistics below describe.
fn statistics_of(r: &Report) -> String {
    match r.stages.last() {
        Some(st) => format!(
            "statistics below: stage {} ({}), rows {}; earlier stages excluded",
            st.index + 1,
            st.kind.name(),
            stage_rows(st)
        ),
        None => String::new(),
    }
}

fn render_text_raw(r: &Report) -> String {
    let mut out = String::new();
    let _ = writeln!(out, "{}", escape_control(&r.source.path));
    for l in header_lines(r) {
        let _ = writeln!(out, "{l}");
    }
    out.push('\n');
    if stages_shown(r) {
        let _ = writeln!(out, "stages:");
        for st in &r.stages {
            let _ = writeln!(out, "  {}", stage_line(st));
            let _ = writeln!(out, "      {}", st.detail);
        }
        let _ = writeln!(out, "{}", statistics_of(r));
        out.push('\n');
    }
    let rows = column_rows(r);
    let mut widths = COLUMN_HEADERS.map(|h| h.chars().count());
    for row in &rows {
        for (w, cell) in widths.iter_mut().zip(row.iter()) {
            *w = (*w).max(cell.chars().count());
        }
    }
    let line = |cells: &[String]| {
        let parts: Vec<String> = cells
            .iter()
            .zip(widths.iter())
            .map(|(c, w)| pad(c, *w))
            .collect();
        parts.join("  ").trim_end().to_string()
    };
    let headers: Vec<String> = COLUMN_HEADERS.iter().map(|s| s.to_string()).collect();
    let _ = writeln!(out, "{}", line(&headers));
    for row in &rows {
        let _ = writeln!(out, "{}", line(row));
    }
    let f = findings(r);
    if !f.is_empty() {
        out.push('\n');
        for l in f {
            let _ = writeln!(out, "{l}");
        }
    }
    if !r.skipped.is_empty() {
        out.push('\n');
        let _ = writeln!(out, "skipped lines (first {}):", r.skipped.len().min(10));
        for s in r.skipped.iter().take(10) {
            let _ = writeln!(out, "  line {}: {}", s.line, s.reason);
        }
    }
    out.push('\n');
    if r.alerts.is_empty() {
        let _ = writeln!(out, "alerts: none");
    } else {
        let _ = writeln!(out, "alerts: {}", r.alerts.len());
        for a in &r.alerts {
            let _ = writeln!(out, "  {}", a.to_alert().one_line_with_episode());
        }
    }
    out
}

fn md_escape(s: &str) -> String {
    escape_control(s).replace('|', "\\|")
}

/// Markdown for a lab notebook. Text from the log has its control characters escaped
/// ([`crate::text`]).
pub fn render_markdown(r: &Report) -> String {
    escape_document(&render_markdown_raw(r)).into_owned()
}

fn render_markdown_raw(r: &Report) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "# plateau report: `{}`\n",
        escape_control(&r.source.path).replace('`', "'")
    );
    for l in header_lines(r) {
        let _ = writeln!(out, "- {}", md_escape(&l));
    }
    out.push('\n');
    if stages_shown(r) {
        let _ = writeln!(out, "## Stages\n");
        let _ = writeln!(
            out,
            "| # | kind | rows | time (ps) | started by | verdict | detail |"
        );
        let _ = writeln!(out, "|---|---|---|---|---|---|---|");
        for st in &r.stages {
            let _ = writeln!(
                out,
                "| {} | {} | {} | {} | {} | {} | {} |",
                st.index + 1,
                md_escape(&stage_kind_words(st)),
                stage_rows(st),
                stage_times(st),
                st.started_by.words(),
                st.verdict,
                md_escape(&stage_detail_with_file(st))
            );
        }
        let _ = writeln!(out, "\n{}\n", md_escape(&statistics_of(r)));
    }
    let _ = writeln!(out, "| {} |", COLUMN_HEADERS.join(" | "));
    let _ = writeln!(out, "|{}", "---|".repeat(COLUMN_HEADERS.len()));
    for row in column_rows(r) {
        let cells: Vec<String> = row.iter().map(|c| md_escape(c)).collect();
        let _ = writeln!(out, "| {} |", cells.join(" | "));
    }
    let f = findings(r);
    if !f.is_empty() {
        let _ = writeln!(out, "\n## Findings\n");
        for l in f {
            let _ = writeln!(out, "- {}", md_escape(&l));
        }
    }
    let _ = writeln!(out, "\n## Alerts\n");
    if r.alerts.is_empty() {
        let _ = writeln!(out, "None.");
    } else {
        let _ = writeln!(
            out,
            "| severity | kind | column | line | row | time (ps) | message | course |"
        );
        let _ = writeln!(out, "|---|---|---|---|---|---|---|---|");
        for a in &r.alerts {
            let _ = writeln!(
                out,
                "| {} | {} | {} | {} | {} | {} | {} | {} |",
                a.severity.name(),
                a.kind.name(),
                md_escape(a.column.as_deref().unwrap_or("-")),
                a.line.map(|l| l.to_string()).unwrap_or_else(|| "-".into()),
                a.row.map(|l| l.to_string()).unwrap_or_else(|| "-".into()),
                opt_number(a.time, ""),
                md_escape(&a.message),
                md_escape(&a.to_alert().episode_words())
            );
        }
    }
    let _ = writeln!(
        out,
        "\nThese verdicts are statistical advice from the data seen so far."
    );
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn error_rounding_uses_two_significant_digits() {
        assert_eq!(value_with_error(300.0234, Some(0.1149)), "300.02 ± 0.11");
        assert_eq!(value_with_error(-41500.7, Some(12.3)), "-41501 ± 12");
        assert_eq!(value_with_error(5.0, None), "5");
        assert_eq!(sig3(2.12553), "2.13");
        assert_eq!(sig3(163.284), "163");
        assert_eq!(sig3(1.0), "1.00");
    }
}
