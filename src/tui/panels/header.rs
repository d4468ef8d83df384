//! The top rows: the run's condition first (the first question is "is it healthy?"), then
//! its name, and on the right how it is followed and how long since its last row.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;

use crate::alert::Severity;

use super::super::format;
use super::super::model::{Condition, Detail, Snapshot};
use super::super::theme::Theme;

/// `✓ steady` or `… 45 %` (a file's first read).
pub fn condition_text(c: Condition, loading: Option<f64>) -> String {
    match (c, loading) {
        (Condition::Loading, Some(f)) => format!("{} {:>3.0} %", c.symbol(), f * 100.0),
        _ => format!("{} {}", c.symbol(), c.word()),
    }
}

/// Draws `left` and, right-aligned where it fits, `right`.
fn left_right(area: Rect, buf: &mut Buffer, left: Line<'_>, right: Line<'_>) {
    let right_w = right.width() as u16;
    left.render(area, buf);
    if right_w + 2 + 10 <= area.width {
        let x = area.x + area.width - right_w;
        right.render(Rect::new(x - 1, area.y, right_w + 1, 1), buf);
    }
}

/// Row 0 and 1 of a run's screen.
#[derive(Debug, Clone, Copy)]
pub struct DetailHeader<'a> {
    pub detail: &'a Detail,
    pub theme: &'a Theme,
    pub paused: bool,
}

impl Widget for &DetailHeader<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let area = area.intersection(buf.area);
        if area.height == 0 {
            return;
        }
        let d = self.detail;
        let t = self.theme;
        let mut left = vec![
            Span::styled(
                format!(" {} ", condition_text(d.condition, d.loading)),
                t.condition(d.condition),
            ),
            Span::raw(" "),
            Span::styled(d.label.clone(), t.title()),
        ];
        if d.runs > 1 {
            left.push(Span::styled(
                format!("  run {} of {}", d.position + 1, d.runs),
                t.dim(),
            ));
        }
        let mut right = Vec::new();
        if self.paused {
            right.push(Span::styled(" PAUSED ", t.selected()));
            right.push(Span::raw(" "));
        }
        right.push(Span::styled(d.mode.clone(), t.label()));
        if let Some(age) = d.last_row_age {
            right.push(Span::styled(
                format!(" · last row {} ago", format::duration(age)),
                t.label(),
            ));
        }
        left_right(
            Rect::new(area.x, area.y, area.width, 1),
            buf,
            Line::from(left),
            Line::from(right),
        );
        if area.height > 1 {
            let (symbol, style) = match d.verdict_flag {
                Some(Severity::Warning) | Some(Severity::Critical) => {
                    ("▲", t.severity(Severity::Warning))
                }
                Some(Severity::Info) => ("~", t.condition(Condition::Settling)),
                None => ("·", t.label()),
            };
            Line::from(vec![
                Span::styled(format!(" {symbol} "), style),
                Span::raw(d.verdict.clone()),
            ])
            .render(Rect::new(area.x, area.y + 1, area.width, 1), buf);
        }
    }
}

/// Row 0 of the overview.
#[derive(Debug, Clone, Copy)]
pub struct OverviewHeader<'a> {
    pub snapshot: &'a Snapshot,
    pub theme: &'a Theme,
}

impl Widget for &OverviewHeader<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let area = area.intersection(buf.area);
        if area.height == 0 {
            return;
        }
        let s = self.snapshot;
        let t = self.theme;
        let attention = s.needing_attention();
        let mut left = vec![
            Span::styled(" plateau watch ", t.title()),
            Span::styled(
                format!(
                    "· {} run{} ",
                    s.runs.len(),
                    if s.runs.len() == 1 { "" } else { "s" }
                ),
                t.label(),
            ),
        ];
        if attention > 0 {
            left.push(Span::styled(
                format!(
                    " {attention} need{} a look ",
                    if attention == 1 { "s" } else { "" }
                ),
                t.severity(Severity::Warning),
            ));
        } else if !s.runs.is_empty() {
            left.push(Span::styled("· none needs a look", t.label()));
        }
        let mut right = Vec::new();
        if s.paused {
            right.push(Span::styled(" PAUSED ", t.selected()));
        }
        if let Some(jobs) = &s.feed_summary {
            right.push(Span::styled(format!(" {jobs} "), t.label()));
        }
        for p in &s.waiting_patterns {
            right.push(Span::styled(format!(" waiting for {p}"), t.dim()));
        }
        left_right(area, buf, Line::from(left), Line::from(right));
    }
}
