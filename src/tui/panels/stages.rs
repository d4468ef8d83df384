//! The stages of a run cut into more than one (minimization, heating, equilibration,
//! production): one line each, in order, with its rows, simulated time span, the file of a
//! chain it comes from, and its verdict (bad news marked `▲`, coloured when colours are
//! on). When there are more stages than lines, the latest ones are shown (the current
//! stage is the last).

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;

use crate::alert::Severity;

use super::super::format;
use super::super::model::StageLine;
use super::super::theme::Theme;

/// The stage list of the selected run.
#[derive(Debug, Clone, Copy)]
pub struct StageList<'a> {
    pub stages: &'a [StageLine],
    /// Said when the stages were judged on the rows kept only.
    pub note: Option<&'a str>,
    pub theme: &'a Theme,
}

/// The span of a stage: its rows, and its simulated times when known.
pub fn span_text(s: &StageLine) -> String {
    let rows = format!("rows {}–{}", s.rows.0, s.rows.1);
    match s.times {
        Some((a, b)) => format!("{rows} · {}–{}", format::sim_time(a), format::sim_time(b)),
        None => rows,
    }
}

fn line(s: &StageLine, width: usize, theme: &Theme) -> Line<'static> {
    let marker = if s.current { "▸" } else { " " };
    let head = format!("{marker}{:>2} {:<13}", s.number, s.kind.name());
    let (mark, style) = match s.flag {
        Some(sev @ (Severity::Warning | Severity::Critical)) => ("▲", theme.severity(sev)),
        Some(Severity::Info) => ("·", theme.label()),
        None => (" ", theme.value()),
    };
    let verdict = format!("{mark} {}", s.verdict);
    let mut middle = span_text(s);
    if let Some(c) = s.conditions {
        middle = format!("{c:<17} {middle}");
    }
    if let Some(f) = &s.file {
        middle.push_str(&format!(" · {f}"));
    }
    let room = width
        .saturating_sub(head.chars().count() + verdict.chars().count() + 2)
        .max(1);
    let middle = format!("{:<room$}", format::fit(&middle, room));
    Line::from(vec![
        Span::styled(
            head,
            if s.current {
                theme.title()
            } else {
                theme.value()
            },
        ),
        Span::styled(format!(" {middle} "), theme.label()),
        Span::styled(verdict, style),
    ])
}

impl Widget for &StageList<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let area = area.intersection(buf.area);
        if area.height == 0 || self.stages.is_empty() {
            return;
        }
        let t = self.theme;
        let mut title = vec![
            Span::styled(" stages", t.title()),
            Span::styled(format!(" · {}", self.stages.len()), t.label()),
        ];
        if let Some(n) = self.note {
            title.push(Span::styled(format!(" · {n}"), t.dim()));
        }
        Line::from(title).render(Rect::new(area.x, area.y, area.width, 1), buf);
        let rows = usize::from(area.height - 1);
        let skip = self.stages.len().saturating_sub(rows);
        let width = usize::from(area.width);
        for (i, s) in self.stages.iter().skip(skip).enumerate() {
            let y = area.y + 1 + i as u16;
            line(s, width, t).render(Rect::new(area.x, y, area.width, 1), buf);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::stages::StageKind;
    use crate::tui::panels::buffer_lines;

    fn stage(number: usize, kind: StageKind, verdict: &str, current: bool) -> StageLine {
        StageLine {
            number,
            kind,
            conditions: None,
            rows: (number as u64 * 100, number as u64 * 100 + 99),
            times: None,
            file: None,
            verdict: verdict.into(),
            flag: crate::tui::model::verdict_flag(verdict),
            current,
        }
    }

    #[test]
    fn the_latest_stages_are_listed_with_their_verdicts() {
        let stages = vec![
            stage(1, StageKind::Minimization, "converged", false),
            stage(2, StageKind::Heating, "off-ramp", false),
            stage(3, StageKind::Equilibration, "not-yet", true),
        ];
        let theme = Theme::plain();
        let list = StageList {
            stages: &stages,
            note: None,
            theme: &theme,
        };
        let mut buf = Buffer::empty(Rect::new(0, 0, 60, 3));
        (&list).render(buf.area, &mut buf);
        let lines = buffer_lines(&buf);
        assert!(lines[0].starts_with(" stages · 3"), "{lines:?}");
        // Two lines of room: the last two stages, the current one marked.
        assert!(lines[1].starts_with("  2 heating"), "{lines:?}");
        assert!(lines[1].contains("rows 200–299"), "{lines:?}");
        assert!(lines[1].trim_end().ends_with("▲ off-ramp"), "{lines:?}");
        assert!(lines[2].starts_with("▸ 3 equilibration"), "{lines:?}");
        assert!(lines[2].trim_end().ends_with("· not-yet"), "{lines:?}");
    }
}
