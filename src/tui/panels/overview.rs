//! The overview: one line per run, the runs that need a look first (unstable, stalled,
//! drifting, an active warning), each with its condition, a sparkline of its main
//! quantity, how far it got, how fast, how long since its last row, and its newest alert.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::Style;
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;

use super::super::format;
use super::super::layout::OverviewColumns;
use super::super::model::{RunLine, Snapshot};
use super::super::theme::{severity_marker, Theme};
use super::header::condition_text;
use super::sparkline;
use crate::live::RunId;
use crate::stages::StageKind;

/// The table of runs.
#[derive(Debug, Clone, Copy)]
pub struct OverviewTable<'a> {
    pub snapshot: &'a Snapshot,
    pub selected: Option<RunId>,
    pub theme: &'a Theme,
}

fn cell(text: &str, width: u16) -> String {
    let w = usize::from(width);
    if w == 0 {
        return String::new();
    }
    let fitted = format::fit(text, w.saturating_sub(1));
    format!("{fitted:<w$}")
}

fn progress_text(line: &RunLine) -> String {
    match (line.sim_time, line.progress) {
        (Some(t), Some(p)) => format!("{} {:.0}%", format::sim_time(t), p * 100.0),
        (Some(t), None) => format::sim_time(t),
        (None, _) => format!("{} rows", format::short_count(line.rows)),
    }
}

/// The newest alert: symbol, kind, column; its time and "cleared" when they fit.
fn alert_text(line: &RunLine, width: usize) -> String {
    match &line.newest_alert {
        Some(a) => {
            let symbol = severity_marker(a.severity).split(' ').next().unwrap_or("");
            let mut s = format!("{symbol} {}", a.kind);
            if let Some(c) = &a.column {
                s.push_str(&format!(" {c}"));
            }
            let mut tail = String::new();
            if !a.active {
                tail.push_str(" cleared");
            }
            if let Some(w) = a.wall {
                tail.push_str(&format!(" {}", format::clock(w)));
            }
            if s.chars().count() + tail.chars().count() < width {
                s.push_str(&tail);
            }
            s
        }
        None => "-".into(),
    }
}

/// The stage a staged run is in: its kind (a short word in a narrow column) and its
/// place among the stages so far; `-` for a run of one stage.
fn stage_text(line: &RunLine, width: u16) -> String {
    let Some(st) = line.stage else {
        return "-".into();
    };
    let kind = if width >= 18 {
        st.kind.name()
    } else {
        match st.kind {
            StageKind::Minimization => "min",
            StageKind::Heating => "heat",
            StageKind::Equilibration => "equil",
            StageKind::Production => "prod",
        }
    };
    format!("{kind} {}/{}", st.number, st.of)
}

/// The run's name in a cell `width` wide: the end of its label (the file name matters
/// most); a batch job's log shows the job's id and name first, then the file's name.
fn name_text(line: &RunLine, width: usize) -> String {
    let room = width.saturating_sub(1);
    let name = match &line.job {
        Some(job) => {
            let file = line.label.rsplit('/').next().unwrap_or(&line.label);
            format::fit(&format!("{job} {file}"), room)
        }
        None => format::fit_left(&line.label, room),
    };
    format!("{name:<width$}")
}

impl OverviewTable<'_> {
    fn heading(&self, cols: &OverviewColumns) -> Line<'static> {
        let t = self.theme;
        let mut spans = vec![
            Span::styled(cell(" STATUS", cols.status), t.label()),
            Span::styled(cell("RUN", cols.name), t.label()),
        ];
        if cols.stage > 0 {
            spans.push(Span::styled(cell("STAGE", cols.stage), t.label()));
        }
        if cols.spark > 0 {
            spans.push(Span::styled(cell("TREND", cols.spark), t.label()));
        }
        spans.push(Span::styled(cell("SIM TIME", cols.progress), t.label()));
        if cols.speed > 0 {
            spans.push(Span::styled(cell("NS/DAY", cols.speed), t.label()));
        }
        spans.push(Span::styled(cell("LAST", cols.age), t.label()));
        spans.push(Span::styled(cell("NEWEST ALERT", cols.alert), t.label()));
        Line::from(spans)
    }

    fn line(&self, line: &RunLine, cols: &OverviewColumns) -> Line<'static> {
        let t = self.theme;
        let mut spans = vec![
            Span::styled(
                cell(
                    &format!(" {}", condition_text(line.condition, line.loading)),
                    cols.status,
                ),
                t.condition(line.condition),
            ),
            Span::styled(name_text(line, usize::from(cols.name)), Style::new()),
        ];
        if cols.stage > 0 {
            spans.push(Span::styled(
                cell(&stage_text(line, cols.stage), cols.stage),
                t.value(),
            ));
        }
        if cols.spark > 0 {
            let s = sparkline(&line.spark);
            spans.push(Span::styled(cell(&s, cols.spark), t.data()));
        }
        spans.push(Span::raw(cell(&progress_text(line), cols.progress)));
        if cols.speed > 0 {
            spans.push(Span::raw(cell(
                &line.ns_per_day.map_or("-".into(), format::number),
                cols.speed,
            )));
        }
        spans.push(Span::styled(
            cell(
                &line.last_row_age.map_or("-".into(), format::duration),
                cols.age,
            ),
            t.label(),
        ));
        let alert_style = match &line.newest_alert {
            Some(a) if a.active => t.severity(a.severity),
            Some(_) => t.alert_text(false),
            None => t.dim(),
        };
        spans.push(Span::styled(
            cell(&alert_text(line, usize::from(cols.alert)), cols.alert),
            alert_style,
        ));
        Line::from(spans)
    }
}

impl Widget for &OverviewTable<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let area = area.intersection(buf.area);
        if area.height == 0 {
            return;
        }
        let mut cols = OverviewColumns::for_width(area.width);
        if self.snapshot.runs.iter().any(|r| r.stage.is_some()) {
            cols = cols.with_stage();
        }
        self.heading(&cols)
            .render(Rect::new(area.x, area.y, area.width, 1), buf);
        let rows = usize::from(area.height - 1);
        let lines = &self.snapshot.runs;
        if lines.is_empty() {
            let text = if let Some(jobs) = &self.snapshot.feed_summary {
                format!(" no job log yet ({jobs}); logs are picked up as jobs start")
            } else if self.snapshot.waiting_patterns.is_empty() {
                " no runs".to_string()
            } else {
                " no file matches yet; new files are picked up as they appear".to_string()
            };
            Line::styled(text, self.theme.dim())
                .render(Rect::new(area.x, area.y + 1, area.width, 1), buf);
            return;
        }
        // Keep the selected line in view.
        let at = self
            .selected
            .and_then(|s| lines.iter().position(|l| l.id == s))
            .unwrap_or(0);
        let first = at.saturating_sub(rows.saturating_sub(1));
        for (i, line) in lines.iter().enumerate().skip(first).take(rows) {
            let y = area.y + 1 + (i - first) as u16;
            let r = Rect::new(area.x, y, area.width, 1);
            self.line(line, &cols).render(r, buf);
            if Some(line.id) == self.selected {
                // The selection is reverse video on the name: visible without colour.
                let name = Rect::new(
                    area.x + cols.status,
                    y,
                    cols.name.min(area.width.saturating_sub(cols.status)),
                    1,
                );
                buf.set_style(name, self.theme.selected());
                if let Some(c) = buf.cell_mut((area.x, y)) {
                    c.set_symbol("▶");
                }
            }
        }
        if lines.len() > first + rows {
            let more = lines.len() - first - rows;
            let text = format!(" +{more} more ↓");
            let w = text.chars().count() as u16;
            if w < area.width {
                buf.set_string(
                    area.x + area.width - w,
                    area.y + area.height - 1,
                    text,
                    self.theme.dim(),
                );
            }
        }
    }
}
