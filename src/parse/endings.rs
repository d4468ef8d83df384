//! Line endings: `\n`, `\r\n` and a lone `\r` each end one line, also mixed in one input.
//!
//! A `\r` that is the last byte seen so far ends its line at once (a row written by a program
//! that ends lines with `\r` is not held back); if the next bytes then begin with `\n`, that
//! `\n` completes the same `\r\n` ending and is dropped by the reader that saw the `\r`
//! (each reader keeps a "skip a leading `\n`" flag). Whole-file block readers, which can wait,
//! use [`complete_len_strict`] instead, so that no block starts inside a `\r\n`.

/// True for `\n` and `\r`.
#[inline]
pub fn is_end(b: u8) -> bool {
    b == b'\n' || b == b'\r'
}

/// Bytes of `chunk` up to and including its last line ending (0 when it has none).
#[inline]
pub fn complete_len(chunk: &[u8]) -> usize {
    memchr::memrchr2(b'\n', b'\r', chunk).map_or(0, |i| i + 1)
}

/// Like [`complete_len`], but a `\r` that is the very last byte does not end its line yet (a
/// `\n` may follow in the next read).
#[inline]
pub fn complete_len_strict(chunk: &[u8]) -> usize {
    match memchr::memrchr2(b'\n', b'\r', chunk) {
        Some(i) if i + 1 == chunk.len() && chunk.get(i) == Some(&b'\r') => {
            let head = chunk.get(..i).unwrap_or_default();
            match memchr::memrchr2(b'\n', b'\r', head) {
                // "\r\r": the first one ends a line.
                Some(j) => j + 1,
                None => 0,
            }
        }
        Some(i) => i + 1,
        None => 0,
    }
}

/// The end (after its line ending, a `\r\n` taken whole) of the first line of `chunk`.
#[inline]
pub fn first_end(chunk: &[u8]) -> Option<usize> {
    let i = memchr::memchr2(b'\n', b'\r', chunk)?;
    if chunk.get(i) == Some(&b'\r') && chunk.get(i + 1) == Some(&b'\n') {
        Some(i + 2)
    } else {
        Some(i + 1)
    }
}

/// Line endings in `bytes` (`\r\n` counts once).
#[inline]
pub fn count_lines(bytes: &[u8]) -> u64 {
    let lf = memchr::memchr_iter(b'\n', bytes).count() as u64;
    if memchr::memchr(b'\r', bytes).is_none() {
        return lf;
    }
    let lone_cr = memchr::memchr_iter(b'\r', bytes)
        .filter(|&i| bytes.get(i + 1) != Some(&b'\n'))
        .count() as u64;
    lf + lone_cr
}

/// Calls `f` with each complete line of `bytes`, without its ending; returns the bytes used
/// (up to and including the last ending).
#[inline]
pub fn for_each_line<'a>(bytes: &'a [u8], mut f: impl FnMut(&'a [u8])) -> usize {
    let mut start = 0usize;
    if memchr::memchr(b'\r', bytes).is_none() {
        for nl in memchr::memchr_iter(b'\n', bytes) {
            f(bytes.get(start..nl).unwrap_or_default());
            start = nl + 1;
        }
        return start;
    }
    for at in memchr::memchr2_iter(b'\n', b'\r', bytes) {
        if at < start {
            continue; // the `\n` of a `\r\n`
        }
        f(bytes.get(start..at).unwrap_or_default());
        start = if bytes.get(at) == Some(&b'\r') && bytes.get(at + 1) == Some(&b'\n') {
            at + 2
        } else {
            at + 1
        };
    }
    start
}

#[cfg(test)]
mod tests {
    use super::*;

    fn lines(s: &[u8]) -> Vec<String> {
        let mut v = Vec::new();
        for_each_line(s, |l| v.push(String::from_utf8_lossy(l).into_owned()));
        v
    }

    #[test]
    fn every_ending_ends_one_line() {
        assert_eq!(
            lines(b"a\nb\r\nc\rd\r\r\ne\n"),
            ["a", "b", "c", "d", "", "e"]
        );
        assert_eq!(count_lines(b"a\nb\r\nc\rd\r\r\ne\n"), 6);
        assert_eq!(complete_len(b"a\rb"), 2);
        assert_eq!(complete_len(b"a\rb\r"), 4);
        assert_eq!(complete_len_strict(b"a\rb\r"), 2);
        assert_eq!(complete_len_strict(b"a\r\r"), 2);
        assert_eq!(complete_len_strict(b"a\r\n"), 3);
        assert_eq!(first_end(b"ab\r\ncd"), Some(4));
        assert_eq!(first_end(b"ab\r"), Some(3));
        assert_eq!(first_end(b"ab"), None);
    }
}
