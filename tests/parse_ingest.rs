//! Whole-file reading on two threads, from a real file, equals the sequential parser.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use std::io::Write;

use plateau::error::Error;
use plateau::ingest::{read_path, read_with};
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
