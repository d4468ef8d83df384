//! Where each panel goes for a terminal size (pure: rectangles from a size). Both the
//! snapshot (which resamples charts to the width they get) and the drawing use it.

use ratatui::layout::Rect;

/// Below this size only a "terminal too small" line is drawn.
pub const MIN_WIDTH: u16 = 40;
pub const MIN_HEIGHT: u16 = 10;

/// Stage lines shown at most (the current stage is always among them).
pub const STAGE_LINES: u16 = 5;

/// Width of a chart's value labels (left of the plot).
pub const Y_LABEL_WIDTH: u16 = 9;

/// Whether a size is too small for the dashboard.
pub fn too_small(area: Rect) -> bool {
    area.width < MIN_WIDTH || area.height < MIN_HEIGHT
}

/// The panels of one run's screen.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub struct DetailAreas {
    pub header: Rect,
    pub verdict: Rect,
    /// The chart's title, across the whole width.
    pub title: Rect,
    pub chart: Rect,
    pub sparks: Rect,
    pub summary: Rect,
    /// The stage list of a staged run, across the whole width above the alerts.
    pub stages: Rect,
    pub alerts: Rect,
    pub footer: Rect,
}

impl DetailAreas {
    /// Areas for `area`, with `others` quantities besides the charted one and `alerts`
    /// alerts to list; `chart_only` gives the whole body to the chart.
    pub fn compute(area: Rect, others: usize, alerts: usize, chart_only: bool) -> DetailAreas {
        DetailAreas::compute_with_stages(area, others, alerts, 0, chart_only)
    }

    /// [`DetailAreas::compute`] with a list of `stages` stages (a run with no stages to
    /// tell gives 0); it gets a heading and up to [`STAGE_LINES`] lines while the
    /// chart and the quantities keep at least 8 rows.
    pub fn compute_with_stages(
        area: Rect,
        others: usize,
        alerts: usize,
        stages: usize,
        chart_only: bool,
    ) -> DetailAreas {
        let row = |y: u16, h: u16| Rect::new(area.x, area.y + y, area.width, h);
        let h = area.height;
        let header = row(0, 1.min(h));
        let verdict = row(1.min(h), u16::from(h > 1));
        let footer = row(h.saturating_sub(1), u16::from(h > 2));
        let title = row(2.min(h), u16::from(h > 3));
        let body_h = h.saturating_sub(4);
        let body = row(3.min(h), body_h);
        if chart_only {
            return DetailAreas {
                header,
                verdict,
                title,
                chart: body,
                footer,
                ..DetailAreas::default()
            };
        }
        let wanted_alerts = (alerts as u16).saturating_add(1).max(2);
        let alerts_h = (body_h / 4).clamp(3, 10).min(wanted_alerts).min(body_h);
        let stages_h = if stages > 0 {
            (stages.min(usize::from(STAGE_LINES)) as u16 + 1)
                .min(body_h.saturating_sub(alerts_h + 8))
        } else {
            0
        };
        let sparks_h = (others as u16)
            .min(6)
            .min(body_h.saturating_sub(alerts_h + stages_h + 8));
        let top_h = body_h.saturating_sub(alerts_h + stages_h);
        let summary_w = match area.width {
            0..=63 => 0,
            64..=109 => 34,
            _ => 40,
        };
        let left_w = area.width - summary_w;
        let chart = Rect::new(area.x, body.y, left_w, top_h.saturating_sub(sparks_h));
        let sparks = Rect::new(area.x, chart.y + chart.height, left_w, sparks_h);
        let summary = Rect::new(area.x + left_w, body.y, summary_w, top_h);
        let stages = Rect::new(area.x, body.y + top_h, area.width, stages_h);
        let alerts = Rect::new(area.x, body.y + top_h + stages_h, area.width, alerts_h);
        DetailAreas {
            header,
            verdict,
            title,
            chart,
            sparks,
            summary,
            stages,
            alerts,
            footer,
        }
    }
}

/// The plot inside a chart panel: an axis row below, value labels left.
pub fn plot_area(chart: Rect) -> Rect {
    Rect::new(
        chart.x + Y_LABEL_WIDTH.min(chart.width),
        chart.y,
        chart.width.saturating_sub(Y_LABEL_WIDTH),
        chart.height.saturating_sub(1),
    )
}

/// Width of the sparkline in a quantity line of `width` columns.
pub fn spark_width(width: u16) -> u16 {
    width.saturating_sub(34).clamp(0, 60)
}

/// Columns of the overview's table.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct OverviewColumns {
    pub status: u16,
    pub name: u16,
    pub spark: u16,
    pub progress: u16,
    pub speed: u16,
    pub age: u16,
    /// The current stage of staged runs (0: no stage column).
    pub stage: u16,
    pub alert: u16,
}

impl OverviewColumns {
    /// Columns for a terminal `width` wide (the newest alert gets what is left).
    pub fn for_width(width: u16) -> OverviewColumns {
        let (name, spark, speed) = match width {
            0..=59 => (12, 0, 0),
            60..=99 => (15, 11, 0),
            100..=139 => (24, 21, 9),
            _ => (32, 31, 9),
        };
        let status = 12;
        let progress = if width < 60 { 10 } else { 14 };
        let age = if width < 100 { 6 } else { 7 };
        let used = status + name + spark + progress + speed + age;
        OverviewColumns {
            status,
            name,
            spark,
            progress,
            speed,
            age,
            stage: 0,
            alert: width.saturating_sub(used),
        }
    }

    /// The same with a stage column taken from the newest alert's (when some run is
    /// staged): 10 wide below 100 columns (short words), else 20; none when the alert
    /// would keep fewer than 12.
    pub fn with_stage(self) -> OverviewColumns {
        let want = if self.speed == 0 { 10 } else { 20 };
        if self.alert < want + 12 {
            return self;
        }
        OverviewColumns {
            stage: want,
            alert: self.alert - want,
            ..self
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn areas_stay_inside_the_screen_at_every_size() {
        for w in [1u16, 20, 40, 63, 64, 80, 120, 250] {
            for h in [1u16, 2, 3, 5, 10, 24, 40, 80] {
                let area = Rect::new(0, 0, w, h);
                for (chart_only, stages) in [(false, 0), (true, 0), (false, 5), (false, 9)] {
                    let d = DetailAreas::compute_with_stages(area, 7, 30, stages, chart_only);
                    for r in [
                        d.header, d.verdict, d.title, d.chart, d.sparks, d.summary, d.stages,
                        d.alerts, d.footer,
                    ] {
                        assert_eq!(area.union(r), area, "{r:?} outside {area:?}");
                    }
                    let p = plot_area(d.chart);
                    assert_eq!(area.union(p), area);
                }
                for c in [
                    OverviewColumns::for_width(w),
                    OverviewColumns::for_width(w).with_stage(),
                ] {
                    if w >= MIN_WIDTH {
                        assert!(
                            c.status
                                + c.name
                                + c.spark
                                + c.progress
                                + c.speed
                                + c.age
                                + c.stage
                                + c.alert
                                <= w
                        );
                    }
                }
            }
        }
    }

    #[test]
    fn at_80_by_24_every_panel_has_room() {
        let d = DetailAreas::compute(Rect::new(0, 0, 80, 24), 5, 10, false);
        assert!(d.chart.height >= 9, "{d:?}");
        assert_eq!(d.sparks.height, 5);
        assert_eq!(d.summary.width, 34);
        assert!(d.alerts.height >= 4);
        assert_eq!(d.footer.y, 23);
    }

    #[test]
    fn a_stage_list_takes_room_above_the_alerts_and_leaves_the_chart_8_rows() {
        let d = DetailAreas::compute_with_stages(Rect::new(0, 0, 80, 24), 7, 0, 5, false);
        assert_eq!(d.stages.height, 6, "{d:?}");
        assert_eq!(d.stages.y + d.stages.height, d.alerts.y);
        assert_eq!(d.stages.width, 80);
        assert!(d.chart.height + d.sparks.height >= 8, "{d:?}");
        // A single stage to tell (a minimization) gets a heading and its line.
        let one = DetailAreas::compute_with_stages(Rect::new(0, 0, 80, 24), 7, 0, 1, false);
        assert_eq!(one.stages.height, 2);
        let none = DetailAreas::compute_with_stages(Rect::new(0, 0, 80, 24), 7, 0, 0, false);
        assert_eq!(none.stages.height, 0);
        assert_eq!(
            none,
            DetailAreas::compute(Rect::new(0, 0, 80, 24), 7, 0, false)
        );
    }
}
