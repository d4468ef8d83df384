//! The run summary: rows, simulated time, speed, ETA, N_eff, precision ETA, drift,
//! fluctuation size, ensemble, how the file is followed and how long since the last row.
//! A value with a warning is marked `▲` (and coloured when colours are on).

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;

use crate::alert::Severity;

use super::super::format;
use super::super::model::Item;
use super::super::theme::Theme;

/// The summary panel.
#[derive(Debug, Clone, Copy)]
pub struct SummaryPanel<'a> {
    pub items: &'a [Item],
    pub theme: &'a Theme,
}

impl Widget for &SummaryPanel<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let area = area.intersection(buf.area);
        if area.width < 4 {
            return;
        }
        let t = self.theme;
        // A rule on the left separates the summary from the chart.
        for y in area.y..area.y + area.height {
            if let Some(c) = buf.cell_mut((area.x, y)) {
                c.set_symbol("│").set_style(t.dim());
            }
        }
        let value_w = usize::from(area.width).saturating_sub(13);
        for (row, it) in self.items.iter().take(usize::from(area.height)).enumerate() {
            let (mark, style) = match it.flag {
                Some(s @ (Severity::Warning | Severity::Critical)) => ("▲", t.severity(s)),
                Some(Severity::Info) => ("·", t.label()),
                None => (" ", t.value()),
            };
            let value_style = if it.flag.is_some_and(|s| s >= Severity::Warning) {
                style
            } else {
                t.value()
            };
            Line::from(vec![
                Span::styled(format!(" {:<10}", it.label), t.label()),
                Span::styled(mark, style),
                Span::raw(" "),
                Span::styled(format::fit(&it.value, value_w), value_style),
            ])
            .render(
                Rect::new(area.x + 1, area.y + row as u16, area.width - 1, 1),
                buf,
            );
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::tui::panels::buffer_lines;
    use ratatui::style::Color;

    #[test]
    fn items_line_up_and_warnings_are_marked() {
        let items = [
            Item {
                label: "rows",
                value: "12 345".into(),
                flag: None,
            },
            Item {
                label: "drift",
                value: "+0.31±0.05 kJ/mol/ns".into(),
                flag: Some(Severity::Warning),
            },
            Item {
                label: "skipped",
                value: "3 lines".into(),
                flag: Some(Severity::Info),
            },
        ];
        let theme = Theme::colored();
        let mut buf = Buffer::empty(Rect::new(0, 0, 34, 4));
        SummaryPanel {
            items: &items,
            theme: &theme,
        }
        .render(buf.area, &mut buf);
        assert_eq!(
            buffer_lines(&buf),
            vec![
                "│ rows        12 345              ",
                "│ drift     ▲ +0.31±0.05 kJ/mol/ns",
                "│ skipped   · 3 lines             ",
                "│                                 ",
            ]
        );
        assert_eq!(buf[(12, 1)].symbol(), "▲");
        assert_eq!(buf[(12, 1)].fg, Color::Yellow);
        assert_eq!(buf[(14, 1)].fg, Color::Yellow);
    }
}
