//! A 100 MB line without a newline among the rows of a log: `report` reads past it in
//! bounded memory (lines longer than 1 MiB are not kept: counted as free text and named
//! in a warning by line), the rows before and after it are all there, and the peak
//! resident memory of the process stays far below the line's size (not O(line) per
//! column). Its own test binary, so that the peak memory of the children it waits for is
//! this run's (`getrusage(RUSAGE_CHILDREN)`, POSIX). No timing is asserted.

#![cfg(target_os = "linux")]
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::io::Write;
use std::time::Duration;

use assert_cmd::Command;

const LINE_BYTES: usize = 100 * 1000 * 1000;

fn rows(range: std::ops::Range<u32>) -> String {
    range
        .map(|i| {
            let t = 300.0 + f64::from((i * 7919) % 13) * 0.1;
            format!("{i} {}.0 {t:.2}\n", i * 2)
        })
        .collect()
}

#[test]
fn a_100_mb_line_is_passed_in_bounded_memory() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("long.log");
    {
        let mut f = std::io::BufWriter::new(std::fs::File::create(&path).unwrap());
        f.write_all(b"step time(ps) temperature(K)\n").unwrap();
        f.write_all(rows(0..500).as_bytes()).unwrap();
        // Digits and blanks: it looks like data until it ends.
        let piece = b"1234.5678 ".repeat(100_000);
        let mut left = LINE_BYTES;
        while left > 0 {
            let n = left.min(piece.len());
            f.write_all(&piece[..n]).unwrap();
            left -= n;
        }
        f.write_all(b"\n").unwrap();
        f.write_all(rows(500..1000).as_bytes()).unwrap();
    }
    let out = Command::cargo_bin("plateau")
        .unwrap()
        .args(["report", "--format", "json"])
        .arg(&path)
        .timeout(Duration::from_secs(600))
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(report["rows"], 1000, "the rows on both sides");
    assert_eq!(report["free_text_lines"], 1, "the long line");

    let out = Command::cargo_bin("plateau")
        .unwrap()
        .args(["columns"])
        .arg(&path)
        .timeout(Duration::from_secs(600))
        .output()
        .unwrap();
    let text = String::from_utf8_lossy(&out.stdout);
    assert!(
        text.contains("longer than 1 MiB") && text.contains("line 502"),
        "{text}"
    );

    // SAFETY: a zeroed rusage filled in by getrusage.
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    assert_eq!(
        unsafe { libc::getrusage(libc::RUSAGE_CHILDREN, &mut usage) },
        0
    );
    let peak_mib = usage.ru_maxrss as f64 / 1024.0; // KiB on Linux (getrusage(2))
    eprintln!("peak resident memory of plateau: {peak_mib:.0} MiB");
    assert!(
        peak_mib < 64.0,
        "peak {peak_mib:.0} MiB for a {} MB line",
        LINE_BYTES / 1_000_000
    );
}
