//! The help drawn over the screen by `?`: every key from the key table, and what the
//! symbols mean.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Block, Borders, Clear, Widget};

use super::super::keys::{Scope, BINDINGS};
use super::super::model::Condition;
use super::super::theme::{severity_marker, Theme};
use crate::alert::Severity;

/// The help panel.
#[derive(Debug, Clone, Copy)]
pub struct HelpPanel<'a> {
    pub theme: &'a Theme,
}

/// The help's lines (also its text form for tests).
pub fn help_lines(theme: &Theme) -> Vec<Line<'static>> {
    let mut lines = Vec::new();
    for b in BINDINGS.iter().filter(|b| !b.help.is_empty()) {
        let scope = match b.scope {
            Scope::Everywhere => "",
            Scope::Overview => " (all runs)",
            Scope::Detail => " (one run)",
        };
        lines.push(Line::from(vec![
            Span::styled(format!(" {:>10}  ", b.shown), theme.key()),
            Span::raw(b.help),
            Span::styled(scope, theme.dim()),
        ]));
    }
    lines.push(Line::raw(""));
    for (label, group) in [
        (
            " status   ",
            &[
                Condition::Unstable,
                Condition::Stalled,
                Condition::Drifting,
                Condition::Waiting,
            ][..],
        ),
        (
            "          ",
            &[Condition::Settling, Condition::Steady, Condition::Finished][..],
        ),
    ] {
        let mut spans = vec![Span::styled(label, theme.label())];
        for c in group {
            spans.push(Span::styled(
                format!("{} {}", c.symbol(), c.word()),
                theme.condition(*c),
            ));
            spans.push(Span::raw("  "));
        }
        lines.push(Line::from(spans));
    }
    let mut spans = vec![Span::styled(" alerts   ", theme.label())];
    for s in [Severity::Critical, Severity::Warning, Severity::Info] {
        spans.push(Span::styled(severity_marker(s), theme.severity(s)));
        spans.push(Span::raw("  "));
    }
    spans.push(Span::styled("dim: cleared", theme.dim()));
    lines.push(Line::from(spans));
    lines.push(Line::from(vec![
        Span::styled(" chart    ", theme.label()),
        Span::styled("┊ ▲ onset", theme.onset()),
        Span::raw("  "),
        Span::styled("╌ production mean", theme.mean()),
        Span::raw("  "),
        Span::styled("dim: before the onset", theme.data_early()),
        Span::raw("  "),
        Span::styled("× non-finite", theme.nonfinite()),
    ]));
    lines.push(Line::from(vec![
        Span::styled(" marks    ", theme.label()),
        Span::styled("✓ equilibrated", theme.onset()),
        Span::raw("  "),
        Span::styled("~ still relaxing", theme.data()),
        Span::raw("  "),
        Span::styled("▲ warning", theme.severity(Severity::Warning)),
    ]));
    lines
}

impl Widget for &HelpPanel<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let area = area.intersection(buf.area);
        let lines = help_lines(self.theme);
        let width = lines
            .iter()
            .map(Line::width)
            .max()
            .unwrap_or(20)
            .saturating_add(4)
            .min(usize::from(area.width)) as u16;
        let height = (lines.len() as u16 + 2).min(area.height);
        let r = Rect::new(
            area.x + (area.width - width) / 2,
            area.y + (area.height - height) / 2,
            width,
            height,
        );
        Clear.render(r, buf);
        let block = Block::default()
            .borders(Borders::ALL)
            .title(Span::styled(" keys — any key closes ", self.theme.title()));
        let inner = block.inner(r);
        block.render(r, buf);
        for (i, line) in lines
            .into_iter()
            .take(usize::from(inner.height))
            .enumerate()
        {
            line.render(Rect::new(inner.x, inner.y + i as u16, inner.width, 1), buf);
        }
    }
}
