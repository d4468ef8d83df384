//! Guessing a row tag from the start of a log, when the user gave none.
//!
//! Chatty logs mark their data rows with a leading word (`DATA 1000 300.2 ...`) among lines
//! of free text. [`sniff_row_tag`] looks at the first lines: when the rows that start with one
//! and the same word followed only by numbers are at least [`MIN_TAGGED_ROWS`] and
//! outnumber the plain numeric rows, that word is the row tag. The user's `--row-tag`
//! always wins; `plateau columns` shows a guessed tag as guessed.

use super::block::record_fields;
use super::endings;
use super::layout::{is_rule_line, is_space, trim, Delimiter, DelimiterChoice, Fields, BOM};
use super::number::is_numeric;
use super::{ParseOptions, RecordKind, Records};

/// How many tagged rows make a tag (fewer could be a coincidence of free text).
pub const MIN_TAGGED_ROWS: usize = 3;
/// How many lines are looked at.
pub const SNIFF_LINES: usize = 2000;
/// How many bytes of a file are looked at.
pub const SNIFF_BYTES: usize = 256 * 1024;

/// The row tag the start of a log suggests, if any.
pub fn sniff_row_tag(start: &[u8]) -> Option<String> {
    let mut counts: Vec<(Vec<u8>, usize)> = Vec::new();
    let mut plain_rows = 0usize;
    for line in start.split(|&b| b == b'\n').take(SNIFF_LINES) {
        let mut fields = line
            .split(|&b| b == b' ' || b == b'\t' || b == b',' || b == b'\r')
            .filter(|f| !f.is_empty());
        let Some(first) = fields.next() else {
            continue;
        };
        if is_numeric(first) {
            plain_rows += 1;
            continue;
        }
        let word = first.strip_suffix(b":").unwrap_or(first);
        let is_word = word.first().is_some_and(u8::is_ascii_alphabetic)
            && word
                .iter()
                .all(|b| b.is_ascii_alphanumeric() || *b == b'_' || *b == b'-');
        if !is_word {
            continue;
        }
        let mut numbers = 0usize;
        let mut all_numeric = true;
        for field in fields {
            if is_numeric(field) {
                numbers += 1;
            } else {
                all_numeric = false;
                break;
            }
        }
        if !all_numeric || numbers < 2 {
            continue;
        }
        match counts.iter_mut().find(|(w, _)| w.as_slice() == word) {
            Some((_, n)) => *n += 1,
            None => counts.push((word.to_vec(), 1)),
        }
    }
    let (word, n) = counts.into_iter().max_by_key(|(_, n)| *n)?;
    (n >= MIN_TAGGED_ROWS && n > plain_rows)
        .then(|| String::from_utf8(word).ok())
        .flatten()
}

/// What the start of a log says about its layout (see [`sniff_layout`]).
#[derive(Debug, Clone, Default, PartialEq)]
pub struct LayoutGuess {
    /// The separator the data lines agree on, when it is not whitespace or a comma (those
    /// the per-line reading handles by itself).
    pub delimiter: Option<Delimiter>,
    /// All delimiters tried, with how many of the first data lines each split into one
    /// consistent number of numeric fields (best first).
    pub scores: Vec<(Delimiter, usize)>,
    /// The row tag, when the user gave none and the data lines carry one.
    pub row_tag: Option<String>,
    /// Fields per data line under the chosen delimiter (0: no data lines found).
    pub fields: usize,
    /// Data-like lines looked at.
    pub data_lines: usize,
    /// A comment prefix that is the delimiter too (a row may start with it): dropped.
    pub drop_comment: Option<String>,
    /// The leading word most data-like lines start with, and on how many, even when too
    /// few to be taken as the row tag (for the hint `columns` gives).
    pub tag_candidate: Option<(String, usize)>,
    /// Rows that carry their own names, when most data-like lines are such rows.
    pub records: Option<Records>,
}

/// Data lines looked at when choosing a delimiter.
const DELIMITER_LINES: usize = 200;

/// The non-empty runs of `[A-Za-z0-9.+-]` in `s`, when every one reads as a number (a line of
/// numbers, whatever separates them): their count.
fn numeric_runs(s: &[u8]) -> Option<usize> {
    let mut n = 0usize;
    for run in s
        .split(|b| !(b.is_ascii_alphanumeric() || matches!(b, b'.' | b'+' | b'-')))
        .filter(|r| !r.is_empty())
    {
        if !is_numeric(run) {
            return None;
        }
        n += 1;
    }
    (n > 0).then_some(n)
}

/// A leading tag word (`DATA`, `thermo:`) followed by numbers: the word.
fn tag_word(t: &[u8]) -> Option<&[u8]> {
    let end = t
        .iter()
        .position(|b| !(b.is_ascii_alphanumeric() || matches!(b, b'_' | b'-')))
        .unwrap_or(t.len());
    let word = t.get(..end)?;
    if !word.first().is_some_and(u8::is_ascii_alphabetic) || is_numeric(word) {
        return None;
    }
    let rest = t.get(end..)?;
    // The word must end where the numbers' separators begin (`DATA 1 2`, `DATA;1;2`).
    if rest.first().is_some_and(u8::is_ascii_alphanumeric) {
        return None;
    }
    let rest = rest.strip_prefix(b":").unwrap_or(rest);
    (numeric_runs(rest)? >= 2).then_some(word)
}

/// Punctuation glued before the numbers (`>1 2 3`, `@@ 1 2`): the prefix, when it does not
/// occur again in the line (then it is a separator, as in `| 1 | 2 |`).
fn glued_prefix(t: &[u8]) -> Option<&[u8]> {
    let end = t
        .iter()
        .position(|b| {
            b.is_ascii_alphanumeric()
                || is_space(*b)
                || matches!(b, b'.' | b'+' | b'-' | b'"' | b'\'')
        })
        .unwrap_or(t.len());
    let p = t.get(..end).filter(|p| !p.is_empty() && p.len() <= 4)?;
    let rest = t.get(end..)?;
    if memchr::memmem::find(rest, p).is_some() || p.iter().any(|&b| b >= 0x80) {
        return None;
    }
    (numeric_runs(rest)? >= 1).then_some(p)
}

/// The candidate separators of a data line: every character that is not a letter, a digit,
/// part of a number, a quote or a space.
fn separators(t: &[u8], out: &mut Vec<char>) {
    let text = String::from_utf8_lossy(t);
    for c in text.chars() {
        if c.is_alphanumeric()
            || c.is_whitespace()
            || matches!(c, '.' | '+' | '-' | '"' | '\'' | '\u{FFFD}')
        {
            continue;
        }
        if !out.contains(&c) {
            out.push(c);
        }
    }
}

/// How many of `payloads` split on `d` into all-numeric fields (at least two), counted for
/// the most common field count: (lines, fields).
fn score(payloads: &[&[u8]], d: Delimiter) -> (usize, usize) {
    let mut counts: Vec<(usize, usize)> = Vec::new();
    for p in payloads {
        let mut n = 0usize;
        let mut ok = true;
        for f in Fields::new(p, d) {
            if !is_numeric(f) {
                ok = false;
                break;
            }
            n += 1;
        }
        if ok && n >= 2 {
            match counts.iter_mut().find(|(k, _)| *k == n) {
                Some((_, c)) => *c += 1,
                None => counts.push((n, 1)),
            }
        }
    }
    counts
        .into_iter()
        .max_by_key(|&(k, c)| (c, k))
        .map_or((0, 0), |(k, c)| (c, k))
}

/// Reads the layout from the start of a log: the row tag (unless given) and the separator
/// the data lines agree on. Only complete lines are looked at (any line ending).
///
/// Data lines are the lines whose characters outside letters, digits and number signs all
/// separate numbers (`1;2.5;3`, `| 1 | 2 |`, `DATA 1 2`). A tag is a leading word (or
/// punctuation glued to the first number) that starts at least [`MIN_TAGGED_ROWS`] data
/// lines and more than start with a number. The delimiter is, among runs of whitespace and
/// every other character found in the data lines, the one that splits the most of the first
/// [`DELIMITER_LINES`] data lines into one consistent number (two or more) of numbers, after
/// dropping a separator at the start and at the end of a line; whitespace and the comma win
/// ties.
pub fn sniff_layout(start: &[u8], options: &ParseOptions) -> LayoutGuess {
    let complete = start
        .get(..endings::complete_len(start))
        .unwrap_or_default();
    let mut lines: Vec<&[u8]> = Vec::new();
    endings::for_each_line(complete, |l| {
        if lines.len() < SNIFF_LINES {
            lines.push(l);
        }
    });
    let mut guess = LayoutGuess::default();
    let is_comment = |t: &[u8]| {
        options
            .comment_prefixes
            .iter()
            .any(|p| !p.is_empty() && t.starts_with(p.as_bytes()))
    };
    // Rows that carry their own names.
    if options.records.is_none() && options.row_tag.is_none() {
        guess.records = sniff_records(&lines);
        if guess.records.is_some() {
            return guess;
        }
    }
    // Row tag.
    let mut tag = options.row_tag.clone();
    if tag.is_none() {
        let mut words: Vec<(Vec<u8>, usize)> = Vec::new();
        let mut plain = 0usize;
        for &l in &lines {
            let t = clean(l);
            if t.is_empty() || is_rule_line(t) {
                continue;
            }
            let word = tag_word(t).or_else(|| glued_prefix(t).filter(|p| !is_comment(p)));
            match word {
                Some(w) => match words.iter_mut().find(|(x, _)| x.as_slice() == w) {
                    Some((_, n)) => *n += 1,
                    None => words.push((w.to_vec(), 1)),
                },
                None if !is_comment(t) && numeric_runs(t).is_some_and(|n| n >= 2) => plain += 1,
                None => {}
            }
        }
        if let Some((w, n)) = words.into_iter().max_by_key(|(_, n)| *n) {
            if n >= MIN_TAGGED_ROWS && n > plain {
                tag = String::from_utf8(w.clone()).ok();
            }
            guess.tag_candidate = String::from_utf8(w).ok().map(|w| (w, n));
        }
    }
    // Data payloads (tag dropped).
    let mut payloads: Vec<&[u8]> = Vec::new();
    let mut commented: Vec<&[u8]> = Vec::new();
    for &l in &lines {
        if payloads.len() >= DELIMITER_LINES {
            break;
        }
        let t = clean(l);
        if t.is_empty() || is_rule_line(t) {
            continue;
        }
        let p = match &tag {
            Some(tag) => match t.strip_prefix(tag.as_bytes()) {
                Some(rest) => {
                    let glued = tag
                        .bytes()
                        .last()
                        .is_some_and(|b| !b.is_ascii_alphanumeric());
                    if !glued && rest.first().is_some_and(|b| b.is_ascii_alphanumeric()) {
                        continue;
                    }
                    let rest = trim(rest);
                    rest.strip_prefix(b":").map_or(rest, trim)
                }
                None => continue,
            },
            None => t,
        };
        if numeric_runs(p).is_none_or(|n| n < 2) {
            continue;
        }
        if is_comment(t) && tag.is_none() {
            commented.push(p);
        } else {
            payloads.push(p);
        }
    }
    if payloads.is_empty() {
        // Every data line starts with a comment prefix: the prefix may be the separator
        // (`;1;2;3`).
        payloads = commented;
    }
    guess.data_lines = payloads.len();
    let mut cands: Vec<char> = Vec::new();
    for p in &payloads {
        separators(p, &mut cands);
        if cands.len() > 32 {
            break;
        }
    }
    let mut scores: Vec<(Delimiter, usize, usize)> = Vec::new();
    for d in [Delimiter::Whitespace, Delimiter::Comma]
        .into_iter()
        .chain(cands.iter().map(|&c| Delimiter::from_char(c)))
    {
        if scores.iter().any(|(x, _, _)| *x == d) {
            continue;
        }
        let (lines, fields) = score(&payloads, d);
        scores.push((d, lines, fields));
    }
    // Stable sort: whitespace and comma stay first among equals.
    scores.sort_by_key(|s| std::cmp::Reverse(s.1));
    if let Some(&(d, n, fields)) = scores.first() {
        if n > 0 {
            guess.fields = fields;
            if !matches!(d, Delimiter::Whitespace | Delimiter::Comma) {
                guess.delimiter = Some(d);
                let sep = d.name();
                if options.comment_prefixes.contains(&sep) {
                    guess.drop_comment = Some(sep);
                }
            }
        }
    }
    guess.scores = scores.into_iter().map(|(d, n, _)| (d, n)).collect();
    if options.row_tag.is_none() {
        guess.row_tag = tag;
    }
    guess
}

/// Rows that carry their own names, if at least [`MIN_TAGGED_ROWS`] lines are such rows
/// and they outnumber the plain rows of numbers: the kind and the names in order of first
/// appearance.
fn sniff_records(lines: &[&[u8]]) -> Option<Records> {
    let mut json = 0usize;
    let mut pairs = 0usize;
    let mut plain = 0usize;
    let mut json_names: Vec<String> = Vec::new();
    let mut pair_names: Vec<String> = Vec::new();
    for &l in lines {
        let t = clean(l);
        if t.first() == Some(&b'{') {
            let mut any = false;
            record_fields(t, RecordKind::Json, |name, _| {
                any = true;
                let name = super::layout::decode_text(name);
                if !json_names.iter().any(|n| *n == name) {
                    json_names.push(name.into_owned());
                }
            });
            json += usize::from(any);
            continue;
        }
        let mut found = 0usize;
        let mut names: Vec<String> = Vec::new();
        record_fields(t, RecordKind::Pairs, |name, _| {
            found += 1;
            names.push(super::layout::decode_text(name).into_owned());
        });
        if found >= 2 {
            pairs += 1;
            for n in names {
                if !pair_names.contains(&n) {
                    pair_names.push(n);
                }
            }
        } else if numeric_runs(t).is_some_and(|n| n >= 2) {
            plain += 1;
        }
    }
    let (kind, n, names) = if json >= pairs {
        (RecordKind::Json, json, json_names)
    } else {
        (RecordKind::Pairs, pairs, pair_names)
    };
    (n >= MIN_TAGGED_ROWS && n > plain && !names.is_empty()).then_some(Records { kind, names })
}

/// A line without a byte-order mark and surrounding spaces.
fn clean(l: &[u8]) -> &[u8] {
    trim(l.strip_prefix(BOM).unwrap_or(l))
}

impl LayoutGuess {
    /// Applies the guess to options the user left open (`auto` delimiter, no row tag).
    pub fn apply(&self, options: &mut ParseOptions) {
        if options.delimiter == DelimiterChoice::Auto {
            if let Some(d) = self.delimiter {
                options.delimiter = DelimiterChoice::fixed(d);
                if let Some(c) = &self.drop_comment {
                    options.comment_prefixes.retain(|p| p != c);
                }
            }
        }
        if options.row_tag.is_none() {
            options.row_tag.clone_from(&self.row_tag);
        }
        if options.records.is_none() && options.row_tag.is_none() {
            options.records.clone_from(&self.records);
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn finds_the_tag_of_a_chatty_log() {
        let log = b"run started\nsetting up 3000 atoms\nDATA step temp press\n\
DATA 0 300.1 1.0\nnote: something\nDATA 500 301.2 -3.0\nDATA 1000 299.7 2.5\n";
        assert_eq!(sniff_row_tag(log).as_deref(), Some("DATA"));
    }

    #[test]
    fn accepts_a_colon_after_the_tag() {
        let log = b"thermo: 1 2 3\nthermo: 2 3 4\ntext line\nthermo: 3 4 5\n";
        assert_eq!(sniff_row_tag(log).as_deref(), Some("thermo"));
    }

    #[test]
    fn plain_tables_have_no_tag() {
        let log =
            b"# step temp\n0 300\n1 301\n2 302\nwarning 1 2\nwarning 2 3\nwarning 3 4\n3 303\n";
        assert_eq!(sniff_row_tag(log), None);
    }

    #[test]
    fn too_few_tagged_lines_are_a_coincidence() {
        let log = b"Step 1 of 2\nStep 2 of 2\nfree text\nLoop 10 20\nLoop 30 40\n";
        assert_eq!(sniff_row_tag(log), None);
    }
}
