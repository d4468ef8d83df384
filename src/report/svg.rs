//! Hand-written SVG plots for a lab notebook: one quantity against simulated time, with the
//! equilibration onset (a vertical dashed line) and the production mean ± error (a shaded
//! band and a line) marked. Long series are reduced to a min/max envelope per pixel column,
//! so a million rows make a small file.

use std::fmt::Write as _;

use crate::alert::format_number;

/// What one plot shows.
#[derive(Debug, Clone)]
pub struct PlotInput<'a> {
    pub title: &'a str,
    pub unit: &'a str,
    /// Simulated time per row, ps.
    pub times: &'a [f64],
    pub values: &'a [f64],
    /// Onset time, ps.
    pub onset_time: Option<f64>,
    /// Production mean and its standard error.
    pub mean: Option<f64>,
    pub error: Option<f64>,
}

const WIDTH: f64 = 720.0;
const HEIGHT: f64 = 300.0;
const LEFT: f64 = 80.0;
const RIGHT: f64 = 20.0;
const TOP: f64 = 30.0;
const BOTTOM: f64 = 40.0;

fn escape(s: &str) -> String {
    s.replace('&', "&amp;")
        .replace('<', "&lt;")
        .replace('>', "&gt;")
        .replace('"', "&quot;")
}

fn finite_range(xs: impl Iterator<Item = f64>) -> Option<(f64, f64)> {
    let mut lo = f64::INFINITY;
    let mut hi = f64::NEG_INFINITY;
    for x in xs.filter(|x| x.is_finite()) {
        lo = lo.min(x);
        hi = hi.max(x);
    }
    (lo <= hi).then_some((lo, hi))
}

/// The SVG document for one quantity.
pub fn render_svg(p: &PlotInput<'_>) -> String {
    let mut out = String::new();
    let _ = writeln!(
        out,
        "<svg xmlns=\"http://www.w3.org/2000/svg\" width=\"{WIDTH}\" height=\"{HEIGHT}\" viewBox=\"0 0 {WIDTH} {HEIGHT}\" font-family=\"sans-serif\" font-size=\"12\">"
    );
    let _ = writeln!(
        out,
        "<rect width=\"{WIDTH}\" height=\"{HEIGHT}\" fill=\"white\"/>\n<text x=\"{LEFT}\" y=\"18\" font-size=\"14\">{} ({})</text>",
        escape(p.title),
        escape(p.unit)
    );
    let n = p.times.len().min(p.values.len());
    let pairs = || {
        p.times
            .iter()
            .zip(p.values.iter())
            .take(n)
            .filter(|(t, v)| t.is_finite() && v.is_finite())
            .map(|(t, v)| (*t, *v))
    };
    let (Some((t0, t1)), Some((mut v0, mut v1))) = (
        finite_range(pairs().map(|(t, _)| t)),
        finite_range(pairs().map(|(_, v)| v)),
    ) else {
        let _ = writeln!(
            out,
            "<text x=\"{LEFT}\" y=\"{}\">no finite values</text>\n</svg>",
            HEIGHT / 2.0
        );
        return out;
    };
    if v1 <= v0 {
        v0 -= 1.0;
        v1 += 1.0;
    }
    let span_t = if t1 > t0 { t1 - t0 } else { 1.0 };
    let plot_w = WIDTH - LEFT - RIGHT;
    let plot_h = HEIGHT - TOP - BOTTOM;
    let x_of = |t: f64| LEFT + (t - t0) / span_t * plot_w;
    let y_of = |v: f64| TOP + (v1 - v) / (v1 - v0) * plot_h;
    // Axes and labels.
    let _ = writeln!(
        out,
        "<rect x=\"{LEFT}\" y=\"{TOP}\" width=\"{plot_w}\" height=\"{plot_h}\" fill=\"none\" stroke=\"#888\"/>"
    );
    for (v, y) in [(v1, TOP), (v0, TOP + plot_h)] {
        let _ = writeln!(
            out,
            "<text x=\"{}\" y=\"{}\" text-anchor=\"end\">{}</text>",
            LEFT - 4.0,
            y + 4.0,
            escape(&format_number(v, ""))
        );
    }
    for (t, anchor) in [(t0, "start"), (t1, "end")] {
        let _ = writeln!(
            out,
            "<text x=\"{:.1}\" y=\"{}\" text-anchor=\"{anchor}\">{}</text>",
            x_of(t),
            HEIGHT - BOTTOM + 16.0,
            escape(&format_number(t, "ps"))
        );
    }
    let _ = writeln!(
        out,
        "<text x=\"{}\" y=\"{}\" text-anchor=\"middle\">simulated time (ps)</text>",
        LEFT + plot_w / 2.0,
        HEIGHT - 6.0
    );
    // Production mean ± error.
    if let Some(m) = p.mean.filter(|m| m.is_finite()) {
        let x_start = p
            .onset_time
            .map(x_of)
            .unwrap_or(LEFT)
            .clamp(LEFT, LEFT + plot_w);
        if let Some(e) = p.error.filter(|e| e.is_finite() && *e > 0.0) {
            let ya = y_of(m + e).clamp(TOP, TOP + plot_h);
            let yb = y_of(m - e).clamp(TOP, TOP + plot_h);
            let _ = writeln!(
                out,
                "<rect class=\"error-band\" x=\"{x_start:.1}\" y=\"{ya:.1}\" width=\"{:.1}\" height=\"{:.1}\" fill=\"#f4a261\" fill-opacity=\"0.35\"/>",
                LEFT + plot_w - x_start,
                (yb - ya).max(1.0)
            );
        }
        let ym = y_of(m).clamp(TOP, TOP + plot_h);
        let label = match p.error {
            Some(e) => super::text::value_with_error(m, Some(e)),
            None => format_number(m, ""),
        };
        let _ = writeln!(
            out,
            "<line class=\"mean\" x1=\"{x_start:.1}\" y1=\"{ym:.1}\" x2=\"{:.1}\" y2=\"{ym:.1}\" stroke=\"#e76f51\" stroke-width=\"1.5\"/>\n<text x=\"{:.1}\" y=\"{:.1}\" text-anchor=\"end\" fill=\"#e76f51\">mean {}</text>",
            LEFT + plot_w,
            LEFT + plot_w - 4.0,
            ym - 4.0,
            escape(&label)
        );
    }
    // The series as a min/max envelope per pixel column.
    let columns = plot_w.max(1.0) as usize;
    let mut lo = vec![f64::INFINITY; columns];
    let mut hi = vec![f64::NEG_INFINITY; columns];
    for (t, v) in pairs() {
        let c = (((t - t0) / span_t) * (columns as f64 - 1.0)).round() as usize;
        if let (Some(l), Some(h)) = (lo.get_mut(c), hi.get_mut(c)) {
            *l = l.min(v);
            *h = h.max(v);
        }
    }
    let mut path = String::new();
    for (c, (l, h)) in lo.iter().zip(hi.iter()).enumerate() {
        if !l.is_finite() {
            continue;
        }
        let x = LEFT + c as f64 * plot_w / (columns as f64 - 1.0).max(1.0);
        let cmd = if path.is_empty() { 'M' } else { 'L' };
        let _ = write!(path, "{cmd}{x:.1},{:.1}", y_of(*l));
        if h > l {
            let _ = write!(path, "L{x:.1},{:.1}", y_of(*h));
        }
    }
    let _ = writeln!(
        out,
        "<path class=\"series\" d=\"{path}\" fill=\"none\" stroke=\"#264653\" stroke-width=\"1\"/>"
    );
    // Onset.
    if let Some(t) = p.onset_time.filter(|t| t.is_finite()) {
        let x = x_of(t).clamp(LEFT, LEFT + plot_w);
        let _ = writeln!(
            out,
            "<line class=\"onset\" x1=\"{x:.1}\" y1=\"{TOP}\" x2=\"{x:.1}\" y2=\"{}\" stroke=\"#2a9d8f\" stroke-dasharray=\"5,4\" stroke-width=\"1.5\"/>\n<text x=\"{:.1}\" y=\"{}\" fill=\"#2a9d8f\">onset {}</text>",
            TOP + plot_h,
            x + 4.0,
            TOP + 14.0,
            escape(&format_number(t, "ps"))
        );
    }
    out.push_str("</svg>\n");
    out
}

/// A file name for a column's plot: letters, digits, `-` and `_` kept, others `_`.
pub fn file_name(column: &str) -> String {
    let mut s: String = column
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || c == '-' || c == '_' {
                c
            } else {
                '_'
            }
        })
        .collect();
    if s.is_empty() {
        s.push_str("column");
    }
    s.push_str(".svg");
    s
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn plot_marks_onset_and_mean_and_escapes_text() {
        let times: Vec<f64> = (0..1000).map(f64::from).collect();
        let values: Vec<f64> = times.iter().map(|t| (t * 0.1).sin()).collect();
        let svg = render_svg(&PlotInput {
            title: "a<b",
            unit: "K",
            times: &times,
            values: &values,
            onset_time: Some(100.0),
            mean: Some(0.0),
            error: Some(0.05),
        });
        assert!(svg.starts_with("<svg"));
        assert!(svg.trim_end().ends_with("</svg>"));
        assert!(svg.contains("class=\"onset\""));
        assert!(svg.contains("class=\"mean\""));
        assert!(svg.contains("class=\"error-band\""));
        assert!(svg.contains("a&lt;b"));
        assert!(!svg.contains("NaN"));
    }

    #[test]
    fn empty_or_non_finite_series_gives_a_valid_document() {
        let svg = render_svg(&PlotInput {
            title: "x",
            unit: "",
            times: &[0.0, 1.0],
            values: &[f64::NAN, f64::INFINITY],
            onset_time: None,
            mean: None,
            error: None,
        });
        assert!(svg.contains("no finite values"));
        assert!(svg.trim_end().ends_with("</svg>"));
    }

    #[test]
    fn file_names_are_safe() {
        assert_eq!(file_name("Temperature [K]"), "Temperature__K_.svg");
        assert_eq!(file_name("../x"), "___x.svg");
    }
}
