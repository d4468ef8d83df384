//! The whole screen, drawn from a snapshot: the overview or one run's detail, the help
//! over it, or one line when the terminal is too small. Layout only; each panel draws
//! itself.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::{Paragraph, Widget, Wrap};

use super::app::Screen;
use super::chart::TrendChart;
use super::layout::{self, DetailAreas, MIN_HEIGHT, MIN_WIDTH};
use super::model::{Detail, Snapshot};
use super::panels::alerts::AlertList;
use super::panels::footer::Footer;
use super::panels::header::{DetailHeader, OverviewHeader};
use super::panels::help::HelpPanel;
use super::panels::overview::OverviewTable;
use super::panels::quantities::QuantityLines;
use super::panels::stages::StageList;
use super::panels::summary::SummaryPanel;
use super::theme::Theme;

/// The dashboard of one snapshot.
#[derive(Debug, Clone, Copy)]
pub struct Dashboard<'a> {
    pub snapshot: &'a Snapshot,
    pub theme: &'a Theme,
}

fn draw_detail(d: &Detail, s: &Snapshot, theme: &Theme, area: Rect, buf: &mut Buffer) {
    let areas = DetailAreas::compute_with_stages(
        area,
        d.quantities.len().saturating_sub(1),
        d.alerts.len(),
        d.stages.len(),
        s.chart_only,
    );
    DetailHeader {
        detail: d,
        theme,
        paused: s.paused,
    }
    .render(
        Rect::new(area.x, area.y, area.width, 2.min(area.height)),
        buf,
    );
    match &d.chart {
        Some(chart) => {
            let widget = TrendChart {
                chart,
                theme,
                number: d.charted + 1,
                quantities: d.quantities.len(),
                window_rows: s.window_rows,
            };
            widget.title().render(areas.title, buf);
            widget.render(areas.chart, buf);
        }
        None => {
            let text = match d.loading {
                Some(_) => " reading the file…",
                None => " no quantity to chart yet",
            };
            Line::styled(text, theme.dim()).render(areas.chart, buf)
        }
    }
    if !s.chart_only {
        QuantityLines {
            quantities: &d.quantities,
            charted: d.charted,
            theme,
        }
        .render(areas.sparks, buf);
        SummaryPanel {
            items: &d.summary,
            theme,
        }
        .render(areas.summary, buf);
        StageList {
            stages: &d.stages,
            note: d.stages_note.as_deref(),
            theme,
        }
        .render(areas.stages, buf);
        AlertList {
            alerts: &d.alerts,
            active: d.active_alerts,
            total: d.total_alerts,
            scroll: s.alert_scroll,
            notices: &d.notices,
            theme,
        }
        .render(areas.alerts, buf);
    }
}

impl Widget for &Dashboard<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let area = area.intersection(buf.area);
        let s = self.snapshot;
        let t = self.theme;
        if layout::too_small(area) {
            let text = format!(
                "terminal too small ({}×{}): plateau needs {MIN_WIDTH}×{MIN_HEIGHT} · q quits",
                area.width, area.height
            );
            Paragraph::new(Line::from(Span::styled(text, t.title())))
                .wrap(Wrap { trim: true })
                .render(area, buf);
            return;
        }
        let footer = Rect::new(area.x, area.y + area.height - 1, area.width, 1);
        match (s.screen, &s.detail) {
            (Screen::Detail, Some(d)) => draw_detail(d, s, t, area, buf),
            (Screen::Detail, None) => {
                Line::styled(" no run selected", t.dim()).render(area, buf);
            }
            (Screen::Overview, _) => {
                OverviewHeader {
                    snapshot: s,
                    theme: t,
                }
                .render(Rect::new(area.x, area.y, area.width, 1), buf);
                OverviewTable {
                    snapshot: s,
                    selected: s.selected,
                    theme: t,
                }
                .render(
                    Rect::new(
                        area.x,
                        area.y + 1,
                        area.width,
                        area.height.saturating_sub(2),
                    ),
                    buf,
                );
            }
        }
        Footer {
            screen: s.screen,
            overview_exists: s.overview_exists,
            message: s.message.as_ref().map(|(m, ok)| (m.as_str(), *ok)),
            theme: t,
        }
        .render(footer, buf);
        if s.help {
            HelpPanel { theme: t }.render(area, buf);
        }
    }
}
