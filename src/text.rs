//! Text from a log made safe to show: one rule for every output.
//!
//! A log is written by any program, and its column names, units, free text and the
//! excerpts plateau quotes from it reach the user's terminal. A control character there
//! (`ESC ] 0 ; title BEL`, `ESC [ 2 J`, a carriage return, NUL) could retitle or clear the
//! terminal, move the cursor or hide text. Every output that prints text from a log (the
//! `columns`, `report` and `check` texts and markdown, the dashboard, the `--on-alert`
//! environment) passes it through [`escape_control`]; whole text documents go through
//! [`escape_document`] as a last guard, and JSON through [`escape_json`].
//!
//! What is escaped: C0 controls (U+0000 to U+001F, so also `\n`, `\r` and `\t`), DEL, C1
//! controls (U+0080 to U+009F), and the invisible format characters that reorder or hide
//! text (bidirectional embeddings, overrides and isolates, zero-width characters, word
//! joiner, byte-order mark). Everything else, including all other Unicode, is kept.
//! Escapes are visible text: `\n`, `\r`, `\t`, `\x1b`, `\u{202e}`. A backslash itself is
//! kept as is, so escaping is idempotent; the price is that a log that literally holds
//! the text `\x1b` shows the same as one that holds ESC (both are harmless).

use std::borrow::Cow;
use std::fmt::Write as _;

/// Whether `c` must not reach a terminal as is (see the module documentation).
pub fn needs_escape(c: char) -> bool {
    c.is_control()
        || matches!(c,
            '\u{200B}'..='\u{200F}'
            | '\u{2028}'..='\u{202E}'
            | '\u{2060}'..='\u{2069}'
            | '\u{FEFF}')
}

/// `text` with every character of [`needs_escape`] written as a visible escape.
/// Borrowed (no copy) when nothing needs escaping, the usual case.
pub fn escape_control(text: &str) -> Cow<'_, str> {
    if !text.chars().any(needs_escape) {
        return Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 8);
    for c in text.chars() {
        push_escaped(&mut out, c);
    }
    Cow::Owned(out)
}

fn push_escaped(out: &mut String, c: char) {
    if !needs_escape(c) {
        out.push(c);
        return;
    }
    match c {
        '\n' => out.push_str("\\n"),
        '\r' => out.push_str("\\r"),
        '\t' => out.push_str("\\t"),
        c if (c as u32) < 0x100 => {
            let _ = write!(out, "\\x{:02x}", c as u32);
        }
        c => {
            let _ = write!(out, "\\u{{{:x}}}", c as u32);
        }
    }
}

/// A whole text document (lines separated by `\n`) with each line escaped: the line
/// breaks the document is made of are kept, everything else of [`needs_escape`] is shown
/// as an escape. A guard at the output boundary of text and markdown outputs, behind the
/// per-field escapes (which keep tables aligned).
pub fn escape_document(text: &str) -> Cow<'_, str> {
    if !text.chars().any(|c| c != '\n' && needs_escape(c)) {
        return Cow::Borrowed(text);
    }
    let mut out = String::with_capacity(text.len() + 16);
    for c in text.chars() {
        if c == '\n' {
            out.push('\n');
        } else {
            push_escaped(&mut out, c);
        }
    }
    Cow::Owned(out)
}

/// A JSON document with the characters of [`needs_escape`] that JSON writers leave raw
/// (DEL, C1 controls, invisible format characters) written as `\uXXXX`: the same JSON
/// value, but nothing a terminal acts on. JSON's structure is ASCII, so such characters
/// can only be inside strings, where `\uXXXX` means the same character.
pub fn escape_json(json: &str) -> Cow<'_, str> {
    if !json.chars().any(needs_escape_in_json) {
        return Cow::Borrowed(json);
    }
    let mut out = String::with_capacity(json.len() + 16);
    for c in json.chars() {
        if needs_escape_in_json(c) {
            // Every such character is in the Basic Multilingual Plane: one \u escape.
            let _ = write!(out, "\\u{:04x}", c as u32);
        } else {
            out.push(c);
        }
    }
    Cow::Owned(out)
}

/// Characters of [`needs_escape`] other than the C0 controls a JSON writer escapes itself
/// (and the `\n` and spaces between the lines of a pretty document).
fn needs_escape_in_json(c: char) -> bool {
    (c as u32) >= 0x20 && needs_escape(c)
}

#[cfg(test)]
mod tests {
    use super::*;

    // The character classes are those of the Unicode Standard, chapter 23 (control codes,
    // format characters) and UAX #9 (bidirectional controls).

    #[test]
    fn terminal_sequences_become_visible() {
        let hostile = "E\u{1b}]0;title\u{7}\u{1b}[2J\r\0x";
        assert_eq!(
            escape_control(hostile),
            "E\\x1b]0;title\\x07\\x1b[2J\\r\\x00x"
        );
        assert_eq!(escape_control("a\nb\tc\u{7f}"), "a\\nb\\tc\\x7f");
        assert_eq!(escape_control("\u{9b}31m"), "\\x9b31m");
        assert_eq!(escape_control("abc\u{202e}cba"), "abc\\u{202e}cba");
        assert_eq!(escape_control("\u{2028}"), "\\u{2028}");
    }

    #[test]
    fn ordinary_text_is_borrowed_unchanged() {
        for s in [
            "Temperature (K)",
            "Énergie/kJ·mol⁻¹",
            "温度",
            "ρ [g/cm³]",
            "a\\x1b",
            "",
        ] {
            assert!(matches!(escape_control(s), Cow::Borrowed(_)), "{s}");
            assert!(matches!(escape_document(s), Cow::Borrowed(_)), "{s}");
        }
    }

    #[test]
    fn escaping_is_idempotent_and_leaves_no_control() {
        let s = "\u{0}\u{1}\u{1b}[1m\u{85}\u{200b}\u{feff}ok";
        let once = escape_control(s).into_owned();
        assert_eq!(escape_control(&once), once);
        assert!(!once.chars().any(needs_escape));
    }

    #[test]
    fn documents_keep_their_line_breaks() {
        let doc = "name \u{1b}[2J\nsecond\r\n";
        assert_eq!(escape_document(doc), "name \\x1b[2J\nsecond\\r\n");
    }

    #[test]
    fn json_keeps_its_value() {
        let value = serde_json::json!({ "name": "a\u{9b}b\u{7f}\u{202e}\u{1b}" });
        let text = serde_json::to_string(&value).unwrap();
        let safe = escape_json(&text).into_owned();
        assert!(!safe.chars().any(needs_escape), "{safe}");
        let back: serde_json::Value = serde_json::from_str(&safe).unwrap();
        assert_eq!(back, value);
    }
}
