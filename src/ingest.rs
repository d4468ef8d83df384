//! Reading a whole file: streamed, split on line boundaries, parsed on both cores.
//!
//! The file is read in blocks of [`BLOCK_SIZE`] bytes (never mapped whole, never written);
//! the next block is read on its own thread while the current one is parsed. The complete
//! lines of each block are cut in two at a line boundary; a scoped thread parses the second
//! half with [`parse_block_into`] while this thread parses the first half and merges it;
//! then the second half is merged ([`LogParser::apply_block`], in order).
//! The bytes after the last newline carry over to the next block; at the end of the file
//! they are the partial last line, ignored and reported (the Contract).
//!
//! The result is identical to feeding the whole file to one [`LogParser`] (tested).

use std::fs::File;
use std::io::{self, Read};
use std::path::Path;

use crate::error::Error;
use crate::parse::{parse_block_into, BlockResult, LogParser, ParseOptions};
use crate::table::RunTable;

/// Bytes read per block.
pub const BLOCK_SIZE: usize = 16 << 20;

/// Below this many bytes of complete lines a block is parsed on one thread.
const PARALLEL_MIN: usize = 256 << 10;

/// Reads and parses a whole file (`-` reads standard input to its end).
pub fn read_path(path: &Path, options: ParseOptions) -> Result<RunTable, Error> {
    let read_err = |source: io::Error| Error::Read {
        path: path.to_path_buf(),
        source,
    };
    if path.as_os_str() == "-" {
        return read_with(io::stdin(), options, BLOCK_SIZE).map_err(read_err);
    }
    let file = File::open(path).map_err(read_err)?;
    if file.metadata().map_err(read_err)?.is_dir() {
        return Err(read_err(io::Error::new(
            io::ErrorKind::InvalidInput,
            "is a folder, not a log file",
        )));
    }
    read_with(file, options, BLOCK_SIZE).map_err(read_err)
}

/// Reads `reader` to its end in blocks of `block_size` bytes and parses it on two threads.
pub fn read_with<R: Read + Send>(
    reader: R,
    options: ParseOptions,
    block_size: usize,
) -> io::Result<RunTable> {
    read_with_split(reader, options, block_size, PARALLEL_MIN)
}

/// Like [`read_with`], splitting a block over two threads once its complete lines reach
/// `parallel_min` bytes (tests use tiny values to exercise the split).
pub fn read_with_split<R: Read + Send>(
    mut reader: R,
    options: ParseOptions,
    block_size: usize,
    parallel_min: usize,
) -> io::Result<RunTable> {
    let block_size = block_size.max(1);
    let mut parser = LogParser::new(options.clone());
    let mut first = BlockResult::default();
    let mut second = BlockResult::default();
    let mut cur: Vec<u8> = vec![0; block_size];
    let n = fill(&mut reader, &mut cur)?;
    cur.truncate(n);
    let mut eof = n == 0;
    let mut next: Vec<u8> = Vec::with_capacity(block_size);
    loop {
        let complete = memchr::memrchr(b'\n', &cur).map_or(0, |i| i + 1);
        let (lines, carry) = cur.split_at(complete);
        if eof || carry.len() >= crate::parse::block::MAX_LINE {
            if !lines.is_empty() {
                parse_two(
                    lines,
                    &options,
                    &mut parser,
                    &mut first,
                    &mut second,
                    parallel_min,
                );
            }
            // The rest has no newline: the partial last line at the end of the input, or
            // an endless line that the parser counts as over-long text.
            parser.feed(carry);
            if eof {
                parser.finish();
                return Ok(parser.into_table());
            }
            return finish_by_feeding(reader, parser, &mut next);
        }
        // Read the next block on its own thread while this one is parsed.
        next.clear();
        next.extend_from_slice(carry);
        let read = std::thread::scope(|s| {
            let reading = s.spawn(|| {
                let start = next.len();
                next.resize(start + block_size, 0);
                let got = fill(&mut reader, next.get_mut(start..).unwrap_or_default());
                next.truncate(start + *got.as_ref().unwrap_or(&0));
                got
            });
            if !lines.is_empty() {
                parse_two(
                    lines,
                    &options,
                    &mut parser,
                    &mut first,
                    &mut second,
                    parallel_min,
                );
            }
            reading.join()
        });
        let got = read.map_err(|_| io::Error::other("the reading thread failed"))??;
        eof = got == 0;
        std::mem::swap(&mut cur, &mut next);
    }
}

fn finish_by_feeding<R: Read>(
    mut reader: R,
    mut parser: LogParser,
    buf: &mut Vec<u8>,
) -> io::Result<RunTable> {
    buf.resize(BLOCK_SIZE.min(1 << 20), 0);
    loop {
        let n = match reader.read(buf) {
            Ok(n) => n,
            Err(e) if e.kind() == io::ErrorKind::Interrupted => continue,
            Err(e) => return Err(e),
        };
        if n == 0 {
            break;
        }
        parser.feed(buf.get(..n).unwrap_or_default());
    }
    parser.finish();
    Ok(parser.into_table())
}

/// Reads until `buf` is full or the input ends.
fn fill<R: Read>(reader: &mut R, buf: &mut [u8]) -> io::Result<usize> {
    let mut filled = 0;
    while filled < buf.len() {
        match reader.read(buf.get_mut(filled..).unwrap_or_default()) {
            Ok(0) => break,
            Ok(n) => filled += n,
            Err(e) if e.kind() == io::ErrorKind::Interrupted => {}
            Err(e) => return Err(e),
        }
    }
    Ok(filled)
}

/// Parses complete lines on two threads (split at a line boundary, the first part about
/// 44 % of the bytes) and merges in order.
fn parse_two(
    lines: &[u8],
    options: &ParseOptions,
    parser: &mut LogParser,
    first: &mut BlockResult,
    second: &mut BlockResult,
    parallel_min: usize,
) {
    // This thread parses the first part and then merges both, so it gets a little less
    // than half: parse cost p and merge cost about 0.3·p per byte balance at 0.44.
    let cut = lines.len() / 25 * 11;
    let mid = if lines.len() >= parallel_min.max(2) {
        lines
            .get(cut..)
            .and_then(|r| memchr::memchr(b'\n', r))
            .map(|i| cut + i + 1)
    } else {
        None
    };
    match mid {
        Some(mid) if mid < lines.len() => {
            let (a, b) = lines.split_at(mid);
            let joined = std::thread::scope(|s| {
                let handle = s.spawn(|| {
                    parse_block_into(b, options, second);
                });
                parse_block_into(a, options, first);
                parser.apply_block(first);
                handle.join().is_ok()
            });
            if !joined {
                // The worker has no panicking paths, but if it failed, parse the half here
                // rather than lose it.
                parse_block_into(b, options, second);
            }
            parser.apply_block(second);
        }
        _ => {
            parse_block_into(lines, options, first);
            parser.apply_block(first);
        }
    }
}
