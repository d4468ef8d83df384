//! Plain ASCII in place of the dashboard's Unicode glyphs (braille chart dots, box lines,
//! sparkline blocks, status symbols) when the locale says the terminal does not take UTF-8.
//!
//! The locale is the first non-empty of `LC_ALL`, `LC_CTYPE` and `LANG` (the POSIX order);
//! it takes UTF-8 when its codeset says so (`C.UTF-8`, `en_GB.utf8`). With none of them
//! set the dashboard keeps its glyphs: terminals today take UTF-8, and a bare environment
//! (a container, a stripped SSH session) says nothing either way. The backend swaps each
//! cell's glyph for one ASCII character of the same width ([`ascii`]), so layout and diffs
//! are untouched.

use std::borrow::Cow;

use unicode_width::UnicodeWidthStr;

/// Whether the locale named by `lookup` (an environment) takes UTF-8.
pub fn utf8_locale(lookup: impl Fn(&str) -> Option<String>) -> bool {
    let chosen = ["LC_ALL", "LC_CTYPE", "LANG"]
        .into_iter()
        .filter_map(lookup)
        .find(|value| !value.is_empty());
    match chosen {
        None => true,
        Some(locale) => {
            let lower = locale.to_ascii_lowercase();
            lower.contains("utf-8") || lower.contains("utf8")
        }
    }
}

/// Whether this process's locale takes UTF-8.
pub fn utf8_locale_from_env() -> bool {
    utf8_locale(|name| std::env::var(name).ok())
}

/// One character in place of `c`, or `None` when none fits (shown as `?`).
fn ascii_char(c: char) -> Option<char> {
    Some(match c {
        // Box lines, dashed lines and corners.
        '─' | '━' | '╌' | '┄' | '╍' | '═' => '-',
        '│' | '┃' | '║' | '‖' => '|',
        '┊' | '╎' | '┆' => ':',
        '┌' | '┐' | '└' | '┘' | '├' | '┤' | '┬' | '┴' | '┼' | '╭' | '╮' | '╯' | '╰' => {
            '+'
        }
        // Sparkline levels, low to high.
        '▁' => '_',
        '▂' => '.',
        '▃' => ',',
        '▄' => '-',
        '▅' => '=',
        '▆' => '+',
        '▇' => '*',
        '█' | '■' => '#',
        // Braille chart dots: a blank cell stays blank.
        '\u{2800}' => ' ',
        '\u{2801}'..='\u{28ff}' => '*',
        // Status and severity symbols, arrows.
        '✓' => 'v',
        '✗' | '×' => 'x',
        '↗' => '/',
        '▲' | '↑' => '^',
        '▼' | '↓' => 'v',
        '▶' | '→' => '>',
        '←' => '<',
        '○' | '°' => 'o',
        '·' | '…' => '.',
        '–' | '—' | '⁻' => '-',
        '±' => '~',
        // Units and letters.
        'µ' | 'μ' => 'u',
        'Å' => 'A',
        'å' => 'a',
        'σ' => 's',
        '¹' => '1',
        '²' => '2',
        '³' => '3',
        _ => return None,
    })
}

/// `symbol` in ASCII with the same display width: each glyph by its stand-in, anything
/// else not ASCII by `?`s as wide as it was.
pub fn ascii(symbol: &str) -> Cow<'_, str> {
    if symbol.is_ascii() {
        return Cow::Borrowed(symbol);
    }
    let mut out = String::with_capacity(symbol.len());
    for c in symbol.chars() {
        if c.is_ascii() {
            out.push(c);
        } else if let Some(a) = ascii_char(c) {
            out.push(a);
        } else {
            let mut buf = [0u8; 4];
            let width = c.encode_utf8(&mut buf).width();
            for _ in 0..width {
                out.push('?');
            }
        }
    }
    Cow::Owned(out)
}

#[cfg(test)]
mod tests {
    use super::*;

    fn env(pairs: &[(&str, &str)]) -> impl Fn(&str) -> Option<String> {
        let pairs: Vec<(String, String)> = pairs
            .iter()
            .map(|(k, v)| (k.to_string(), v.to_string()))
            .collect();
        move |name| {
            pairs
                .iter()
                .find(|(k, _)| k == name)
                .map(|(_, v)| v.clone())
        }
    }

    #[test]
    fn the_locale_follows_posix_precedence() {
        // POSIX: LC_ALL overrides LC_CTYPE, which overrides LANG (from memory).
        assert!(utf8_locale(env(&[("LANG", "C.UTF-8")])));
        assert!(utf8_locale(env(&[("LANG", "en_GB.utf8")])));
        assert!(!utf8_locale(env(&[("LANG", "C")])));
        assert!(!utf8_locale(env(&[("LANG", "en_US.ISO-8859-1")])));
        assert!(!utf8_locale(env(&[
            ("LANG", "C.UTF-8"),
            ("LC_ALL", "POSIX")
        ])));
        assert!(utf8_locale(env(&[("LANG", "C"), ("LC_CTYPE", "C.UTF-8")])));
        assert!(!utf8_locale(env(&[("LC_CTYPE", "C"), ("LANG", "C.UTF-8")])));
        // Empty values are skipped; nothing set keeps the glyphs.
        assert!(utf8_locale(env(&[("LC_ALL", ""), ("LANG", "C.UTF-8")])));
        assert!(utf8_locale(env(&[])));
    }

    #[test]
    fn every_glyph_becomes_ascii_of_the_same_width() {
        let samples = [
            "│ rows",
            "┊ ▲ onset",
            "╌ production mean",
            "▁▂▃▄▅▆▇█",
            "⠀⡠⠊⣿",
            "✓ steady",
            "✗ unstable",
            "‖ stalled",
            "↗ drifting",
            "■ finished",
            "○ waiting",
            "…",
            "±",
            "µs",
            "Å³",
            "↑↓",
            "▶",
            "→",
            "—",
            "σ",
            "数",
        ];
        for s in samples {
            let a = ascii(s);
            assert!(a.is_ascii(), "{s} -> {a}");
            assert_eq!(a.width(), s.width(), "{s} -> {a}");
        }
        assert_eq!(ascii("▁▂▃▄▅▆▇█"), "_.,-=+*#");
        assert_eq!(ascii("⠀⡠"), " *");
        assert_eq!(ascii("数"), "??");
        assert!(matches!(ascii("plain"), Cow::Borrowed("plain")));
    }
}
