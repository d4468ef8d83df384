//! Whole-file reading on two threads, from a real file, equals the sequential parser.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use std::io::Write;

use plateau::error::Error;
use plateau::ingest::{read_blocks, read_path, read_path_observed, read_with};
use plateau::parse::{parse_bytes, ParseOptions};

/// An invented 4-column log of about 3 MB with a restart, chatter and a bad row in it.
fn generate() -> Vec<u8> {
    let mut s = String::from("# step temp press etot\n");
    for step in 0..60_000u32 {
        s.push_str(&format!(
            "{step} {:.3} {:.4} {:.5}\n",
            300.0 + (step % 7) as f64,
            (step % 13) as f64 - 6.0,
            -1.0e4 - step as f64 * 1e-3
        ));
        if step == 30_000 {
            s.push_str("WARNING: restarting from checkpoint\n# step temp press etot\n");
            for back in 29_000..29_500u32 {
                s.push_str(&format!("{back} 310.0 1.0 -1.0e4\n"));
            }
            s.push_str("29500 7 7\n");
        }
    }
    s.push_str("60000 300");
    s.into_bytes()
}

#[test]
fn file_read_on_two_threads_equals_sequential() {
    let bytes = generate();
    let mut f = tempfile::NamedTempFile::new().unwrap();
    f.write_all(&bytes).unwrap();
    f.flush().unwrap();
    let whole = parse_bytes(&bytes, ParseOptions::default());
    let read = read_path(f.path(), ParseOptions::default()).unwrap();
    assert_eq!(format!("{whole:?}"), format!("{read:?}"));
    // Small blocks: many block boundaries, each block split over two threads.
    let small = read_with(&bytes[..], ParseOptions::default(), 300 << 10).unwrap();
    assert_eq!(format!("{whole:?}"), format!("{small:?}"));
    // What the table holds (the restart at step 29000 replaced steps 29000..=30000).
    let s = &read.segments[0];
    assert_eq!(s.restarts.len(), 1);
    assert_eq!(s.restarts[0].rows_replaced, 1001);
    // 29000 rows before the restart, 500 after it, then steps 30001..=59999.
    assert_eq!(s.rows(), 29_000 + 500 + 29_999);
    assert_eq!(read.skipped_count, 1);
    assert!(read.partial_line.is_some());
}

#[test]
fn the_observer_sees_every_byte_read_in_order_and_the_same_table() {
    let bytes = generate();
    let mut f = tempfile::NamedTempFile::new().unwrap();
    f.write_all(&bytes).unwrap();
    f.flush().unwrap();
    let mut seen: Vec<(u64, Option<u64>)> = Vec::new();
    let read = read_path_observed(f.path(), ParseOptions::default(), &mut |n, total| {
        seen.push((n, total));
    })
    .unwrap();
    let plain = read_path(f.path(), ParseOptions::default()).unwrap();
    assert_eq!(format!("{plain:?}"), format!("{read:?}"));
    let size = bytes.len() as u64;
    // Counts grow (the reading threads take turns under one lock), end at the file's size,
    // and every call knows the size; a 3 MB file takes several reads of 1 MiB blocks.
    assert!(seen.len() >= 3, "{seen:?}");
    assert!(seen.windows(2).all(|w| w[0].0 <= w[1].0), "{seen:?}");
    assert_eq!(seen.last().map(|s| s.0), Some(size));
    assert!(seen.iter().all(|s| s.1 == Some(size)));
}

#[test]
fn unreadable_paths_are_named() {
    let err = read_path(
        std::path::Path::new("/no/such/dir/run.log"),
        ParseOptions::default(),
    )
    .unwrap_err();
    assert!(matches!(err, Error::Read { .. }));
    assert!(err.to_string().contains("/no/such/dir/run.log"));
    let dir = tempfile::tempdir().unwrap();
    let err = read_path(dir.path(), ParseOptions::default()).unwrap_err();
    assert!(err.to_string().contains("folder"));
}

/// Line numbers kept as runs: rows of consecutive lines share one run; skipped, blank,
/// comment and text lines, headers and restarts start new ones, and every row still maps to
/// its own line (and back), whatever the block size and thread count.
#[test]
fn line_numbers_across_restarts_gaps_and_segments() {
    let mut log = String::from("# step temp press\n");
    for step in 0..400u32 {
        log.push_str(&format!("{step} {}.5 1.0\n", 300 + step % 5));
        log.push_str(match step {
            50 => "\n",
            60 => "# checkpoint written\n",
            70 => "70 300 abc\n", // skipped: not a number
            80 => "NOTE: neighbour list rebuilt\n",
            90 => "80 301 ****\r\n", // a restart to step 80, with an overflow field
            _ => "",
        });
    }
    // A second segment with another column.
    log.push_str("# step temp press volume\n");
    for step in 400..450u32 {
        log.push_str(&format!("{step} 300 1.0 27.{}\n", step % 10));
    }
    let text = log;
    let whole = parse_bytes(text.as_bytes(), ParseOptions::default());
    assert_eq!(whole.segments.len(), 2);
    let second = &whole.segments[1];
    assert_eq!(second.lines.runs(), 1);
    assert_eq!(second.lines.first(), second.header_line.map(|h| h + 1));
    assert_eq!(second.lines.last(), Some(text.lines().count() as u64));
    let seg = &whole.segments[0];
    assert_eq!(seg.restarts.len(), 1);
    let restart = seg.restarts[0];
    let steps = &seg.columns[0];
    let lines = seg.lines.to_vec();
    assert_eq!(lines.len(), seg.rows());
    assert_eq!(steps.values().len(), seg.rows());
    let row = seg.lines.row_at_or_after(restart.line);
    assert_eq!(seg.lines.get(row), Some(restart.line));
    assert_eq!(steps.values()[row], 80.0);
    assert_eq!(steps.values()[row - 1], 79.0);
    // Lines strictly increase and every row's line holds that row.
    let all: Vec<&str> = text.lines().collect();
    for (r, &l) in lines.iter().enumerate() {
        let fields: Vec<&str> = all[(l - 1) as usize].split_whitespace().collect();
        assert_eq!(
            fields[0].parse::<f64>().unwrap(),
            steps.values()[r],
            "row {r}"
        );
        assert_eq!(seg.lines.row_at_or_after(l), r);
    }
    assert!(lines.windows(2).all(|w| w[0] < w[1]));
    // Few runs: one per gap, not one per row.
    assert!(seg.lines.runs() <= 8, "{} runs", seg.lines.runs());
    for block in [7, 64, 1000, 1 << 20] {
        for workers in [1, 2, 3] {
            let size = Some(text.len() as u64);
            let read = read_blocks(
                text.as_bytes(),
                ParseOptions::default(),
                block,
                workers,
                size,
            )
            .unwrap();
            assert_eq!(format!("{whole:?}"), format!("{read:?}"), "block {block}");
        }
    }
}
