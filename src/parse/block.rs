//! The first stage: classify and parse the complete lines of a block, independently of any
//! other block (so blocks can be parsed on several cores).
//!
//! [`parse_block`] needs only the options (delimiter, comment prefixes, row tag), never the
//! state of the run: it does not know the header in force. It records, in line order, each
//! line's kind: a row of numbers (values kept row-major in one buffer), a header candidate
//! (its text kept), a skipped data-like line, free text, a comment or a blank line. Line
//! numbers are relative to the block; [`super::LogParser::apply_block`] applies the items in
//! order and decides headers, segments, field counts and restarts.

use super::layout::{
    after_label, header_column_count, header_names, is_rule_line, is_space, key_value,
    may_start_rule, trim, units_line, wide_header_column_count, Delimiter, DelimiterChoice, Fields,
    Sep, BOM,
};
use super::number::{parse_field, parse_plain, Field};
use super::{ParseOptions, RecordKind, Records};

/// Longest field text kept for a skip reason.
const REASON_TEXT: usize = 32;

/// Why a line of a block was skipped (before the merge knows the header).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum BlockSkip {
    /// Field `field` (0-based) is not a number; its text is in `text[start..start+len]`.
    NotANumber {
        field: u32,
        start: usize,
        len: usize,
    },
    /// A tagged line that is neither numbers nor a header.
    TaggedNotData,
}

/// One classified line of a block (`line` is 0-based within the block).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub(crate) enum Item {
    /// A row of `fields` numbers (in `values`), `overflows` of them `****` (in `overflow_fields`).
    Row {
        line: u64,
        fields: u32,
        delim: Delimiter,
        overflows: u32,
    },
    /// A line that may be a header naming `columns` columns; its text is `text[start..start+len]`.
    Candidate {
        line: u64,
        start: usize,
        len: usize,
        columns: u32,
        /// Columns when split on runs of two or more spaces (0: not such a header).
        wide_columns: u32,
        delim: Delimiter,
        commented: bool,
        /// A units line (`[K] [bar]`): `columns` cells, each a unit or empty.
        units: bool,
    },
    /// A `key = value` / `key: value` line: key `text[start..start+key]`, value
    /// `text[start+key..start+len]`.
    Meta {
        line: u64,
        start: usize,
        key: usize,
        len: usize,
    },
    /// A decoration (rule) line.
    Rule { line: u64 },
    /// A data-like line that failed.
    Skipped { line: u64, why: BlockSkip },
    /// Free text.
    Text { line: u64 },
    /// A comment that is not a header.
    Comment { line: u64 },
    /// An empty line.
    Blank { line: u64 },
    /// A line too long to keep (over 1 MiB): counted as free text.
    Overlong { line: u64 },
}

/// The result of [`parse_block`]: items in line order plus their data.
#[derive(Debug, Clone, Default, PartialEq)]
pub struct BlockResult {
    pub(crate) items: Vec<Item>,
    pub(crate) values: Vec<f64>,
    pub(crate) overflow_fields: Vec<u32>,
    pub(crate) text: Vec<u8>,
    /// Fields of every row when all rows have that many and no `****` (0: no rows yet,
    /// [`MIXED`]: rows differ).
    pub(crate) uniform: u32,
    /// When rows are uniform: the same values by field (`by_field[f * rows + r]`), so the
    /// merge copies each column from one contiguous slice.
    pub(crate) by_field: Vec<f64>,
    /// Complete lines in the block.
    pub lines: u64,
    /// Bytes of the complete lines.
    pub bytes: u64,
    /// Names with a number in a self-named row that are not among the record names (first
    /// seen after the layout was set), with the block line each was first seen on; at most
    /// [`crate::table::LATER_NAMES_KEPT`].
    pub(crate) later_names: Vec<(String, u64)>,
}

impl BlockResult {
    /// Empties the result, keeping its allocations.
    pub fn clear(&mut self) {
        self.items.clear();
        self.values.clear();
        self.overflow_fields.clear();
        self.text.clear();
        self.uniform = 0;
        self.by_field.clear();
        self.lines = 0;
        self.bytes = 0;
        self.later_names.clear();
    }

    /// Rows of numbers found (before the merge checks their field counts).
    pub fn candidate_rows(&self) -> usize {
        self.items
            .iter()
            .filter(|i| matches!(i, Item::Row { .. }))
            .count()
    }
}

/// Parses the complete lines of `bytes` (everything up to and including its last line
/// ending: `\n`, `\r\n` or a lone `\r`, see [`super::endings`]).
/// Returns the number of bytes consumed; bytes after the last newline are not looked at.
pub fn parse_block(bytes: &[u8], options: &ParseOptions) -> (BlockResult, usize) {
    let mut out = BlockResult::default();
    let used = parse_block_into(bytes, options, &mut out);
    (out, used)
}

/// Like [`parse_block`], reusing `out`'s allocations.
pub fn parse_block_into(bytes: &[u8], options: &ParseOptions, out: &mut BlockResult) -> usize {
    out.clear();
    let mut firsts = [false; 256];
    for p in &options.comment_prefixes {
        if let Some(&b) = p.as_bytes().first() {
            if let Some(slot) = firsts.get_mut(usize::from(b)) {
                *slot = true;
            }
        }
    }
    let mut line = 0u64;
    let start = super::endings::for_each_line(bytes, |text| {
        classify(text, line, options, &firsts, out);
        line += 1;
    });
    out.lines = line;
    out.bytes = start as u64;
    out.transpose();
    start
}

/// [`BlockResult::uniform`] when rows have different field counts or `****` fields.
pub(crate) const MIXED: u32 = u32::MAX;

impl BlockResult {
    /// Notes a row of `fields` fields for [`BlockResult::uniform`].
    #[inline]
    fn note_row(&mut self, fields: u32, overflows: u32) {
        if overflows > 0 {
            self.uniform = MIXED;
        } else if self.uniform == 0 {
            self.uniform = fields;
        } else if self.uniform != fields {
            self.uniform = MIXED;
        }
    }

    /// Fills [`BlockResult::by_field`] when the rows are uniform (done on the parsing thread,
    /// while the values are still in its cache).
    fn transpose(&mut self) {
        self.by_field.clear();
        if self.uniform == 0 || self.uniform == MIXED {
            return;
        }
        let n = self.uniform as usize;
        self.by_field.reserve(self.values.len());
        for f in 0..n {
            let column = self.values.get(f..).unwrap_or_default().iter().step_by(n);
            self.by_field.extend(column);
        }
    }

    /// Rows `start..start + count` (row indices of this block), when uniform.
    pub(crate) fn field_slice(&self, field: usize, start: usize, count: usize) -> &[f64] {
        let n = self.uniform as usize;
        let rows = self.values.len().checked_div(n).unwrap_or(0);
        let from = field * rows + start;
        self.by_field.get(from..from + count).unwrap_or_default()
    }
}

/// Lines longer than this are not parsed (counted as free text).
pub const MAX_LINE: usize = 1 << 20;

#[inline]
fn classify(
    raw: &[u8],
    line: u64,
    options: &ParseOptions,
    comment_firsts: &[bool; 256],
    out: &mut BlockResult,
) {
    if raw.len() > MAX_LINE {
        out.items.push(Item::Overlong { line });
        return;
    }
    let mut raw = match raw {
        [head @ .., b'\r'] => head,
        _ => raw,
    };
    if raw.first() == Some(&0xEF) {
        raw = raw.strip_prefix(BOM).unwrap_or(raw);
    }
    let t = trim(raw);
    // Without spaces but with its tabs, for a tab-separated units line.
    let keep = trim_spaces(raw);
    let Some(&first) = t.first() else {
        out.items.push(Item::Blank { line });
        return;
    };
    if may_start_rule(first) && is_rule_line(t) {
        out.items.push(Item::Rule { line });
        return;
    }
    let maybe_comment = comment_firsts
        .get(usize::from(first))
        .copied()
        .unwrap_or(false);
    for prefix in options.comment_prefixes.iter().filter(|_| maybe_comment) {
        if let Some(rest) = t.strip_prefix(prefix.as_bytes()) {
            if !prefix.is_empty() {
                let kept = keep.strip_prefix(prefix.as_bytes()).map(trim_spaces);
                if !candidate(rest, kept, line, true, options, out) {
                    out.items.push(Item::Comment { line });
                }
                return;
            }
        }
    }
    if let Some(records) = &options.records {
        if !record_row(t, line, records, out)
            && !candidate(t, Some(keep), line, false, options, out)
            && !meta(t, line, options, out)
        {
            out.items.push(Item::Text { line });
        }
        return;
    }
    if let Some(tag) = &options.row_tag {
        let tag = tag.as_bytes();
        let sep = Sep::of(options.delimiter.for_data(t));
        let sep_first = sep.as_ref().and_then(|s| s.bytes().first().copied());
        let glued = tag.last().is_some_and(|b| !b.is_ascii_alphanumeric());
        let (tagged, rest) = if glued {
            // A tag of punctuation may be glued to the numbers (`>12 300.5`).
            match t.strip_prefix(tag) {
                Some(rest) => (true, rest),
                None => (false, t),
            }
        } else {
            let end = t
                .iter()
                .position(|&b| b == b' ' || b == b'\t' || b == b',' || Some(b) == sep_first)
                .unwrap_or(t.len());
            let (first, rest) = t.split_at(end);
            let tagged = first == tag
                || (first.len() == tag.len() + 1
                    && first.starts_with(tag)
                    && first.last() == Some(&b':'));
            (tagged, rest)
        };
        if !tagged {
            if !candidate(t, Some(keep), line, false, options, out) && !meta(t, line, options, out)
            {
                out.items.push(Item::Text { line });
            }
            return;
        }
        // The same with its tabs (a tab-separated units line behind the tag): one tab after
        // the tag separates it from the first cell.
        let kept = keep
            .get(t.len() - rest.len()..)
            .filter(|_| {
                keep.len() >= t.len()
                    && keep.starts_with(t.get(..t.len() - rest.len()).unwrap_or_default())
            })
            .map(|r| r.strip_prefix(b":").unwrap_or(r))
            .map(|r| {
                if glued {
                    r
                } else {
                    r.strip_prefix(b"\t").unwrap_or(r)
                }
            });
        let rest = trim(rest);
        let rest = if sep_first == Some(b':') {
            rest
        } else {
            rest.strip_prefix(b":").unwrap_or(rest)
        };
        let unstripped = rest;
        // One separator between the tag and the first cell: a second one starts an empty
        // cell (the blank first cell of a units line, `DATA,,(K),`).
        let rest = match &sep {
            Some(s) if !glued && s.bytes() != b"," => {
                let rest = rest.strip_prefix(b",").unwrap_or(rest);
                rest.strip_prefix(s.bytes()).unwrap_or(rest)
            }
            _ => rest.strip_prefix(b",").unwrap_or(rest),
        };
        match data(rest, line, options, out) {
            DataOutcome::Done => {}
            DataOutcome::NotData => {
                // Behind a tag glued to the row (`>, , [K]`) a separator starts the first,
                // empty, cell of a units line.
                let units_first_empty = glued
                    && unstripped.len() > rest.len()
                    && super::layout::units_line(
                        unstripped,
                        options.delimiter.for_header(unstripped),
                    )
                    .is_some();
                let text = if units_first_empty { unstripped } else { rest };
                if !candidate(text, kept, line, false, options, out) {
                    out.items.push(Item::Skipped {
                        line,
                        why: BlockSkip::TaggedNotData,
                    });
                }
            }
        }
        return;
    }
    match data(t, line, options, out) {
        DataOutcome::Done => {}
        DataOutcome::NotData => {
            if !candidate(t, Some(keep), line, false, options, out) && !meta(t, line, options, out)
            {
                out.items.push(Item::Text { line });
            }
        }
    }
}

/// Calls `f` with each name and numeric value of a row that carries its own names
/// (`kind`). Values that are not numbers (text, `true`, lists) are left out.
pub(crate) fn record_fields(t: &[u8], kind: RecordKind, mut f: impl FnMut(&[u8], f64)) {
    match kind {
        RecordKind::Json => {
            let Ok(Ordered(map)) = serde_json::from_slice::<Ordered>(t) else {
                return;
            };
            for (k, v) in &map {
                match v {
                    serde_json::Value::Object(inner) => {
                        for (k2, v2) in inner {
                            if let Some(x) = json_number(v2) {
                                f(format!("{k}.{k2}").as_bytes(), x);
                            }
                        }
                    }
                    other => {
                        if let Some(x) = json_number(other) {
                            f(k.as_bytes(), x);
                        }
                    }
                }
            }
        }
        RecordKind::Pairs => {
            let stop = |b: u8| is_space(b) || matches!(b, b',' | b';' | b'|');
            let mut i = 0usize;
            while i < t.len() {
                while t.get(i).is_some_and(|&b| stop(b)) {
                    i += 1;
                }
                let start = i;
                while t.get(i).is_some_and(|&b| !stop(b) && b != b'=') {
                    i += 1;
                }
                let name = t.get(start..i).unwrap_or_default();
                if name.is_empty() {
                    i += 1; // a lone `=`
                    continue;
                }
                let mut j = i;
                while t.get(j).is_some_and(|&b| is_space(b)) {
                    j += 1;
                }
                if t.get(j) != Some(&b'=') {
                    continue; // a word that is not a pair (a tag, free text)
                }
                j += 1;
                while t.get(j).is_some_and(|&b| is_space(b)) {
                    j += 1;
                }
                let vstart = j;
                while t.get(j).is_some_and(|&b| !stop(b)) {
                    j += 1;
                }
                i = j;
                let value = super::layout::unquote(t.get(vstart..j).unwrap_or_default());
                if let Field::Value(x) = parse_field(value) {
                    f(name, x);
                }
            }
        }
    }
}

/// A JSON object's entries in the order written.
struct Ordered(Vec<(String, serde_json::Value)>);

impl<'de> serde::Deserialize<'de> for Ordered {
    fn deserialize<D: serde::Deserializer<'de>>(d: D) -> Result<Ordered, D::Error> {
        struct Entries;
        impl<'de> serde::de::Visitor<'de> for Entries {
            type Value = Ordered;
            fn expecting(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
                f.write_str("a JSON object")
            }
            fn visit_map<A: serde::de::MapAccess<'de>>(
                self,
                mut m: A,
            ) -> Result<Ordered, A::Error> {
                let mut out = Vec::new();
                while let Some(entry) = m.next_entry::<String, serde_json::Value>()? {
                    out.push(entry);
                }
                Ok(Ordered(out))
            }
        }
        d.deserialize_map(Entries)
    }
}

fn json_number(v: &serde_json::Value) -> Option<f64> {
    match v {
        serde_json::Value::Number(n) => n.as_f64(),
        serde_json::Value::String(s) => match parse_field(s.trim().as_bytes()) {
            Field::Value(x) => Some(x),
            _ => None,
        },
        _ => None,
    }
}

/// Records `t` as a row if it carries values for the record names; false when it holds no
/// number under any of them (free text, an object of text).
fn record_row(t: &[u8], line: u64, records: &Records, out: &mut BlockResult) -> bool {
    let n = records.names.len();
    let start = out.values.len();
    out.values.resize(start + n, crate::table::ABSENT);
    let mut found = 0usize;
    let mut unknown: Vec<String> = Vec::new();
    record_fields(t, records.kind, |name, x| {
        match records.names.iter().position(|c| c.as_bytes() == name) {
            Some(k) => {
                if let Some(slot) = out.values.get_mut(start + k) {
                    *slot = x;
                    found += 1;
                }
            }
            None => unknown.push(String::from_utf8_lossy(name).into_owned()),
        }
    });
    if found == 0 {
        out.values.truncate(start);
        return false;
    }
    for name in unknown {
        if out.later_names.len() < crate::table::LATER_NAMES_KEPT
            && !out.later_names.iter().any(|(n, _)| *n == name)
        {
            out.later_names.push((name, line));
        }
    }
    let fields = u32::try_from(n).unwrap_or(u32::MAX);
    out.note_row(fields, 0);
    out.items.push(Item::Row {
        line,
        fields,
        delim: Delimiter::Whitespace,
        overflows: 0,
    });
    true
}

/// `s` without spaces (only) at both ends.
fn trim_spaces(s: &[u8]) -> &[u8] {
    let a = s.iter().position(|&b| b != b' ').unwrap_or(s.len());
    let b = s.iter().rposition(|&b| b != b' ').map_or(a, |b| b + 1);
    s.get(a..b).unwrap_or_default()
}

/// Records `t` as a preamble line if it reads as `key = value` or `key: value`.
fn meta(t: &[u8], line: u64, options: &ParseOptions, out: &mut BlockResult) -> bool {
    let sep = options.delimiter.for_data(t).separator();
    let Some((key, value)) = key_value(t, sep) else {
        return false;
    };
    let start = out.text.len();
    out.text.extend_from_slice(key);
    out.text.extend_from_slice(value);
    out.items.push(Item::Meta {
        line,
        start,
        key: key.len(),
        len: key.len() + value.len(),
    });
    true
}

enum DataOutcome {
    /// A row or a skipped data-like line was recorded.
    Done,
    /// The first field is not a number: not a data line.
    NotData,
}

#[inline]
fn data(payload: &[u8], line: u64, options: &ParseOptions, out: &mut BlockResult) -> DataOutcome {
    let values_start = out.values.len();
    let overflow_start = out.overflow_fields.len();
    let auto = options.delimiter == DelimiterChoice::Auto;
    // `auto` picks commas when the line has one. Whitespace is tried first without looking:
    // a line read to its end that way has no comma (no number form holds one), so the scan
    // for a comma is needed only when the row stopped early.
    let mut delim = if auto {
        Delimiter::Whitespace
    } else {
        options.delimiter.for_data(payload)
    };
    let mut fields = 0u32;
    let mut failed: Option<&[u8]> = None;
    if delim == Delimiter::Whitespace {
        let whole;
        (fields, failed, whole) = whitespace_row(payload, options, out);
        if auto && !whole && memchr::memchr(b',', payload).is_some() {
            out.values.truncate(values_start);
            out.overflow_fields.truncate(overflow_start);
            (fields, failed) = (0, None);
            delim = Delimiter::Comma;
        }
    }
    if delim != Delimiter::Whitespace {
        for field in Fields::new(payload, delim) {
            if !take(out, parse_field(field), fields) {
                if fields > 0 && starts_comment(field, options) {
                    break; // a trailing comment ends the row
                }
                failed = Some(field);
                break;
            }
            fields += 1;
        }
    }
    if let Some(field) = failed {
        out.values.truncate(values_start);
        out.overflow_fields.truncate(overflow_start);
        if fields == 0 {
            return DataOutcome::NotData;
        }
        let start = out.text.len();
        let cut = field.len().min(REASON_TEXT);
        out.text
            .extend_from_slice(field.get(..cut).unwrap_or_default());
        out.items.push(Item::Skipped {
            line,
            why: BlockSkip::NotANumber {
                field: fields,
                start,
                len: cut,
            },
        });
        return DataOutcome::Done;
    }
    if fields == 0 {
        return DataOutcome::NotData;
    }
    let overflows = u32::try_from(out.overflow_fields.len() - overflow_start).unwrap_or(u32::MAX);
    out.note_row(fields, overflows);
    out.items.push(Item::Row {
        line,
        fields,
        delim,
        overflows,
    });
    DataOutcome::Done
}

/// Splits and parses a whitespace-separated row in one pass: the fast float parser finds the
/// end of the number itself; anything else (D exponents, `****`, text) takes the slow path on
/// the whole field. Returns the fields taken, the field that is not a number (if any), and
/// whether the row was read to its end (no field failed, no trailing comment).
#[inline]
fn whitespace_row<'a>(
    payload: &'a [u8],
    options: &ParseOptions,
    out: &mut BlockResult,
) -> (u32, Option<&'a [u8]>, bool) {
    let mut fields = 0u32;
    let mut rest = trim(payload);
    while !rest.is_empty() {
        let (field, parsed, next) = if let Some((v, n)) = parse_plain(rest) {
            (rest.get(..n).unwrap_or_default(), Field::Value(v), n)
        } else {
            match fast_float2::parse_partial::<f64, _>(rest) {
                Ok((v, n)) if rest.get(n).is_none_or(|&b| is_space(b)) => {
                    (rest.get(..n).unwrap_or_default(), Field::Value(v), n)
                }
                _ => {
                    let end = rest.iter().position(|&b| is_space(b)).unwrap_or(rest.len());
                    let f = rest.get(..end).unwrap_or_default();
                    (f, parse_field(f), end)
                }
            }
        };
        if !take(out, parsed, fields) {
            if fields > 0 && starts_comment(field, options) {
                return (fields, None, false); // a trailing comment ends the row
            }
            return (fields, Some(field), false);
        }
        fields += 1;
        rest = rest.get(next..).unwrap_or_default();
        let skip = rest
            .iter()
            .position(|&b| !is_space(b))
            .unwrap_or(rest.len());
        rest = rest.get(skip..).unwrap_or_default();
    }
    (fields, None, true)
}

/// True when a field starts with a comment prefix (a comment at the end of a row).
#[cold]
fn starts_comment(field: &[u8], options: &ParseOptions) -> bool {
    options
        .comment_prefixes
        .iter()
        .any(|p| !p.is_empty() && field.starts_with(p.as_bytes()))
}

/// Stores a parsed field; false when it is not a number.
#[inline]
fn take(out: &mut BlockResult, parsed: Field, index: u32) -> bool {
    match parsed {
        Field::Value(v) => out.values.push(v),
        Field::Overflow => {
            out.values.push(f64::NAN);
            out.overflow_fields.push(index);
        }
        Field::Invalid => return false,
    }
    true
}

/// Records `text` as a header candidate if it looks like one: a line of names, the same
/// behind a label word ending in `:` (when one of its names reads as a role), or a units
/// line.
fn candidate(
    text: &[u8],
    keep: Option<&[u8]>,
    line: u64,
    commented: bool,
    options: &ParseOptions,
    out: &mut BlockResult,
) -> bool {
    let text = super::layout::trim(text);
    // A units line keeps its tabs at both ends (empty cells of a tab-separated table).
    let spaced = keep
        .filter(|k| options.delimiter.for_header(k) == Delimiter::Tab)
        .unwrap_or(text);
    let delim = options.delimiter.for_header(spaced);
    if let Some(cells) = units_line(spaced, delim) {
        push_candidate(
            spaced,
            line,
            (cells.len(), 0),
            delim,
            (commented, true),
            out,
        );
        return true;
    }
    if let Some(rest) = after_label(text).filter(|_| delim.separator() != Some(':')) {
        let d = options.delimiter.for_header(rest);
        if let Some(columns) = header_column_count(rest, d) {
            let named = header_names(rest, d)
                .iter()
                .any(|n| crate::mapping::guess_role(&n.name).is_some());
            if named {
                push_candidate(rest, line, (columns, 0), d, (commented, false), out);
                return true;
            }
        }
    }
    let columns = header_column_count(text, delim);
    let wide = if delim == Delimiter::Whitespace {
        wide_header_column_count(text).filter(|&w| Some(w) != columns)
    } else {
        None
    };
    if columns.is_none() && wide.is_none() {
        return false;
    }
    // `key = value` and `title: water box` are preamble lines, not headers (a header
    // behind a label was taken above).
    if key_value(text, delim.separator()).is_some() {
        return false;
    }
    push_candidate(
        text,
        line,
        (columns.unwrap_or(0), wide.unwrap_or(0)),
        delim,
        (commented, false),
        out,
    );
    true
}

fn push_candidate(
    text: &[u8],
    line: u64,
    (columns, wide): (usize, usize),
    delim: Delimiter,
    (commented, units): (bool, bool),
    out: &mut BlockResult,
) {
    let start = out.text.len();
    out.text.extend_from_slice(text);
    out.items.push(Item::Candidate {
        line,
        start,
        len: text.len(),
        columns: u32::try_from(columns).unwrap_or(u32::MAX),
        wide_columns: u32::try_from(wide).unwrap_or(u32::MAX),
        delim,
        commented,
        units,
    });
}

#[cfg(test)]
mod tests {
    use super::*;
    use proptest::prelude::*;

    fn number() -> impl Strategy<Value = String> {
        (
            prop_oneof![Just(""), Just("-"), Just("+")],
            "[0-9]{1,19}",
            proptest::option::of("[0-9]{0,12}"),
            proptest::option::of(-30i32..30),
        )
            .prop_map(|(sign, int, frac, exp)| {
                let mut s = format!("{sign}{int}");
                if let Some(f) = frac {
                    s.push('.');
                    s.push_str(&f);
                }
                if let Some(e) = exp {
                    s.push_str(&format!("e{e}"));
                }
                s
            })
    }

    proptest! {
        #![proptest_config(ProptestConfig::with_cases(256))]
        /// Every field of whitespace rows reads as `str::parse::<f64>` (the reference) reads
        /// it, bit for bit, whatever separates the fields and ends the line, including the
        /// last line of the block where no full window fits.
        #[test]
        fn whitespace_rows_match_std(
            rows in prop::collection::vec(prop::collection::vec(number(), 4), 1..6),
            gaps in prop::collection::vec(prop_oneof![Just(" "), Just("\t"), Just("   "), Just(" \t ")], 4),
            ending in prop_oneof![Just("\n"), Just("\r\n"), Just(" \n"), Just("\t\r\n")],
        ) {
            let mut log = String::new();
            for row in &rows {
                for (field, gap) in row.iter().zip(&gaps) {
                    log.push_str(gap);
                    log.push_str(field);
                }
                log.push_str(ending);
            }
            let (block, used) = parse_block(log.as_bytes(), &ParseOptions::default());
            prop_assert_eq!(used, log.len());
            let want: Vec<u64> = rows.iter().flatten().map(|f| f.parse::<f64>().unwrap().to_bits()).collect();
            let got: Vec<u64> = block.values.iter().map(|v| v.to_bits()).collect();
            prop_assert_eq!(got, want);
            prop_assert_eq!(block.uniform, 4);
        }
    }
}
