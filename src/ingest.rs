//! Reading a whole file: streamed in blocks, parsed on both cores, merged in order.
//!
//! Two worker threads take turns at the reader: each claims the next block of
//! [`BLOCK_SIZE`] bytes (the bytes after the last newline of the previous block carry over
//! to the front of it), reads it into its own buffer and parses its complete lines with
//! [`parse_block_into`] while the block is still in that core's cache. This thread merges
//! the parsed blocks in file order ([`LogParser::apply_block`]) as they arrive, so merging
//! block k overlaps with parsing blocks k + 1 and k + 2. At most [`IN_FLIGHT`] parsed
//! blocks wait to be merged (memory stays bounded whatever the file size).
//!
//! The columns are reserved once from the file size and the rows per byte of the first
//! block, so they do not grow by doubling; what is not used is given back at the end.
//!
//! At the end of the input, the bytes after the last newline are the partial last line,
//! ignored and reported (the Contract). A line longer than [`MAX_LINE`] without a newline
//! stops the workers; the rest is fed to the parser on this thread.
//!
//! The result is identical to feeding the whole file to one [`LogParser`] (tested).

use std::collections::BTreeMap;
use std::fs::File;
use std::io::{self, Read};
use std::path::{Path, PathBuf};
use std::sync::{mpsc, Mutex};

use crate::error::Error;
use crate::parse::block::MAX_LINE;
use crate::parse::{parse_block_into, BlockResult, LogParser, ParseOptions};
use crate::table::RunTable;

/// Bytes read per block: small enough that a block and its parsed values stay in a core's
/// cache between reading and parsing.
pub const BLOCK_SIZE: usize = 1 << 20;

/// Worker threads that read and parse blocks.
pub const WORKERS: usize = 2;

/// Parsed blocks that may wait to be merged.
const IN_FLIGHT: usize = 2 * WORKERS + 2;

/// Reads and parses a whole file (`-` reads standard input to its end).
pub fn read_path(path: &Path, options: ParseOptions) -> Result<RunTable, Error> {
    read_path_observed(path, options, &mut |_, _| {})
}

/// As [`read_path`], calling `observe(bytes read so far, the file's size when known)`
/// after every read of the input (from the reading threads; a progress line).
pub fn read_path_observed(
    path: &Path,
    options: ParseOptions,
    observe: &mut (dyn FnMut(u64, Option<u64>) + Send),
) -> Result<RunTable, Error> {
    open_input(path, 0)?.read_observed(options, observe)
}

/// An input opened once, with its first bytes already read: a named pipe or a device can
/// be read only once, so whatever looks at the start of a log (guessing a row tag) looks
/// at these bytes, and [`OpenInput::read`] reads them again from memory before the rest.
pub struct OpenInput {
    path: PathBuf,
    start: Vec<u8>,
    /// `None` for standard input.
    file: Option<File>,
    /// The size of a regular file (to reserve the columns once).
    size: Option<u64>,
}

/// Opens `path` (`-`: standard input) and reads up to `start_bytes` of it. A folder is
/// refused with a message naming it.
pub fn open_input(path: &Path, start_bytes: u64) -> Result<OpenInput, Error> {
    let read_err = |source: io::Error| Error::Read {
        path: path.to_path_buf(),
        source,
    };
    if path.as_os_str() == "-" {
        let mut start = Vec::new();
        io::stdin()
            .take(start_bytes)
            .read_to_end(&mut start)
            .map_err(read_err)?;
        return Ok(OpenInput {
            path: path.to_path_buf(),
            start,
            file: None,
            size: None,
        });
    }
    let file = File::open(path).map_err(read_err)?;
    let meta = file.metadata().map_err(read_err)?;
    if meta.is_dir() {
        return Err(read_err(io::Error::new(
            io::ErrorKind::InvalidInput,
            "is a folder, not a log file",
        )));
    }
    let mut start = Vec::new();
    (&file)
        .take(start_bytes)
        .read_to_end(&mut start)
        .map_err(read_err)?;
    Ok(OpenInput {
        path: path.to_path_buf(),
        start,
        file: Some(file),
        size: meta.is_file().then_some(meta.len()),
    })
}

impl OpenInput {
    /// The first bytes read by [`open_input`].
    pub fn start(&self) -> &[u8] {
        &self.start
    }

    /// Reads and parses the whole input: the bytes already read, then the rest to its end.
    pub fn read(self, options: ParseOptions) -> Result<RunTable, Error> {
        self.read_observed(options, &mut |_, _| {})
    }

    /// As [`OpenInput::read`], calling `observe(bytes read so far, the size when known)`
    /// after every read (the bytes read first count when they are given again).
    pub fn read_observed(
        self,
        options: ParseOptions,
        observe: &mut (dyn FnMut(u64, Option<u64>) + Send),
    ) -> Result<RunTable, Error> {
        let OpenInput {
            path,
            start,
            file,
            size,
        } = self;
        let result = match file {
            None => read_with(
                Observed::new(io::Cursor::new(start).chain(io::stdin()), None, observe),
                options,
                BLOCK_SIZE,
            ),
            Some(file) => read_blocks(
                Observed::new(io::Cursor::new(start).chain(file), size, observe),
                options,
                BLOCK_SIZE,
                WORKERS,
                size,
            ),
        };
        result.map_err(|source| Error::Read { path, source })
    }
}

/// A reader that tells an observer how many bytes it has given so far.
struct Observed<'a, R> {
    inner: R,
    read: u64,
    total: Option<u64>,
    observe: &'a mut (dyn FnMut(u64, Option<u64>) + Send),
}

impl<'a, R> Observed<'a, R> {
    fn new(
        inner: R,
        total: Option<u64>,
        observe: &'a mut (dyn FnMut(u64, Option<u64>) + Send),
    ) -> Self {
        Observed {
            inner,
            read: 0,
            total,
            observe,
        }
    }
}

impl<R: Read> Read for Observed<'_, R> {
    fn read(&mut self, buf: &mut [u8]) -> io::Result<usize> {
        let n = self.inner.read(buf)?;
        self.read += n as u64;
        (self.observe)(self.read, self.total);
        Ok(n)
    }
}

/// Reads `reader` to its end in blocks of `block_size` bytes and parses it on two threads.
pub fn read_with<R: Read + Send>(
    reader: R,
    options: ParseOptions,
    block_size: usize,
) -> io::Result<RunTable> {
    read_blocks(reader, options, block_size, WORKERS, None)
}

/// Like [`read_with`] with `workers` reading and parsing threads (at least one), and the
/// input size when known (to reserve the columns once).
pub fn read_blocks<R: Read + Send>(
    reader: R,
    options: ParseOptions,
    block_size: usize,
    workers: usize,
    size_hint: Option<u64>,
) -> io::Result<RunTable> {
    let block_size = block_size.max(1);
    let source = Mutex::new(Source {
        reader,
        carry: Vec::new(),
        next_seq: 0,
        end: None,
    });
    let mut parser = LogParser::new(options.clone());
    let (done_tx, done_rx) = mpsc::channel::<(u64, BlockResult)>();
    let (free_tx, free_rx) = mpsc::channel::<BlockResult>();
    for _ in 0..IN_FLIGHT {
        // Cannot fail: the receiver is alive.
        let _ = free_tx.send(BlockResult::default());
    }
    let free_rx = Mutex::new(free_rx);
    let mut merged_all = true;
    std::thread::scope(|s| {
        for _ in 0..workers.max(1) {
            let done_tx = done_tx.clone();
            let (source, free_rx, options) = (&source, &free_rx, &options);
            s.spawn(move || work(source, free_rx, &done_tx, options, block_size));
        }
        drop(done_tx);
        let mut waiting: BTreeMap<u64, BlockResult> = BTreeMap::new();
        let mut next = 0u64;
        let mut reserved = false;
        for (seq, block) in done_rx.iter() {
            waiting.insert(seq, block);
            while let Some(block) = waiting.remove(&next) {
                parser.apply_block(&block);
                if !reserved {
                    reserved = reserve(&mut parser, &block, size_hint);
                }
                next += 1;
                // Fails only once every worker has stopped: nothing more to recycle.
                let _ = free_tx.send(block);
            }
        }
        // A worker that failed leaves a gap: the blocks after it cannot be merged.
        merged_all = waiting.is_empty();
    });
    let source = source
        .into_inner()
        .map_err(|_| io::Error::other("a reading thread failed"))?;
    if !merged_all {
        return Err(io::Error::other("a parsing thread failed"));
    }
    let Source {
        reader, carry, end, ..
    } = source;
    match end {
        Some(End::Error(e)) => Err(e),
        Some(End::Overlong) => {
            parser.feed(&carry);
            finish_by_feeding(reader, parser)
        }
        Some(End::Input) | None => {
            parser.feed(&carry);
            parser.finish();
            Ok(finished(parser))
        }
    }
}

/// The shared reader and what carries over between blocks.
struct Source<R> {
    reader: R,
    /// Bytes after the last newline read so far.
    carry: Vec<u8>,
    next_seq: u64,
    end: Option<End>,
}

/// Why the workers stopped.
enum End {
    /// The input ended; `carry` is the partial last line.
    Input,
    /// `carry` reached [`MAX_LINE`] bytes without a newline: the rest is fed on one thread.
    Overlong,
    /// Reading failed.
    Error(io::Error),
}

impl<R: Read> Source<R> {
    /// Reads the next block into `buf` (carry first): its sequence number and the length of
    /// its complete lines, or `None` once the input has ended (or cannot go on in blocks).
    fn claim(&mut self, buf: &mut Vec<u8>, block_size: usize) -> Option<(u64, usize)> {
        if self.end.is_some() {
            return None;
        }
        // The buffer keeps its length from block to block: zeroed once, not every block.
        let mut filled = self.carry.len();
        grow(buf, filled + block_size);
        buf.get_mut(..filled)?.copy_from_slice(&self.carry);
        loop {
            grow(buf, filled + block_size);
            let room = buf.get_mut(filled..filled + block_size)?;
            let got = match fill(&mut self.reader, room) {
                Ok(got) => got,
                Err(e) => {
                    self.end = Some(End::Error(e));
                    return None;
                }
            };
            filled += got;
            let data = buf.get(..filled)?;
            let complete = crate::parse::endings::complete_len_strict(data);
            if got == 0 {
                self.end = Some(End::Input);
            } else if filled - complete >= MAX_LINE {
                self.end = Some(End::Overlong);
            } else if complete == 0 {
                continue; // no complete line yet: read on
            }
            self.carry.clear();
            self.carry.extend_from_slice(data.get(complete..)?);
            if complete == 0 {
                return None;
            }
            let seq = self.next_seq;
            self.next_seq += 1;
            return Some((seq, complete));
        }
    }
}

/// Makes `buf` at least `len` bytes long.
fn grow(buf: &mut Vec<u8>, len: usize) {
    if buf.len() < len {
        buf.resize(len, 0);
    }
}

/// A worker: claims blocks and parses them until the input ends.
fn work<R: Read>(
    source: &Mutex<Source<R>>,
    free: &Mutex<mpsc::Receiver<BlockResult>>,
    done: &mpsc::Sender<(u64, BlockResult)>,
    options: &ParseOptions,
    block_size: usize,
) {
    let mut buf: Vec<u8> = Vec::new();
    loop {
        // A parsed-block buffer first, so that at most IN_FLIGHT blocks are ever claimed
        // and not yet merged.
        let Ok(mut block) = free
            .lock()
            .map_err(drop)
            .and_then(|f| f.recv().map_err(drop))
        else {
            return;
        };
        let claimed = match source.lock() {
            Ok(mut src) => src.claim(&mut buf, block_size),
            Err(_) => return,
        };
        let Some((seq, len)) = claimed else {
            return;
        };
        parse_block_into(buf.get(..len).unwrap_or_default(), options, &mut block);
        if done.send((seq, block)).is_err() {
            return;
        }
    }
}

/// After the first block: reserves the rows the whole input will probably hold, from its
/// size and the first block's rows per byte. True once done (or not possible).
fn reserve(parser: &mut LogParser, block: &BlockResult, size_hint: Option<u64>) -> bool {
    let Some(size) = size_hint else {
        return true;
    };
    let rows = block.candidate_rows() as u64;
    if rows == 0 || block.bytes == 0 {
        return false; // no rows yet (a header block): try the next block
    }
    // A little over the estimate: reserved room that is never written is never touched.
    let bytes = block.bytes.max(1);
    let estimate = size / bytes * rows + size % bytes * rows / bytes;
    let estimate = estimate + estimate / 16 + 1024;
    parser.reserve_rows(usize::try_from(estimate).unwrap_or(0));
    true
}

/// The table, with unused reserved room given back.
fn finished(parser: LogParser) -> RunTable {
    let mut table = parser.into_table();
    for seg in &mut table.segments {
        seg.shrink_to_fit();
    }
    table
}

fn finish_by_feeding<R: Read>(mut reader: R, mut parser: LogParser) -> io::Result<RunTable> {
    let mut buf = vec![0u8; 1 << 20];
    loop {
        let n = match reader.read(&mut buf) {
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
    Ok(finished(parser))
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
