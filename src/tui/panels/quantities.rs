//! The quantities not charted, one line each: a mark (equilibrated `✓`, still relaxing `~`,
//! an active warning `▲` or critical alert `✗`), the name, a sparkline of all its rows and
//! its current value. The number selects it for the chart.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;

use crate::alert::Severity;

use super::super::format;
use super::super::layout::spark_width;
use super::super::model::{Onset, Quantity};
use super::super::theme::Theme;
use super::sparkline;

/// The lines of the quantities beside the charted one.
#[derive(Debug, Clone, Copy)]
pub struct QuantityLines<'a> {
    pub quantities: &'a [Quantity],
    pub charted: usize,
    pub theme: &'a Theme,
}

/// The mark of a quantity and its style.
pub fn mark(q: &Quantity, theme: &Theme) -> (&'static str, ratatui::style::Style) {
    match (q.alert, q.onset) {
        (Some(Severity::Critical), _) => ("✗", theme.severity(Severity::Critical)),
        (Some(Severity::Warning), _) => ("▲", theme.severity(Severity::Warning)),
        (_, Onset::At { .. }) if q.still_changing => ("▲", theme.severity(Severity::Warning)),
        (_, Onset::At { .. }) => ("✓", theme.onset()),
        (_, Onset::NotYet) => ("~", theme.data()),
        _ => (" ", theme.dim()),
    }
}

impl Widget for &QuantityLines<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let area = area.intersection(buf.area);
        let t = self.theme;
        let spark_w = usize::from(spark_width(area.width));
        let others = self
            .quantities
            .iter()
            .enumerate()
            .filter(|(i, _)| *i != self.charted);
        for (row, (i, q)) in others.take(usize::from(area.height)).enumerate() {
            let (symbol, style) = mark(q, t);
            let spark = sparkline(&q.spark);
            let spark = format::fit(&spark, spark_w);
            let line = Line::from(vec![
                Span::styled(format!("{:>2}", i + 1), t.dim()),
                Span::styled(symbol, style),
                Span::raw(format!(" {:<12} ", format::fit(&q.name, 12))),
                Span::styled(format!("{spark:<spark_w$}"), t.data()),
                // The value in the sparkline's style: a new row changes both, and one style
                // for the two keeps each frame's diff small.
                Span::styled(
                    format!(" {:>9}", q.current.map_or("-".into(), format::number)),
                    t.data(),
                ),
                Span::styled(format!(" {}", format::fit(&q.unit, 8)), t.label()),
            ]);
            line.render(Rect::new(area.x, area.y + row as u16, area.width, 1), buf);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::tui::panels::buffer_lines;

    fn quantity(name: &str, onset: Onset, alert: Option<Severity>) -> Quantity {
        Quantity {
            column: 0,
            name: name.into(),
            name_raw: name.into(),
            unit: "K".into(),
            role: None,
            current: Some(301.25),
            onset,
            mean: None,
            n_eff: None,
            g: None,
            still_changing: false,
            alert,
            spark: vec![Some(1.0), Some(2.0), Some(3.0), Some(4.0)],
        }
    }

    #[test]
    fn each_other_quantity_has_its_number_mark_sparkline_and_value() {
        let qs = [
            quantity("potential", Onset::At { row: 5, time: None }, None),
            quantity("temperature", Onset::NotYet, None),
            quantity(
                "pressure",
                Onset::At { row: 5, time: None },
                Some(Severity::Critical),
            ),
        ];
        let theme = Theme::plain();
        let mut buf = Buffer::empty(Rect::new(0, 0, 38, 3));
        QuantityLines {
            quantities: &qs,
            charted: 0,
            theme: &theme,
        }
        .render(buf.area, &mut buf);
        // 38 columns leave 4 for the sparkline.
        assert_eq!(
            buffer_lines(&buf),
            vec![
                " 2~ temperature  ▁▃▆█     301.2 K     ",
                " 3✗ pressure     ▁▃▆█     301.2 K     ",
                "                                      ",
            ]
        );
    }
}
