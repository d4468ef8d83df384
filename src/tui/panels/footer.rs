//! The bottom row: the keys that matter on this screen, or the message after an action.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;

use super::super::app::Screen;
use super::super::theme::Theme;

/// The footer.
#[derive(Debug, Clone, Copy)]
pub struct Footer<'a> {
    pub screen: Screen,
    pub overview_exists: bool,
    pub message: Option<(&'a str, bool)>,
    pub theme: &'a Theme,
}

impl Widget for &Footer<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let area = area.intersection(buf.area);
        if area.height == 0 {
            return;
        }
        let t = self.theme;
        if let Some((text, ok)) = self.message {
            Line::from(Span::styled(format!(" {text}"), t.message(ok))).render(area, buf);
            return;
        }
        let keys: &[(&str, &str)] = match self.screen {
            Screen::Overview => &[
                ("↑↓", "select"),
                ("Enter", "open"),
                ("w", "report"),
                ("p", "pause"),
                ("?", "help"),
                ("q", "quit"),
            ],
            Screen::Detail if self.overview_exists => &[
                ("↑↓", "quantity"),
                ("v", "view"),
                ("+-", "zoom"),
                ("z", "chart"),
                ("Tab", "run"),
                ("Esc", "all"),
                ("w", "report"),
                ("?", "help"),
                ("q", "quit"),
            ],
            Screen::Detail => &[
                ("↑↓", "quantity"),
                ("v", "view"),
                ("+-", "zoom"),
                ("z", "chart"),
                ("w", "report"),
                ("p", "pause"),
                ("?", "help"),
                ("q", "quit"),
            ],
        };
        let mut spans = Vec::new();
        for (k, what) in keys {
            spans.push(Span::styled(format!(" {k}"), t.key()));
            spans.push(Span::styled(format!(" {what} "), t.label()));
        }
        Line::from(spans).render(area, buf);
    }
}
