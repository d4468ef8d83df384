//! Text for the screen: log text made safe to print, and numbers, durations and times in
//! the few characters a dashboard column has.

/// Text from a log (column names, units, messages, file names) with every control or
/// invisible formatting character written as a visible escape: the one rule of
/// [`crate::text::escape_control`], shared with every other output.
pub use crate::text::escape_control as escape;

/// A number in at most about 8 characters: 4 to 5 significant digits, exponent form for
/// very large or very small magnitudes.
pub fn number(v: f64) -> String {
    if v.is_nan() {
        return "nan".into();
    }
    if v.is_infinite() {
        return if v > 0.0 { "inf" } else { "-inf" }.into();
    }
    let a = v.abs();
    if a == 0.0 {
        return "0".into();
    }
    if !(1e-3..1e6).contains(&a) {
        return format!("{v:.2e}");
    }
    let digits_before = a.log10().floor() as i32 + 1;
    let decimals = (4 - digits_before).clamp(0, 6) as usize;
    let s = format!("{v:.decimals$}");
    if s.contains('.') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s
    }
}

/// Three significant digits (a rate that should not flicker with every row).
pub fn sig3(v: f64) -> String {
    if !v.is_finite() || v == 0.0 {
        return number(v);
    }
    let digits_before = v.abs().log10().floor() as i32 + 1;
    let scale = 10f64.powi(3 - digits_before);
    number((v * scale).round() / scale)
}

/// A number with its unit, `-` when absent.
pub fn quantity(v: Option<f64>, unit: &str) -> String {
    match v {
        Some(v) if unit.is_empty() => number(v),
        Some(v) => format!("{} {unit}", number(v)),
        None => "-".into(),
    }
}

/// `mean ± error` rounded to the error's two significant digits.
pub fn mean_error(mean: f64, error: Option<f64>) -> String {
    crate::report::value_with_error(mean, error)
}

/// `mean±error` for a narrow panel: as [`mean_error`] while that keeps the mean to at most
/// five significant digits; a far smaller error (a drift measured to 10⁻⁶ of itself) gives
/// the mean to four significant digits and the error to two.
pub fn compact_mean_error(mean: f64, error: Option<f64>) -> String {
    let full = mean_error(mean, error).replace(" ± ", "±");
    let digits = full
        .split('±')
        .next()
        .unwrap_or("")
        .trim_start_matches(['-', '+', '0', '.'])
        .chars()
        .filter(char::is_ascii_digit)
        .count();
    match error.filter(|e| e.is_finite() && *e > 0.0) {
        Some(e) if digits > 5 && mean.is_finite() => {
            format!("{}±{e:.1e}", crate::alert::format_number(mean, ""))
        }
        _ => full,
    }
}

/// A simulated time in ps, shown in ps, ns or µs.
pub fn sim_time(ps: f64) -> String {
    let a = ps.abs();
    if !ps.is_finite() {
        number(ps)
    } else if a < 1e3 {
        format!("{} ps", number(ps))
    } else if a < 1e6 {
        format!("{} ns", number(ps / 1e3))
    } else {
        format!("{} µs", number(ps / 1e6))
    }
}

/// A wall-clock duration in seconds: `42 s`, `3 min`, `2 h 05 min`, `3 d 4 h`.
pub fn duration(seconds: f64) -> String {
    if !seconds.is_finite() || seconds < 0.0 {
        return "-".into();
    }
    let s = seconds.round() as u64;
    match s {
        0..=59 => format!("{s} s"),
        60..=3599 => format!("{} min", s / 60),
        3600..=86_399 => format!("{} h {:02} min", s / 3600, (s % 3600) / 60),
        _ => format!("{} d {} h", s / 86_400, (s % 86_400) / 3600),
    }
}

/// Seconds until the text of [`duration`] for `seconds` changes (for the redraw clock).
pub fn duration_changes_in(seconds: f64) -> f64 {
    let step = if seconds < 60.0 {
        1.0
    } else if seconds < 86_400.0 {
        60.0
    } else {
        3600.0
    };
    // `duration` rounds to the nearest second, so the text changes at half steps.
    let next = ((seconds + 0.5) / step).floor() * step + step - 0.5;
    (next - seconds).max(0.05)
}

/// A count with thin groups of three digits (`12 345 678`).
pub fn count(n: u64) -> String {
    let digits = n.to_string();
    let mut out = String::with_capacity(digits.len() + digits.len() / 3);
    for (i, c) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i).is_multiple_of(3) {
            out.push(' ');
        }
        out.push(c);
    }
    out
}

/// A count in at most 5 characters: `950`, `9500`, `12.3k`, `4.56M`.
pub fn short_count(n: u64) -> String {
    match n {
        0..=9_999 => n.to_string(),
        10_000..=999_999 => format!("{}k", number(n as f64 / 1e3)),
        _ => format!("{}M", number(n as f64 / 1e6)),
    }
}

/// The local wall-clock time `HH:MM:SS` of a Unix second.
pub fn clock(unix_seconds: f64) -> String {
    let (h, m, s) = local_hms(unix_seconds);
    format!("{h:02}:{m:02}:{s:02}")
}

/// Hours, minutes and seconds of a Unix second in the local time zone (UTC when the
/// time zone cannot be read).
fn local_hms(unix_seconds: f64) -> (u32, u32, u32) {
    let t = unix_seconds.floor() as libc::time_t;
    // SAFETY: `localtime_r` only writes into the `tm` we own; a null return leaves it unused.
    let local = unsafe {
        let mut tm: libc::tm = std::mem::zeroed();
        (!libc::localtime_r(&t, &mut tm).is_null()).then_some(tm)
    };
    match local {
        Some(tm) => (tm.tm_hour as u32, tm.tm_min as u32, tm.tm_sec as u32),
        None => {
            let day = (unix_seconds.max(0.0) as u64) % 86_400;
            (
                (day / 3600) as u32,
                ((day % 3600) / 60) as u32,
                (day % 60) as u32,
            )
        }
    }
}

/// `text` cut to at most `width` columns, with `…` when cut.
pub fn fit(text: &str, width: usize) -> String {
    use unicode_width::UnicodeWidthChar;
    let mut out = String::new();
    let mut used = 0;
    let total: usize = text.chars().map(|c| c.width().unwrap_or(0)).sum();
    if total <= width {
        return text.to_string();
    }
    if width == 0 {
        return String::new();
    }
    for c in text.chars() {
        let w = c.width().unwrap_or(0);
        if used + w + 1 > width {
            break;
        }
        out.push(c);
        used += w;
    }
    out.push('…');
    out
}

/// `text` cut from the left to at most `width` columns (`…` first), keeping its end: for
/// paths, whose last part tells runs apart.
pub fn fit_left(text: &str, width: usize) -> String {
    use unicode_width::UnicodeWidthChar;
    let total: usize = text.chars().map(|c| c.width().unwrap_or(0)).sum();
    if total <= width {
        return text.to_string();
    }
    if width == 0 {
        return String::new();
    }
    let mut kept: Vec<char> = Vec::new();
    let mut used = 0;
    for c in text.chars().rev() {
        let w = c.width().unwrap_or(0);
        if used + w + 1 > width {
            break;
        }
        kept.push(c);
        used += w;
    }
    let mut out = String::from("…");
    out.extend(kept.into_iter().rev());
    out
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn a_tiny_error_does_not_stretch_the_mean() {
        assert_eq!(compact_mean_error(0.500_001_2, Some(1.6e-6)), "0.5±1.6e-6");
        assert_eq!(compact_mean_error(-2.345, Some(0.12)), "-2.35±0.12");
        assert_eq!(
            compact_mean_error(123.456_78, Some(0.000_4)),
            "123.5±4.0e-4"
        );
    }
    use std::borrow::Cow;

    #[test]
    fn control_and_invisible_characters_are_escaped() {
        assert_eq!(escape("temp (K)"), "temp (K)");
        assert_eq!(escape("a\x1b[31mb"), "a\\x1b[31mb");
        assert_eq!(escape("x\ty\r\n"), "x\\ty\\r\\n");
        assert_eq!(escape("\u{9b}2J"), "\\x9b2J");
        assert_eq!(escape("abc\u{202e}fed"), "abc\\u{202e}fed");
        assert_eq!(escape("\x7f"), "\\x7f");
        assert!(matches!(escape("plain"), Cow::Borrowed(_)));
    }

    #[test]
    fn numbers_fit_a_narrow_column() {
        assert_eq!(number(300.123456), "300.1");
        assert_eq!(number(-45123.75), "-45124");
        assert_eq!(number(0.012346), "0.01235");
        assert_eq!(number(2.0), "2");
        assert_eq!(number(1.5e-7), "1.50e-7");
        assert_eq!(number(2.5e9), "2.50e9");
        assert_eq!(number(f64::NAN), "nan");
        assert_eq!(number(f64::NEG_INFINITY), "-inf");
        assert_eq!(sig3(1715.4), "1720");
        assert_eq!(sig3(31.26), "31.3");
        assert_eq!(sig3(0.0), "0");
    }

    #[test]
    fn times_and_durations_pick_their_unit() {
        assert_eq!(sim_time(523.4), "523.4 ps");
        assert_eq!(sim_time(52_310.0), "52.31 ns");
        assert_eq!(sim_time(2.5e6), "2.5 µs");
        assert_eq!(duration(42.4), "42 s");
        assert_eq!(duration(185.0), "3 min");
        assert_eq!(duration(7500.0), "2 h 05 min");
        assert_eq!(duration(200_000.0), "2 d 7 h");
        assert_eq!(duration(-1.0), "-");
        assert_eq!(count(12_345_678), "12 345 678");
        assert_eq!(count(999), "999");
        assert_eq!(short_count(9500), "9500");
        assert_eq!(short_count(12_346), "12.35k");
        assert_eq!(short_count(4_560_000), "4.56M");
    }

    #[test]
    fn the_duration_text_changes_when_the_clock_says() {
        // 3.2 s shows "3 s" until 3.5 s.
        assert!((duration_changes_in(3.2) - 0.3).abs() < 1e-9);
        assert_eq!(duration(3.49), "3 s");
        assert_eq!(duration(3.51), "4 s");
        // 125 s shows "2 min" until 179.5 s.
        assert!((duration_changes_in(125.0) - 54.5).abs() < 1e-9);
    }

    #[test]
    fn fitting_cuts_with_an_ellipsis() {
        assert_eq!(fit("temperature", 20), "temperature");
        assert_eq!(fit("temperature", 6), "tempe…");
        assert_eq!(fit_left("runs/a/long/md.log", 10), "…ng/md.log");
        assert_eq!(fit("", 0), "");
    }
}
