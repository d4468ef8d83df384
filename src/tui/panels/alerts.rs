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
    /// Alerts raised (lines may merge several).
    pub total: usize,
    /// Alert lines scrolled past (newest first).
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
                _ => format!(" · {} active of {}, newest first", self.active, self.total),
            },
            t.label(),
        ));
        let rows = usize::from(area.height - 1);
        let shown = n.saturating_sub(scroll).min(rows);
        let older = n - scroll - shown;
        let more = match (scroll, older) {
            (0, 0) => String::new(),
            (0, o) => format!(" · {o} older: PgDn"),
            (s, 0) => format!(" · {s} newer: PgUp"),
            (s, o) => format!(" · {s} newer, {o} older: PgUp PgDn"),
        };
        if !more.is_empty() {
            title.push(Span::styled(more, t.dim()));
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::alert::Severity;
    use crate::tui::panels::buffer_lines;
    use ratatui::style::{Color, Modifier};

    fn line(severity: Severity, kind: &'static str, row: u64, active: bool) -> AlertLine {
        AlertLine {
            severity,
            kind,
            column: Some("potential".into()),
            row: Some(row),
            time: Some(row as f64 * 2.0),
            wall: None,
            message: "what happened".into(),
            active,
            also: 0,
        }
    }

    fn render(list: &AlertList<'_>, w: u16, h: u16) -> Buffer {
        let mut buf = Buffer::empty(Rect::new(0, 0, w, h));
        list.render(buf.area, &mut buf);
        buf
    }

    #[test]
    fn alerts_are_listed_with_time_severity_place_and_message() {
        let alerts = [
            line(Severity::Critical, "runaway", 900, true),
            line(Severity::Warning, "spike", 120, false),
        ];
        let theme = Theme::colored();
        let list = AlertList {
            alerts: &alerts,
            active: 1,
            total: 2,
            scroll: 0,
            notices: &[],
            theme: &theme,
        };
        let buf = render(&list, 90, 3);
        assert_eq!(
            buffer_lines(&buf),
            vec![
                format!("{:<90}", " alerts · 1 active of 2, newest first"),
                format!(
                    "{:<90}",
                    " --:--:-- ✗ CRIT runaway potential (row 900 · 1.8 ns): what happened"
                ),
                format!(
                    "{:<90}",
                    " --:--:-- ▲ WARN spike potential (row 120 · 240 ps) cleared: what happened"
                ),
            ]
        );
        // Critical: red, bold, reversed; a cleared warning is dimmed, not coloured.
        let crit = &buf[(10, 1)];
        assert_eq!(crit.symbol(), "✗");
        assert_eq!(crit.fg, Color::Red);
        assert!(crit.modifier.contains(Modifier::BOLD | Modifier::REVERSED));
        let cleared = &buf[(10, 2)];
        assert_eq!(cleared.symbol(), "▲");
        assert!(cleared.modifier.contains(Modifier::DIM));
        assert_ne!(cleared.fg, Color::Yellow);
    }

    #[test]
    fn more_alerts_than_lines_say_how_to_scroll() {
        let alerts: Vec<AlertLine> = (0..10)
            .map(|i| line(Severity::Warning, "spike", 100 - i, true))
            .collect();
        let theme = Theme::plain();
        let mut list = AlertList {
            alerts: &alerts,
            active: 10,
            total: 10,
            scroll: 0,
            notices: &[],
            theme: &theme,
        };
        let lines = buffer_lines(&render(&list, 80, 4));
        assert!(lines[0].contains("7 older: PgDn"), "{lines:?}");
        assert!(lines[1].contains("row 100 "), "{lines:?}");
        list.scroll = 5;
        let lines = buffer_lines(&render(&list, 80, 4));
        assert!(
            lines[0].contains("5 newer, 2 older: PgUp PgDn"),
            "{lines:?}"
        );
        assert!(lines[1].contains("row 95 "), "{lines:?}");
    }
}
