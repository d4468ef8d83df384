//! Guessing a row tag from the start of a log, when the user gave none.
//!
//! Chatty logs mark their data rows with a leading word (`DATA 1000 300.2 ...`) among lines
//! of free text. [`sniff_row_tag`] looks at the first lines: when the rows that start with one
//! and the same word followed only by numbers are at least [`MIN_TAGGED_ROWS`] and
//! outnumber the plain numeric rows, that word is the row tag. The user's `--row-tag`
//! always wins; `plateau columns` shows a guessed tag as guessed.

use super::number::is_numeric;

/// How many tagged rows make a tag (fewer could be a coincidence of free text).
pub const MIN_TAGGED_ROWS: usize = 3;
/// How many lines are looked at.
pub const SNIFF_LINES: usize = 2000;

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
