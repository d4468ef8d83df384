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
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash)]
pub enum Delimiter {
    /// Runs of spaces and tabs.
    Whitespace,
    /// Commas.
    Comma,
    /// Tabs.
    Tab,
    /// Any other single character (`;`, `|`, `:`, ...), never a comma or a tab (those have
    /// their own names: see [`Delimiter::from_char`]).
    Char(char),
}

impl Delimiter {
    /// The delimiter for one character (`,` is [`Delimiter::Comma`], a tab [`Delimiter::Tab`]).
    pub fn from_char(c: char) -> Delimiter {
        match c {
            ',' => Delimiter::Comma,
            '\t' => Delimiter::Tab,
            ' ' => Delimiter::Whitespace,
            c => Delimiter::Char(c),
        }
    }

    /// Plain name: "whitespace", "comma", "tab", or the character itself (`;`).
    pub fn name(self) -> String {
        match self {
            Delimiter::Whitespace => "whitespace".to_string(),
            Delimiter::Comma => "comma".to_string(),
            Delimiter::Tab => "tab".to_string(),
            Delimiter::Char(c) => c.to_string(),
        }
    }

    /// The separator character (`None` for runs of whitespace).
    pub fn separator(self) -> Option<char> {
        match self {
            Delimiter::Whitespace => None,
            Delimiter::Comma => Some(','),
            Delimiter::Tab => Some('\t'),
            Delimiter::Char(c) => Some(c),
        }
    }

    /// How to write it after `--delimiter` on a command line (quoted when the shell needs it).
    pub fn option_value(self) -> String {
        match self {
            Delimiter::Char(c) if c.is_ascii_alphanumeric() => c.to_string(),
            Delimiter::Char('\'') => "\"'\"".to_string(),
            Delimiter::Char(c) => format!("'{c}'"),
            other => other.name(),
        }
    }
}

impl Serialize for Delimiter {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.serialize_str(&self.name())
    }
}

/// The delimiter setting: detected, or fixed.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum DelimiterChoice {
    /// Comma when the line has one, else whitespace (headers: tab when the line has one).
    /// Before a file is read, [`crate::parse::sniff::sniff_layout`] replaces it with the
    /// separator the first data lines agree on.
    #[default]
    Auto,
    /// Always whitespace.
    Whitespace,
    /// Always comma.
    Comma,
    /// Always tab.
    Tab,
    /// Always this character.
    Char(char),
}

impl DelimiterChoice {
    /// Reads a setting: `auto`, `whitespace`, `comma`, `tab`, `semicolon`, `pipe`, `colon`,
    /// `space`, or any single character.
    pub fn parse(text: &str) -> Result<DelimiterChoice, String> {
        let named = match text.to_ascii_lowercase().as_str() {
            "auto" => Some(DelimiterChoice::Auto),
            "whitespace" | "space" | "spaces" => Some(DelimiterChoice::Whitespace),
            "comma" => Some(DelimiterChoice::Comma),
            "tab" | "\\t" => Some(DelimiterChoice::Tab),
            "semicolon" => Some(DelimiterChoice::Char(';')),
            "pipe" => Some(DelimiterChoice::Char('|')),
            "colon" => Some(DelimiterChoice::Char(':')),
            _ => None,
        };
        if let Some(n) = named {
            return Ok(n);
        }
        let mut chars = text.chars();
        match (chars.next(), chars.next()) {
            (Some(c), None) if !c.is_alphanumeric() && c != '.' && c != '-' && c != '+' => {
                Ok(DelimiterChoice::fixed(Delimiter::from_char(c)))
            }
            _ => Err(format!(
                "'{text}' is not a delimiter: give auto, whitespace, comma, tab, semicolon, \
                 pipe, colon or any single character that is not a letter, digit, '.', '-' \
                 or '+'"
            )),
        }
    }

    /// The fixed setting for a delimiter.
    pub fn fixed(d: Delimiter) -> DelimiterChoice {
        match d {
            Delimiter::Whitespace => DelimiterChoice::Whitespace,
            Delimiter::Comma => DelimiterChoice::Comma,
            Delimiter::Tab => DelimiterChoice::Tab,
            Delimiter::Char(c) => DelimiterChoice::Char(c),
        }
    }

    /// Plain name: `auto`, `whitespace`, `comma`, `tab` or the character.
    pub fn name(self) -> String {
        match self {
            DelimiterChoice::Auto => "auto".to_string(),
            DelimiterChoice::Whitespace => "whitespace".to_string(),
            DelimiterChoice::Comma => "comma".to_string(),
            DelimiterChoice::Tab => "tab".to_string(),
            DelimiterChoice::Char(c) => c.to_string(),
        }
    }

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
            DelimiterChoice::Char(c) => Delimiter::Char(c),
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

impl Serialize for DelimiterChoice {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        serializer.serialize_str(&self.name())
    }
}

impl<'de> Deserialize<'de> for DelimiterChoice {
    fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
        let text = String::deserialize(deserializer)?;
        DelimiterChoice::parse(&text).map_err(serde::de::Error::custom)
    }
}

/// A separator as bytes (UTF-8), for splitting.
#[derive(Debug, Clone, Copy)]
pub struct Sep {
    bytes: [u8; 4],
    len: usize,
}

impl Sep {
    /// The separator of `delim` (`None` for whitespace).
    #[inline]
    pub fn of(delim: Delimiter) -> Option<Sep> {
        let c = delim.separator()?;
        let mut bytes = [0u8; 4];
        let len = c.encode_utf8(&mut bytes).len();
        Some(Sep { bytes, len })
    }

    /// The bytes.
    #[inline]
    pub fn bytes(&self) -> &[u8] {
        self.bytes.get(..self.len).unwrap_or_default()
    }

    /// Position of the first separator in `s`.
    #[inline]
    pub fn find(&self, s: &[u8]) -> Option<usize> {
        match self.bytes() {
            [b] => memchr::memchr(*b, s),
            many => memchr::memmem::find(s, many),
        }
    }

    /// True when `s` starts with the separator at `i`.
    #[inline]
    fn at(&self, s: &[u8], i: usize) -> bool {
        s.get(i..).is_some_and(|r| r.starts_with(self.bytes()))
    }
}

/// A line without one separator at its start and one at its end (`| 1 | 2 |`), trimmed.
#[inline]
pub fn strip_outer<'a>(line: &'a [u8], sep: &Sep) -> &'a [u8] {
    let mut rest = trim(line);
    if let Some(r) = rest.strip_prefix(sep.bytes()) {
        rest = trim(r);
    }
    if let Some(r) = rest.strip_suffix(sep.bytes()) {
        rest = trim(r);
    }
    rest
}

/// A field without the double or single quotes around it (`"1.5"`).
#[inline]
pub fn unquote(field: &[u8]) -> &[u8] {
    match field {
        [b'"', inner @ .., b'"'] | [b'\'', inner @ .., b'\''] => trim(inner),
        _ => field,
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

/// Splits a data line into fields without allocating. With a separator character, one
/// separator at the start and one at the end of the line are dropped (`| 1 | 2 |` has two
/// fields), fields are trimmed and lose quotes around them (`"1.5"`).
pub struct Fields<'a> {
    rest: &'a [u8],
    sep: Option<Sep>,
    done: bool,
}

impl<'a> Fields<'a> {
    /// Fields of `line` (already without its line ending).
    #[inline]
    pub fn new(line: &'a [u8], delim: Delimiter) -> Fields<'a> {
        let sep = Sep::of(delim);
        let rest = match &sep {
            None => trim(line),
            Some(sep) => strip_outer(line, sep),
        };
        Fields {
            rest,
            sep,
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
        match &self.sep {
            None => {
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
            Some(sep) => match sep.find(self.rest) {
                Some(i) => {
                    let field = self.rest.get(..i).unwrap_or_default();
                    self.rest = self.rest.get(i + sep.len..).unwrap_or_default();
                    Some(unquote(trim(field)))
                }
                None => {
                    self.done = true;
                    Some(unquote(trim(self.rest)))
                }
            },
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
                // `E_pot/(kJ/mol)`, `Temp_(K)`: the joining mark goes with the unit.
                let name = t
                    .get(..pos)
                    .unwrap_or("")
                    .trim()
                    .trim_end_matches(['/', '_']);
                let name = name.trim();
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
    let sep = Sep::of(delim);
    let line = match &sep {
        Some(s) => strip_outer(line, s),
        None => trim(line),
    };
    let mut i = 0usize;
    let n = line.len();
    let is_sep = |i: usize| sep.as_ref().is_some_and(|s| s.at(line, i));
    while i < n {
        // skip separators/space
        loop {
            if line.get(i).is_some_and(|&b| is_space(b)) {
                i += 1;
            } else if is_sep(i) {
                i += sep.as_ref().map_or(1, |s| s.len);
            } else {
                break;
            }
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
            while i < n && line.get(i).is_some_and(|&b| !is_space(b)) && !is_sep(i) {
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
                    Some(_) => is_sep(i),
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
        let text = decode_text(token);
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
        .map(|t| HeaderName::from_token(&decode_text(strip_quotes(t))))
        .collect()
}

/// The text of a line's bytes: UTF-8 when they are, else read as Latin-1 (a degree sign
/// written as the single byte 0xB0 reads as `°`), so no byte is lost to a replacement sign.
pub fn decode_text(bytes: &[u8]) -> std::borrow::Cow<'_, str> {
    match std::str::from_utf8(bytes) {
        Ok(s) => std::borrow::Cow::Borrowed(s),
        Err(_) => std::borrow::Cow::Owned(bytes.iter().map(|&b| char::from(b)).collect()),
    }
}

/// The UTF-8 byte-order mark.
pub const BOM: &[u8] = b"\xEF\xBB\xBF";

/// True for the first byte of a possible rule line (see [`is_rule_line`]).
#[inline]
pub fn may_start_rule(b: u8) -> bool {
    matches!(b, b'-' | b'=' | b'+' | b'*' | b'_' | b'~' | b'|' | 0xE2)
}

/// A decoration line: only `- = + * _ ~ |`, box-drawing characters (U+2500..U+257F) and
/// spaces, at least one of them not a space (`+-----+------+`, `=====`, `│ │`).
pub fn is_rule_line(t: &[u8]) -> bool {
    let mut i = 0usize;
    let mut marks = 0usize;
    while let Some(&b) = t.get(i) {
        match b {
            b'-' | b'=' | b'+' | b'*' | b'_' | b'~' | b'|' => {
                marks += 1;
                i += 1;
            }
            b' ' | b'\t' => i += 1,
            0xE2 if matches!(t.get(i + 1), Some(0x94 | 0x95))
                && t.get(i + 2).is_some_and(|c| (0x80..=0xBF).contains(c)) =>
            {
                marks += 1;
                i += 3;
            }
            _ => return false,
        }
    }
    marks > 0
}

/// Splits a units line into cells: on the separator (empty cells kept; with `outer`, one
/// separator at each end is decoration) or on whitespace outside brackets (`[kJ mol-1]` is
/// one cell).
fn unit_cells(line: &str, delim: Delimiter, (lead, trail): (bool, bool)) -> Vec<String> {
    match delim.separator() {
        Some(c) => {
            let t = line.trim_matches(|x: char| x == ' ' || (x.is_whitespace() && x != c));
            let t = if lead {
                t.strip_prefix(c).unwrap_or(t)
            } else {
                t
            };
            let t = if trail {
                t.strip_suffix(c).unwrap_or(t)
            } else {
                t
            };
            t.split(c).map(|p| p.trim().to_string()).collect()
        }
        None => {
            let mut out = Vec::new();
            let mut cur = String::new();
            let mut depth = 0i32;
            for ch in line.chars() {
                match ch {
                    '(' | '[' => depth += 1,
                    ')' | ']' => depth -= 1,
                    _ => {}
                }
                if ch.is_whitespace() && depth <= 0 {
                    if !cur.is_empty() {
                        out.push(std::mem::take(&mut cur));
                    }
                } else {
                    cur.push(ch);
                }
            }
            if !cur.is_empty() {
                out.push(cur);
            }
            out
        }
    }
}

/// If `line` is a units line (the line under a header that gives each column's unit:
/// `[K] [bar]`, `(K) (bar)`, bare `K bar`, an empty cell or `-` for a dimensionless
/// column), the unit of each cell (`None`: no unit). Every cell must be bracketed, a unit
/// plateau knows, or empty, and at least one must be bracketed or known. With a separator,
/// one at each end is read as decoration (`| [K] | [bar] |`); see [`units_fit`] for the
/// other readings.
pub fn units_line(line: &[u8], delim: Delimiter) -> Option<Vec<Option<String>>> {
    units_cells(line, delim, (true, true))
}

/// A units line read so that it has `fields` cells: a separator at an end is decoration or
/// the edge of an empty cell (`;[K];` may have three cells), whichever gives the count.
pub fn units_fit(line: &[u8], delim: Delimiter, fields: usize) -> Option<Vec<Option<String>>> {
    [(true, true), (false, false), (false, true), (true, false)]
        .into_iter()
        .filter_map(|ends| units_cells(line, delim, ends))
        .find(|cells| cells.len() == fields)
}

fn units_cells(line: &[u8], delim: Delimiter, ends: (bool, bool)) -> Option<Vec<Option<String>>> {
    let text = decode_text(line);
    let cells = unit_cells(&text, delim, ends);
    let mut strong = 0usize;
    let mut out = Vec::with_capacity(cells.len());
    for cell in &cells {
        let c = cell.trim();
        let inner = c
            .strip_prefix('[')
            .and_then(|r| r.strip_suffix(']'))
            .or_else(|| c.strip_prefix('(').and_then(|r| r.strip_suffix(')')));
        match inner {
            Some(u) => {
                strong += 1;
                let u = u.trim();
                out.push((!matches!(u, "" | "-" | "1")).then(|| u.to_string()));
            }
            None if matches!(c, "" | "-" | "1") => out.push(None),
            None if crate::units::Unit::parse(c).is_ok() && !is_numeric(c.as_bytes()) => {
                strong += 1;
                out.push(Some(c.to_string()));
            }
            None => return None,
        }
    }
    (strong > 0 && !out.is_empty()).then_some(out)
}

/// A label word ending in `:` at the start of a line (`Columns: step temp`): the bytes
/// after it, when there are any.
pub fn after_label(t: &[u8]) -> Option<&[u8]> {
    let end = t.iter().position(|&b| is_space(b))?;
    let word = t.get(..end)?;
    let label = word.strip_suffix(b":")?;
    let ok = label.first().is_some_and(u8::is_ascii_alphabetic)
        && label
            .iter()
            .all(|b| b.is_ascii_alphanumeric() || matches!(b, b'_' | b'-' | b'.'));
    ok.then(|| trim(t.get(end..).unwrap_or_default()))
        .filter(|r| !r.is_empty())
}

/// A preamble line `key = value` or `key: value`: the key and the value, trimmed. The key
/// is one to four words starting with a letter; the value is not empty.
/// A character that is the delimiter (`sep`) marks no key.
pub fn key_value(t: &[u8], sep: Option<char>) -> Option<(&[u8], &[u8])> {
    let marks = |b: u8| (b == b'=' || b == b':') && sep != Some(char::from(b));
    let at = t.iter().position(|&b| marks(b))?;
    let key = trim(t.get(..at)?);
    let mut value = t.get(at + 1..)?;
    if t.get(at) == Some(&b':') {
        // `12:30:00` is a time, not a key and value.
        if key.last().is_some_and(u8::is_ascii_digit)
            && value.first().is_some_and(u8::is_ascii_digit)
        {
            return None;
        }
        if value.first() == Some(&b'=') {
            value = value.get(1..)?; // `key := value`
        }
    }
    let value = trim(value);
    let words = key
        .split(|&b| is_space(b))
        .filter(|w| !w.is_empty())
        .count();
    let ok = key.first().is_some_and(u8::is_ascii_alphabetic)
        && key.len() <= 48
        && (1..=4).contains(&words)
        && key.iter().all(|&b| {
            b.is_ascii_alphanumeric()
                || is_space(b)
                || matches!(b, b'_' | b'-' | b'.' | b'(' | b')' | b'[' | b']' | b'/')
        })
        && !value.is_empty();
    ok.then_some((key, value))
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
