//! The panels, each a widget drawn from the snapshot (`impl Widget for &Panel`): they never
//! change state and never do I/O.

pub mod alerts;
pub mod footer;
pub mod header;
pub mod help;
pub mod overview;
pub mod quantities;
pub mod stages;
pub mod summary;

/// The eight heights of a sparkline cell, lowest first.
const LEVELS: [char; 8] = ['▁', '▂', '▃', '▄', '▅', '▆', '▇', '█'];

/// A sparkline of bucket means scaled to their own range; a gap (no row, or only
/// non-finite ones) is a space.
pub fn sparkline(values: &[Option<f64>]) -> String {
    let finite = values.iter().flatten().filter(|v| v.is_finite());
    let (lo, hi) = finite.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), &v| {
        (lo.min(v), hi.max(v))
    });
    values
        .iter()
        .map(|v| match v {
            Some(v) if v.is_finite() => {
                let f = if hi > lo { (v - lo) / (hi - lo) } else { 0.5 };
                let i = (f * 7.0).round() as usize;
                LEVELS.get(i.min(7)).copied().unwrap_or(' ')
            }
            _ => ' ',
        })
        .collect()
}

/// The text of each row of a buffer (tests compare panels line by line).
#[cfg(test)]
pub(crate) fn buffer_lines(buf: &ratatui::buffer::Buffer) -> Vec<String> {
    let area = buf.area;
    (area.y..area.y + area.height)
        .map(|y| {
            (area.x..area.x + area.width)
                .filter_map(|x| buf.cell((x, y)).map(|c| c.symbol().to_string()))
                .collect()
        })
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn sparklines_scale_to_their_range_and_leave_gaps() {
        let s = sparkline(&[Some(0.0), Some(1.0), None, Some(0.5), Some(f64::NAN)]);
        assert_eq!(s, "▁█ ▅ ");
        assert_eq!(sparkline(&[Some(3.0), Some(3.0)]), "▅▅");
        assert_eq!(sparkline(&[]), "");
    }
}
