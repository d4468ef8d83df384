//! Ten million rows (a 250 MB log): `report` reads every row, its means agree with the
//! values written (summed here independently, Kahan-compensated), and the peak resident
//! memory of the process stays within a small multiple of the values it must hold
//! (3 columns × 10⁷ rows × 8 bytes = 240 MB). Its own test binary, so that the peak
//! memory of the children it waits for is this run's (`getrusage(RUSAGE_CHILDREN)`,
//! POSIX). No timing is asserted; the speed is measured in BENCHMARKS.md.

#![cfg(target_os = "linux")]
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::io::Write;
use std::time::Duration;

use assert_cmd::Command;

const ROWS: u64 = 10_000_000;

/// The temperature written at row `i`: a deterministic pattern around 300 K.
fn temperature(i: u64) -> f64 {
    300.0 + ((i * 7919) % 13) as f64 * 0.1 - 0.6
}

/// The potential energy written at row `i`.
fn potential(i: u64) -> f64 {
    -1000.0 - ((i * 104_729) % 17) as f64 * 0.25
}

/// Kahan-compensated sum (Higham, "Accuracy and Stability of Numerical Algorithms",
/// 2nd ed., algorithm 4.2), so the reference mean is exact to the last digits.
fn kahan_mean(values: impl Iterator<Item = f64>) -> f64 {
    let (mut sum, mut c, mut n) = (0.0f64, 0.0f64, 0u64);
    for v in values {
        let y = v - c;
        let t = sum + y;
        c = (t - sum) - y;
        sum = t;
        n += 1;
    }
    sum / n as f64
}

#[test]
fn ten_million_rows_are_all_read_in_bounded_memory() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("long-run.log");
    {
        let mut f = std::io::BufWriter::new(std::fs::File::create(&path).unwrap());
        f.write_all(b"step temperature(K) potential(kJ/mol)\n")
            .unwrap();
        for i in 0..ROWS {
            // The values as written (one and two decimals) are the values read.
            writeln!(f, "{i} {:.1} {:.2}", temperature(i), potential(i)).unwrap();
        }
    }
    let out = Command::cargo_bin("plateau")
        .unwrap()
        .args(["report", "--format", "json"])
        .arg(&path)
        .timeout(Duration::from_secs(1800))
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(report["rows"], ROWS);
    assert_eq!(report["skipped_lines"], 0);
    let column = |name: &str| {
        report["columns"]
            .as_array()
            .unwrap()
            .iter()
            .find(|c| c["name"] == name)
            .unwrap_or_else(|| panic!("no column {name}: {report}"))
            .clone()
    };
    for (name, f, digits) in [
        ("temperature", temperature as fn(u64) -> f64, 1),
        ("potential", potential as fn(u64) -> f64, 2),
    ] {
        let c = column(name);
        assert_eq!(c["count"], ROWS, "{name}");
        // The production part: from the onset plateau found to the last row.
        let production = &c["production"];
        let first = production["first_row"]
            .as_u64()
            .unwrap_or_else(|| panic!("{name}: no production part in {c}"));
        assert_eq!(production["count"], ROWS - first, "{name}");
        let scale = 10f64.powi(digits);
        let want = kahan_mean((first..ROWS).map(|i| (f(i) * scale).round() / scale));
        let got = production["mean"].as_f64().unwrap();
        assert!(
            (got - want).abs() <= 1e-9 * want.abs(),
            "{name}: mean {got} != {want}"
        );
    }

    // SAFETY: a zeroed rusage filled in by getrusage.
    let mut usage: libc::rusage = unsafe { std::mem::zeroed() };
    assert_eq!(
        unsafe { libc::getrusage(libc::RUSAGE_CHILDREN, &mut usage) },
        0
    );
    let peak_mib = usage.ru_maxrss as f64 / 1024.0; // KiB on Linux (getrusage(2))
    let values_mib = (3 * ROWS * 8) as f64 / (1024.0 * 1024.0);
    eprintln!("peak resident memory of plateau: {peak_mib:.0} MiB ({values_mib:.0} MiB of values)");
    assert!(
        peak_mib < 4.0 * values_mib,
        "peak {peak_mib:.0} MiB for {values_mib:.0} MiB of values"
    );
}
