//! The trend chart: a quantity's envelope (min to max of the rows under each pixel column)
//! drawn in braille dots, the part before the equilibration onset dimmed, the onset marked
//! by a dotted column and a labelled `▲` on the axis, the production mean as a dashed line
//! with its value, non-finite rows as `×` on the top row.

use ratatui::buffer::Buffer;
use ratatui::layout::Rect;
use ratatui::style::Style;
use ratatui::text::{Line, Span};
use ratatui::widgets::Widget;

use super::app::ChartView;
use super::format;
use super::layout::{plot_area, Y_LABEL_WIDTH};
use super::model::Chart;
use super::theme::Theme;

/// The chart panel of the charted quantity.
#[derive(Debug, Clone, Copy)]
pub struct TrendChart<'a> {
    pub chart: &'a Chart,
    pub theme: &'a Theme,
    /// 1-based number of the charted quantity, and how many there are.
    pub number: usize,
    pub quantities: usize,
    pub window_rows: u64,
}

/// Braille dot bits of a cell, by (column 0..2, row 0..4 from the top).
const DOTS: [[u8; 4]; 2] = [[0x01, 0x02, 0x04, 0x40], [0x08, 0x10, 0x20, 0x80]];

fn braille(bits: u8) -> char {
    char::from_u32(0x2800 + u32::from(bits)).unwrap_or(' ')
}

fn set(buf: &mut Buffer, x: u16, y: u16, symbol: &str, style: Style) {
    if let Some(cell) = buf.cell_mut((x, y)) {
        cell.set_symbol(symbol).set_style(style);
    }
}

impl TrendChart<'_> {
    /// The title row: number, name, unit, current value, production mean ± error, view.
    pub fn title(&self) -> Line<'static> {
        let c = self.chart;
        let t = self.theme;
        let mut spans = vec![
            Span::styled(format!("{}/{} ", self.number, self.quantities), t.dim()),
            Span::styled(c.name.clone(), t.title()),
        ];
        if !c.unit.is_empty() {
            spans.push(Span::styled(format!(" {}", c.unit), t.label()));
        }
        spans.push(Span::styled("  now ", t.label()));
        spans.push(Span::styled(
            c.current.map_or("-".into(), format::number),
            t.value(),
        ));
        if let Some(m) = c.mean {
            spans.push(Span::styled("  production mean ", t.label()));
            spans.push(Span::styled(format::mean_error(m, c.error), t.mean()));
        }
        let view = match c.view {
            ChartView::All => "all rows".to_string(),
            ChartView::Production => "production".to_string(),
            ChartView::Window => format!("latest {} rows", format::count(self.window_rows)),
        };
        spans.push(Span::styled(format!("  [{view}]"), t.dim()));
        if let Some(n) = &c.note {
            spans.push(Span::styled(format!(" {n}"), t.dim()));
        }
        Line::from(spans)
    }
}

impl Widget for &TrendChart<'_> {
    fn render(self, area: Rect, buf: &mut Buffer) {
        let area = area.intersection(buf.area);
        if area.height < 2 || area.width <= Y_LABEL_WIDTH + 2 {
            return;
        }
        let c = self.chart;
        let t = self.theme;
        let plot = plot_area(area);
        let (w, h) = (usize::from(plot.width), usize::from(plot.height));
        if w == 0 || h == 0 {
            return;
        }
        let px_w = w * 2;
        let px_h = h * 4;
        let span = c.y_high - c.y_low;
        let to_px = |v: f64| -> Option<usize> {
            if !v.is_finite() || span <= 0.0 {
                return None;
            }
            let f = ((v - c.y_low) / span).clamp(0.0, 1.0);
            Some(((f * (px_h - 1) as f64).round() as usize).min(px_h - 1))
        };
        let nb = c.buckets.len();
        let range = c.to_row.saturating_sub(c.from_row).max(1);
        let onset_px = c
            .onset_row
            .filter(|&r| r >= c.from_row && r < c.to_row)
            .map(|r| ((r - c.from_row) as u128 * px_w as u128 / range as u128) as usize);
        let mut bits = vec![0u8; w * h];
        let mut early = vec![false; w];
        let mut late = vec![false; w];
        let mut nonfinite = vec![false; w];
        // Values beyond the scale (after a blow-up the scale ends before it).
        let mut above = vec![false; w];
        let mut below = vec![false; w];
        let mut previous: Option<(usize, usize)> = None;
        for p in 0..px_w {
            let Some(b) = c.buckets.get(p * nb / px_w) else {
                previous = None;
                continue;
            };
            if b.nonfinite() > 0 {
                if let Some(x) = nonfinite.get_mut(p / 2) {
                    *x = true;
                }
            }
            let Some((lo, hi)) = b.range() else {
                previous = None;
                continue;
            };
            if hi > c.y_high {
                if let Some(x) = above.get_mut(p / 2) {
                    *x = true;
                }
            }
            if lo < c.y_low {
                if let Some(x) = below.get_mut(p / 2) {
                    *x = true;
                }
            }
            let (Some(mut y0), Some(mut y1)) = (to_px(lo), to_px(hi)) else {
                previous = None;
                continue;
            };
            // Join the previous column's dots so the line has no gaps.
            if let Some((py0, py1)) = previous {
                if py1 < y0 {
                    y0 = py1 + 1;
                } else if py0 > y1 {
                    y1 = py0 - 1;
                }
                y0 = y0.min(y1);
            }
            previous = Some((y0.min(y1), y0.max(y1)));
            let (y0, y1) = (y0.min(y1), y0.max(y1));
            let cx = p / 2;
            for y in y0..=y1 {
                let from_top = px_h - 1 - y;
                if let Some(cell) = bits.get_mut((from_top / 4) * w + cx) {
                    *cell |= DOTS[p % 2][from_top % 4];
                }
            }
            let before = onset_px.is_some_and(|o| p < o);
            if let Some(x) = (if before { &mut early } else { &mut late }).get_mut(cx) {
                *x = true;
            }
        }
        let mean_row = c.mean.and_then(to_px).map(|y| (px_h - 1 - y) / 4);
        let onset_col = onset_px.map(|p| p / 2);
        for cy in 0..h {
            for cx in 0..w {
                let (x, y) = (plot.x + cx as u16, plot.y + cy as u16);
                let b = bits.get(cy * w + cx).copied().unwrap_or(0);
                if b != 0 {
                    let only_early = early.get(cx).copied().unwrap_or(false)
                        && !late.get(cx).copied().unwrap_or(false);
                    let style = if only_early { t.data_early() } else { t.data() };
                    set(buf, x, y, &braille(b).to_string(), style);
                } else if onset_col == Some(cx) {
                    set(buf, x, y, "┊", t.onset());
                } else if mean_row == Some(cy) && onset_col.is_none_or(|o| cx > o) {
                    set(buf, x, y, "╌", t.mean());
                }
            }
        }
        for cx in 0..w {
            let x = plot.x + cx as u16;
            if nonfinite.get(cx).copied().unwrap_or(false) {
                set(buf, x, plot.y, "×", t.nonfinite());
            } else if above.get(cx).copied().unwrap_or(false) {
                set(buf, x, plot.y, "▲", t.nonfinite());
            }
            if below.get(cx).copied().unwrap_or(false) {
                set(buf, x, plot.y + plot.height - 1, "▼", t.nonfinite());
            }
        }
        // Value labels: top, bottom and the mean's row.
        let label_w = usize::from(Y_LABEL_WIDTH - 1);
        let mut label = |row: usize, v: f64, style: Style| {
            let text = format!("{:>label_w$}", format::fit(&format::number(v), label_w));
            buf.set_string(area.x, plot.y + row as u16, text, style);
            set(
                buf,
                area.x + Y_LABEL_WIDTH - 1,
                plot.y + row as u16,
                "┤",
                t.label(),
            );
        };
        label(0, c.y_high, t.label());
        if h > 1 {
            label(h - 1, c.y_low, t.label());
        }
        // The mean's value wins over an end's.
        if let (Some(r), Some(m)) = (mean_row, c.mean) {
            label(r, m, t.mean());
        }
        // The axis row: left and right ends, and the onset.
        let axis_y = plot.y + plot.height;
        if axis_y < area.y + area.height {
            let left_w = c.x_left.chars().count() as u16;
            buf.set_string(plot.x, axis_y, &c.x_left, t.label());
            let right_w = c.x_right.chars().count() as u16;
            let right_x = (plot.x + plot.width).saturating_sub(right_w);
            // Columns of the axis row free of the right end's label (one blank before it).
            let mut free_width = plot.width;
            if right_x > plot.x + left_w {
                buf.set_string(right_x, axis_y, &c.x_right, t.label());
                free_width = (right_x - plot.x).saturating_sub(1);
            }
            if let (Some(col), Some(text)) = (onset_col, &c.onset_label) {
                // `▲` under the onset's column when the end labels leave room, the label on
                // whichever side has room.
                let col = (col as u16).max(left_w + 1);
                let right = format!("▲ {text}");
                let len = right.chars().count() as u16;
                let left = format!("{text} ▲");
                if col + len <= free_width {
                    buf.set_string(plot.x + col, axis_y, right, t.onset());
                } else if col >= len + left_w && col < free_width {
                    buf.set_string(plot.x + col + 1 - len, axis_y, left, t.onset());
                } else if col < free_width {
                    buf.set_string(plot.x + col, axis_y, "▲", t.onset());
                }
            }
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::live::Bucket;
    use crate::tui::panels::buffer_lines;
    use ratatui::style::{Color, Modifier};

    fn bucket(v: f64) -> Bucket {
        let mut b = Bucket::default();
        b.push(v);
        b
    }

    fn chart(values: &[f64], y: (f64, f64)) -> Chart {
        Chart {
            name: "temperature".into(),
            unit: "K".into(),
            view: ChartView::All,
            from_row: 0,
            to_row: values.len() as u64,
            buckets: values.iter().map(|&v| bucket(v)).collect(),
            y_low: y.0,
            y_high: y.1,
            onset_row: None,
            mean: None,
            error: None,
            current: values.last().copied(),
            x_left: "0".into(),
            x_right: "8".into(),
            onset_label: None,
            rows: values.len() as u64,
            note: None,
        }
    }

    fn render(c: &Chart, w: u16, h: u16, theme: &Theme) -> Buffer {
        let mut buf = Buffer::empty(Rect::new(0, 0, w, h));
        let widget = TrendChart {
            chart: c,
            theme,
            number: 1,
            quantities: 3,
            window_rows: 400,
        };
        widget.render(buf.area, &mut buf);
        buf
    }

    #[test]
    fn a_ramp_is_a_diagonal_of_dots_with_its_range_and_ends_labelled() {
        // Eight rows rising by one over eight pixel columns and eight pixel rows: one dot
        // per column, one pixel higher each time (braille: two columns, four rows a cell).
        let c = chart(&[0.0, 1.0, 2.0, 3.0, 4.0, 5.0, 6.0, 7.0], (0.0, 7.0));
        let buf = render(&c, 13, 3, &Theme::plain());
        assert_eq!(
            buffer_lines(&buf),
            vec![
                "       7┤  ⡠⠊".to_string(),
                "       0┤⡠⠊  ".to_string(),
                "         0  8".to_string(),
            ]
        );
    }

    #[test]
    fn a_jump_is_joined_and_non_finite_rows_are_marked_on_top() {
        let mut values = vec![0.0, 0.0, 7.0, 7.0];
        values.extend([f64::NAN; 4]);
        let mut c = chart(&values, (0.0, 7.0));
        c.buckets[5].push(f64::NAN);
        let buf = render(&c, 13, 3, &Theme::colored());
        let lines = buffer_lines(&buf);
        // Column 1 (pixels 2-3) climbs from the bottom row to the top: both cells have dots.
        assert_ne!(buf[(10, 0)].symbol(), " ");
        assert_ne!(buf[(10, 1)].symbol(), " ");
        // Rows 4-7 are NaN: `×` on the top row of their cells, in the non-finite style.
        assert_eq!(&lines[0][lines[0].len() - 4..], "××", "{lines:?}");
        assert_eq!(buf[(11, 0)].fg, Color::Red);
        assert!(buf[(11, 0)].modifier.contains(Modifier::BOLD));
    }

    #[test]
    fn the_onset_column_and_the_production_mean_are_drawn_where_there_is_no_data() {
        // A flat series at 6 over 16 rows, onset at row 4, mean 2 (below the data), on a
        // plot of 30 columns (60 pixels) by 4 rows (16 pixels).
        let mut c = chart(&[6.0; 16], (0.0, 8.0));
        c.onset_row = Some(4);
        c.onset_label = Some("onset 4 ps".into());
        c.mean = Some(2.0);
        c.x_left = "0 ps".into();
        c.x_right = "16 ps".into();
        let theme = Theme::colored();
        let buf = render(&c, 9 + 30, 5, &theme);
        let lines = buffer_lines(&buf);
        // Row 4 of 16 is pixel 15 of 60: terminal column 7 of the plot. Value 6 of 0..8
        // is pixel 11 of 16 from the bottom (row 1); the mean 2 is pixel 4 (row 2).
        assert_eq!(buf[(9 + 7, 2)].symbol(), "┊", "{lines:?}");
        assert_eq!(buf[(9 + 7, 3)].symbol(), "┊", "{lines:?}");
        assert_eq!(buf[(9 + 7, 2)].fg, Color::Green);
        assert_eq!(
            lines[2],
            format!("       2┤{}┊{}", " ".repeat(7), "╌".repeat(22))
        );
        assert_eq!(buf[(9 + 8, 2)].fg, Color::Yellow);
        // The axis row names the ends and the onset, `▲` under the onset's column.
        assert_eq!(
            lines[4],
            format!("         0 ps   ▲ onset 4 ps{}16 ps", " ".repeat(6))
        );
        // Data before the onset is dimmed (dark grey), after it in the data colour.
        assert_eq!(buf[(9, 1)].fg, Color::DarkGray);
        assert_eq!(buf[(9 + 10, 1)].fg, Color::Cyan);
    }

    #[test]
    fn an_onset_near_the_right_end_puts_its_label_left_of_the_marker_not_over_the_end() {
        let mut c = chart(&[6.0; 16], (0.0, 8.0));
        c.onset_row = Some(12);
        c.onset_label = Some("onset 180.8 ps".into());
        c.x_left = "0 ps".into();
        c.x_right = "780.3 ps".into();
        let theme = Theme::colored();
        let buf = render(&c, 9 + 40, 5, &theme);
        let lines = buffer_lines(&buf);
        // Row 12 of 16 is pixel 60 of 80: terminal column 30 of the plot, one column
        // before the blank in front of the right end's label (it took that label's place).
        assert_eq!(
            lines[4],
            format!("         0 ps{}onset 180.8 ps ▲ 780.3 ps", " ".repeat(11))
        );
    }

    #[test]
    fn the_title_says_the_current_value_the_mean_with_its_error_and_the_view() {
        let mut c = chart(&[300.0, 301.0], (290.0, 310.0));
        c.mean = Some(300.4);
        c.error = Some(0.12);
        c.view = ChartView::Window;
        let widget = TrendChart {
            chart: &c,
            theme: &Theme::plain(),
            number: 2,
            quantities: 5,
            window_rows: 400,
        };
        let text: String = widget
            .title()
            .spans
            .iter()
            .map(|s| s.content.to_string())
            .collect();
        assert_eq!(
            text,
            "2/5 temperature K  now 301  production mean 300.40 ± 0.12  [latest 400 rows]"
        );
    }

    #[test]
    fn tiny_areas_draw_nothing_and_do_not_panic() {
        let c = chart(&[1.0, 2.0], (0.0, 3.0));
        for (w, h) in [(0, 0), (1, 1), (9, 5), (12, 1), (20, 2)] {
            render(&c, w, h, &Theme::plain());
        }
    }
}
