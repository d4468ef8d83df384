//! Alerts, newest first: when (the wall-clock time of the row), how bad (a symbol and a
//! word, bold, reversed when critical), what, on which quantity, at which row and
//! simulated time, and the message. Cleared alerts are dimmed and marked.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;

use super::super::format;
use super::super::model::AlertLine;
use super::super::theme::{severity_marker, Theme};

/// The alert list of the selected run.
#[derive(Debug, Clone, Copy)]
pub struct AlertList<'a> {
    pub alerts: &'a [AlertLine],
    pub active: usize,
    /// Alerts scrolled past (newest first).
    pub scroll: usize,
    pub notices: &'a [(f64, String)],
    pub theme: &'a Theme,
}

/// One alert as a line of spans.
pub fn alert_spans(a: &AlertLine, theme: &Theme) -> Line<'static> {
    let when = a.wall.map_or("--:--:--".into(), format::clock);
    let mut what = a.kind.to_string();
    if let Some(c) = &a.column {
        what.push(' ');
        what.push_str(c);
    }
    let mut place = String::new();
    if let Some(r) = a.row {
        place.push_str(&format!("row {r}"));
    }
    if let Some(t) = a.time {
        if !place.is_empty() {
            place.push_str(" · ");
        }
        place.push_str(&format::sim_time(t));
    }
    let text = theme.alert_text(a.active);
    let mut spans = vec![
        Span::styled(format!(" {when} "), theme.label()),
        Span::styled(
            severity_marker(a.severity),
            if a.active {
                theme.severity(a.severity)
            } else {
                text
            },
        ),
        Span::styled(format!(" {what}"), text.patch(theme.title())),
    ];
    if !place.is_empty() {
        spans.push(Span::styled(format!(" ({place})"), theme.label()));
    }
    if !a.active {
        spans.push(Span::styled(" cleared", text));
    }
    spans.push(Span::styled(format!(": {}", a.message), text));
    Line::from(spans)
}

impl Widget for &AlertList<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let area = area.intersection(buf.area);
        if area.height == 0 {
            return;
        }
        let t = self.theme;
        let n = self.alerts.len();
        let scroll = self.scroll.min(n.saturating_sub(1));
        let mut title = vec![Span::styled(" alerts", t.title())];
        title.push(Span::styled(
            match n {
                0 => " · none".to_string(),
                _ => format!(" · {} active, {} in all, newest first", self.active, n),
            },
            t.label(),
        ));
        let rows = usize::from(area.height - 1);
        let shown = n.saturating_sub(scroll).min(rows);
        if scroll > 0 || n > scroll + shown {
            title.push(Span::styled(
                format!(
                    " · {} newer, {} older (PgUp PgDn)",
                    scroll,
                    n - scroll - shown
                ),
                t.dim(),
            ));
        }
        if let Some((at, text)) = self.notices.last() {
            title.push(Span::styled(
                format!(" · file {} at {}", text, format::clock(*at)),
                t.dim(),
            ));
        }
        Line::from(title).render(Rect::new(area.x, area.y, area.width, 1), buf);
        for (i, a) in self.alerts.iter().skip(scroll).take(rows).enumerate() {
            alert_spans(a, t).render(Rect::new(area.x, area.y + 1 + i as u16, area.width, 1), buf);
        }
    }
}
