//! Delimiters, field splitting and header lines.
//!
//! **Delimiters.** `whitespace` splits on runs of spaces and tabs; `comma` and `tab` split on
//! each delimiter and trim spaces around fields (one trailing delimiter at the end of a line
//! is ignored). `auto` decides per line: a line containing a comma is split on commas,
//! otherwise on whitespace; for header lines a tab (and no comma) means tab-separated so that
//! names may contain spaces.
//!
//! **Header lines.** A header is a line (after a comment prefix or a row tag, if any) whose
//! fields are all names: none reads as a number and each contains a letter. Names may be
//! quoted (`"Total Energy (kJ/mol)"`) and may carry a unit at their end in parentheses or
//! brackets (`temperature (K)`, `pressure[bar]`); in whitespace tables a bracketed unit
//! separated by spaces belongs to the name before it (`Temp (K)` is one column).

use serde::{Deserialize, Serialize};

use super::number::is_numeric;

/// How fields are separated.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Delimiter {
    /// Runs of spaces and tabs.
    Whitespace,
    /// Commas.
    Comma,
    /// Tabs.
    Tab,
}

impl Delimiter {
    /// Plain name: "whitespace", "comma", "tab".
    pub fn name(self) -> &'static str {
        match self {
            Delimiter::Whitespace => "whitespace",
            Delimiter::Comma => "comma",
            Delimiter::Tab => "tab",
        }
    }
}

/// The delimiter setting: detected per line, or fixed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum DelimiterChoice {
    /// Comma when the line has one, else whitespace (headers: tab when the line has one).
    #[default]
    Auto,
    /// Always whitespace.
    Whitespace,
    /// Always comma.
    Comma,
    /// Always tab.
    Tab,
}

impl DelimiterChoice {
    /// The delimiter used for a data line.
    #[inline]
    pub fn for_data(self, line: &[u8]) -> Delimiter {
        match self {
            DelimiterChoice::Auto => {
                if memchr::memchr(b',', line).is_some() {
                    Delimiter::Comma
                } else {
                    Delimiter::Whitespace
                }
            }
            DelimiterChoice::Whitespace => Delimiter::Whitespace,
            DelimiterChoice::Comma => Delimiter::Comma,
            DelimiterChoice::Tab => Delimiter::Tab,
        }
    }

    /// The delimiter used for a header line (auto: comma, else tab, else whitespace).
    pub fn for_header(self, line: &[u8]) -> Delimiter {
        match self {
            DelimiterChoice::Auto => {
                if memchr::memchr(b',', line).is_some() {
                    Delimiter::Comma
                } else if memchr::memchr(b'\t', line).is_some() {
                    Delimiter::Tab
                } else {
                    Delimiter::Whitespace
                }
            }
            other => other.for_data(line),
        }
    }
}

/// Space, tab, vertical tab or form feed.
#[inline]
pub fn is_space(b: u8) -> bool {
    b == b' ' || b == b'\t' || b == b'\x0b' || b == b'\x0c'
}

/// Trims spaces and tabs at both ends.
#[inline]
pub fn trim(mut s: &[u8]) -> &[u8] {
    while let [first, rest @ ..] = s {
        if is_space(*first) {
            s = rest;
        } else {
            break;
        }
    }
    while let [rest @ .., last] = s {
        if is_space(*last) {
            s = rest;
        } else {
            break;
        }
    }
    s
}

/// Splits a data line into fields without allocating.
pub struct Fields<'a> {
    rest: &'a [u8],
    delim: Delimiter,
    done: bool,
}

impl<'a> Fields<'a> {
    /// Fields of `line` (already without its line ending).
    #[inline]
    pub fn new(line: &'a [u8], delim: Delimiter) -> Fields<'a> {
        let mut rest = trim(line);
        let sep = match delim {
            Delimiter::Whitespace => None,
            Delimiter::Comma => Some(b','),
            Delimiter::Tab => Some(b'\t'),
        };
        if let (Some(sep), [head @ .., last]) = (sep, rest) {
            if *last == sep {
                rest = head;
            }
        }
        Fields {
            rest,
            delim,
            done: rest.is_empty(),
        }
    }
}

impl<'a> Iterator for Fields<'a> {
    type Item = &'a [u8];

    #[inline]
    fn next(&mut self) -> Option<&'a [u8]> {
        if self.done {
            return None;
        }
        match self.delim {
            Delimiter::Whitespace => {
                let end = self
                    .rest
                    .iter()
                    .position(|&b| is_space(b))
                    .unwrap_or(self.rest.len());
                let (field, rest) = self.rest.split_at(end);
                let start = rest
                    .iter()
                    .position(|&b| !is_space(b))
                    .unwrap_or(rest.len());
                self.rest = rest.get(start..).unwrap_or_default();
                if self.rest.is_empty() {
                    self.done = true;
                }
                Some(field)
            }
            Delimiter::Comma | Delimiter::Tab => {
                let sep = if self.delim == Delimiter::Comma {
                    b','
                } else {
                    b'\t'
                };
                match memchr::memchr(sep, self.rest) {
                    Some(i) => {
                        let field = self.rest.get(..i).unwrap_or_default();
                        self.rest = self.rest.get(i + 1..).unwrap_or_default();
                        Some(trim(field))
                    }
                    None => {
                        self.done = true;
                        Some(trim(self.rest))
                    }
                }
            }
        }
    }
}

/// A column name read from a header, with its unit text if the name carried one.
#[derive(Debug, Clone, PartialEq, Eq, Serialize)]
pub struct HeaderName {
    /// The name without the unit (e.g. `Total Energy`).
    pub name: String,
    /// The text inside the trailing brackets (e.g. `kJ/mol`), if any.
    pub unit: Option<String>,
}

impl HeaderName {
    /// Splits `temperature (K)` / `pressure[bar]` into name and unit.
    pub fn from_token(token: &str) -> HeaderName {
        let t = token.trim();
        let close = t.chars().last();
        let open = match close {
            Some(')') => Some('('),
            Some(']') => Some('['),
            _ => None,
        };
        if let Some(open) = open {
            if let Some(pos) = t.rfind(open) {
                let name = t.get(..pos).unwrap_or("").trim();
                let unit = t.get(pos + 1..t.len() - 1).unwrap_or("").trim();
                if !name.is_empty() && !unit.is_empty() {
                    return HeaderName {
                        name: name.to_string(),
                        unit: Some(unit.to_string()),
                    };
                }
            }
        }
        HeaderName {
            name: t.to_string(),
            unit: None,
        }
    }

    /// The name as written, with its unit (`Temp (K)`).
    pub fn full(&self) -> String {
        match &self.unit {
            Some(u) => format!("{} ({u})", self.name),
            None => self.name.clone(),
        }
    }
}

/// Calls `f` for each header token of `line` (quotes removed, a following bracketed unit
/// merged into the token before it in whitespace tables). Returns the number of tokens.
fn header_tokens<'a>(line: &'a [u8], delim: Delimiter, mut f: impl FnMut(&'a [u8], bool)) -> usize {
    let mut count = 0usize;
    let line = trim(line);
    let mut i = 0usize;
    let n = line.len();
    let sep = match delim {
        Delimiter::Whitespace => None,
        Delimiter::Comma => Some(b','),
        Delimiter::Tab => Some(b'\t'),
    };
    while i < n {
        // skip separators/space
        while i < n && line.get(i).is_some_and(|&b| is_space(b) || Some(b) == sep) {
            i += 1;
        }
        if i >= n {
            break;
        }
        let start;
        let end;
        let quote = line.get(i).copied().filter(|&b| b == b'"' || b == b'\'');
        if let Some(q) = quote {
            start = i + 1;
            let close = line
                .get(start..)
                .and_then(|r| memchr::memchr(q, r))
                .map_or(n, |p| start + p);
            end = close;
            i = (close + 1).min(n);
            // anything glued after the closing quote up to the separator is dropped
            while i < n && line.get(i).is_some_and(|&b| !is_space(b) && Some(b) != sep) {
                i += 1;
            }
        } else {
            start = i;
            let mut depth = 0i32;
            while i < n {
                let b = line.get(i).copied().unwrap_or(b' ');
                match b {
                    b'(' | b'[' => depth += 1,
                    b')' | b']' => depth -= 1,
                    _ => {}
                }
                let at_sep = match sep {
                    None => is_space(b),
                    Some(s) => b == s,
                };
                if at_sep && depth <= 0 {
                    break;
                }
                i += 1;
            }
            end = i;
        }
        let token = trim(line.get(start..end).unwrap_or_default());
        let unit_only = delim == Delimiter::Whitespace
            && quote.is_none()
            && matches!(token.first(), Some(b'(' | b'['));
        if unit_only && count > 0 {
            f(token, true);
        } else {
            count += 1;
            f(token, false);
        }
    }
    count
}

/// If `line` looks like a header, the number of columns it names.
pub fn header_column_count(line: &[u8], delim: Delimiter) -> Option<usize> {
    let mut ok = true;
    let count = header_tokens(line, delim, |token, _merged| {
        if token.is_empty()
            || is_numeric(token)
            || !token.iter().any(|b| b.is_ascii_alphabetic() || *b >= 0x80)
        {
            ok = false;
        }
    });
    (ok && count > 0).then_some(count)
}

/// The names of a header line (call after [`header_column_count`] said it is one).
pub fn header_names(line: &[u8], delim: Delimiter) -> Vec<HeaderName> {
    let mut raw: Vec<String> = Vec::new();
    header_tokens(line, delim, |token, merged| {
        let text = String::from_utf8_lossy(token);
        if merged {
            if let Some(last) = raw.last_mut() {
                last.push(' ');
                last.push_str(&text);
            }
        } else {
            raw.push(text.into_owned());
        }
    });
    raw.iter().map(|t| HeaderName::from_token(t)).collect()
}

/// Splits a whitespace header on runs of two or more spaces or on tabs, for headers whose
/// names contain single spaces (`Step   Potential Energy   Kinetic En.`).
fn wide_tokens(line: &[u8]) -> Vec<&[u8]> {
    let line = trim(line);
    let mut out = Vec::new();
    let mut start = 0usize;
    let mut i = 0usize;
    while i < line.len() {
        let b = line.get(i).copied().unwrap_or(b' ');
        let next = line.get(i + 1).copied();
        let gap = b == b'\t' || (b == b' ' && next.is_some_and(|n| n == b' ' || n == b'\t'));
        if gap {
            out.push(trim(line.get(start..i).unwrap_or_default()));
            while i < line.len() && line.get(i).is_some_and(|&c| is_space(c)) {
                i += 1;
            }
            start = i;
        } else {
            i += 1;
        }
    }
    out.push(trim(line.get(start..).unwrap_or_default()));
    out.retain(|t| !t.is_empty());
    out
}

fn strip_quotes(t: &[u8]) -> &[u8] {
    match t {
        [b'"', inner @ .., b'"'] | [b'\'', inner @ .., b'\''] => inner,
        _ => t,
    }
}

/// For a whitespace header with names that contain single spaces: the number of columns
/// when splitting on runs of two or more spaces (or tabs), if that differs from the plain
/// count and every piece is a name.
pub fn wide_header_column_count(line: &[u8]) -> Option<usize> {
    let gap = line
        .windows(2)
        .any(|w| w.first() == Some(&b'\t') || w == b"  ")
        || line.last() == Some(&b'\t');
    if !gap {
        return None;
    }
    let tokens = wide_tokens(line);
    let ok = !tokens.is_empty()
        && tokens.iter().all(|t| {
            let t = strip_quotes(t);
            !t.is_empty()
                && !is_numeric(t)
                && t.iter().any(|b| b.is_ascii_alphabetic() || *b >= 0x80)
        });
    (ok).then_some(tokens.len())
}

/// The names of a wide header (see [`wide_header_column_count`]).
pub fn wide_header_names(line: &[u8]) -> Vec<HeaderName> {
    wide_tokens(line)
        .into_iter()
        .map(|t| HeaderName::from_token(&String::from_utf8_lossy(strip_quotes(t))))
        .collect()
}

#[cfg(test)]
mod tests {
    use super::*;

    fn fields(s: &str, d: Delimiter) -> Vec<String> {
        Fields::new(s.as_bytes(), d)
            .map(|f| String::from_utf8_lossy(f).into_owned())
            .collect()
    }

    #[test]
    fn split() {
        assert_eq!(fields("  1  2\t3 ", Delimiter::Whitespace), ["1", "2", "3"]);
        assert_eq!(fields("1, 2 ,3,", Delimiter::Comma), ["1", "2", "3"]);
        assert_eq!(fields("1,,3", Delimiter::Comma), ["1", "", "3"]);
        assert_eq!(fields("1\t 2\t3", Delimiter::Tab), ["1", "2", "3"]);
        assert!(fields("   ", Delimiter::Whitespace).is_empty());
    }

    #[test]
    fn headers() {
        let h = header_names(
            b"step  temperature (K)  pressure[bar] \"Total Energy (kJ/mol)\"",
            Delimiter::Whitespace,
        );
        assert_eq!(h.len(), 4);
        assert_eq!(
            h[1],
            HeaderName {
                name: "temperature".into(),
                unit: Some("K".into())
            }
        );
        assert_eq!(
            h[2],
            HeaderName {
                name: "pressure".into(),
                unit: Some("bar".into())
            }
        );
        assert_eq!(
            h[3],
            HeaderName {
                name: "Total Energy".into(),
                unit: Some("kJ/mol".into())
            }
        );
        assert_eq!(
            header_column_count(
                b"step  temperature (K)  pressure[bar] \"Total Energy (kJ/mol)\"",
                Delimiter::Whitespace
            ),
            Some(4)
        );
        assert_eq!(
            header_column_count(b"Energy (kJ mol^-1) Volume", Delimiter::Whitespace),
            Some(2)
        );
        assert_eq!(
            header_column_count(b"step 1 2", Delimiter::Whitespace),
            None
        );
        assert_eq!(
            header_column_count(b"----- ----", Delimiter::Whitespace),
            None
        );
        let c = header_names(
            b"\"Step\",\"Potential Energy (kJ/mol)\",Temperature (K)",
            Delimiter::Comma,
        );
        assert_eq!(c.len(), 3);
        assert_eq!(c[1].name, "Potential Energy");
        assert_eq!(c[2].unit.as_deref(), Some("K"));
        let w = b"  Step     Potential Energy    Kinetic En.   Temp (K)";
        assert_eq!(header_column_count(w, Delimiter::Whitespace), Some(6));
        assert_eq!(wide_header_column_count(w), Some(4));
        let names = wide_header_names(w);
        assert_eq!(names[1].name, "Potential Energy");
        assert_eq!(names[3].unit.as_deref(), Some("K"));
        assert_eq!(wide_header_column_count(b"a b c"), None);
    }
}
