//! `plateau check --follow`: alerts as rows arrive; ends at the end of standard input, when
//! `--until` is reached, or when the `--pid` process exits (Contract). No timing is
//! asserted: sleeps only order the writer's steps.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::io::Write;
use std::path::PathBuf;
use std::process::{Command as Std, Stdio};
use std::time::Duration;

use assert_cmd::Command;

/// `plateau check --follow --pid` on `file` while `child` writes it (or just runs); the
/// output once it ended, and the child reaped.
fn follow_until_exit(
    child: &mut std::process::Child,
    file: &std::path::Path,
    timeout_s: u64,
) -> std::process::Output {
    let out = Command::cargo_bin("plateau")
        .unwrap()
        .args(["check", "--follow", "--stall-after", "1h", "--pid"])
        .arg(child.id().to_string())
        .arg(file)
        .timeout(Duration::from_secs(timeout_s))
        .output()
        .unwrap();
    child.wait().unwrap();
    out
}

fn fixture(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/alerts")
        .join(name)
}

#[test]
fn standard_input_ends_the_watch_and_alerts_are_printed() {
    let text = std::fs::read(fixture("nonfinite.log")).unwrap();
    let out = Command::cargo_bin("plateau")
        .unwrap()
        .args(["check", "--follow", "-"])
        .write_stdin(text)
        .timeout(Duration::from_secs(120))
        .output()
        .unwrap();
    assert_eq!(out.status.code(), Some(1));
    let stdout = String::from_utf8(out.stdout).unwrap();
    assert!(
        stdout.starts_with("-: critical nonfinite [temperature] line 252 row 250"),
        "{stdout}"
    );
    assert!(String::from_utf8_lossy(&out.stderr).contains("-: finished"));
}

/// Found by trying it: rows written as JSON objects, or behind a row tag with `|`
/// between fields, piped into `check --follow -` gave 0 rows (the layout was guessed only
/// for files, from their start), and `check --follow` never guessed a row tag even for a
/// file. The layout is now guessed from the first lines that arrive, as `report -` does.
#[test]
fn standard_input_in_an_undescribed_layout_is_read() {
    let mut json = String::new();
    let mut tagged = String::from("# invented run\nDATA|step|time|temperature\n");
    for i in 0..600 {
        let t = 300.0 + (i % 5) as f64 * 0.3;
        if i % 2 == 0 {
            json.push_str(&format!(
                "{{\"step\": {}, \"time\": {}, \"temperature\": {t}}}\n",
                i * 10,
                i as f64 * 0.02
            ));
        } else {
            json.push_str(&format!("{{\"step\": {}, \"temperature\": {t}}}\n", i * 10));
        }
        tagged.push_str(&format!("DATA|{}|{}|{t}\n", i * 10, i as f64 * 0.02));
        if i % 50 == 0 {
            tagged.push_str("note: checkpoint written\n");
        }
    }
    // The tagged log as a file: its row tag was not guessed while following (0 rows).
    let dir = tempfile::tempdir().unwrap();
    let file = dir.path().join("tagged.log");
    std::fs::write(&file, &tagged).unwrap();
    let mut child = Std::new("sleep").arg("1").spawn().unwrap();
    let out = follow_until_exit(&mut child, &file, 120);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains("finished (600 rows"), "{stderr}");
    for text in [json, tagged] {
        let out = Command::cargo_bin("plateau")
            .unwrap()
            .args(["check", "--follow", "-"])
            .write_stdin(text.clone())
            .timeout(Duration::from_secs(120))
            .output()
            .unwrap();
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert!(
            stderr.contains("-: finished (600 rows"),
            "{stderr}\n{}",
            &text[..200]
        );
        assert_eq!(out.status.code(), Some(0), "{stderr}");
    }
}

#[test]
fn healthy_input_on_standard_input_exits_0() {
    let text = std::fs::read(fixture("healthy.log")).unwrap();
    Command::cargo_bin("plateau")
        .unwrap()
        .args(["check", "--follow", "-"])
        .write_stdin(text)
        .timeout(Duration::from_secs(120))
        .assert()
        .code(0)
        .stdout("");
}

#[test]
fn until_reached_ends_the_watch() {
    // healthy.log ends at 399 ps; --until 300ps is already reached.
    Command::cargo_bin("plateau")
        .unwrap()
        .args([
            "check",
            "--follow",
            "--until",
            "300ps",
            "--stall-after",
            "1h",
        ])
        .arg(fixture("healthy.log"))
        .timeout(Duration::from_secs(120))
        .assert()
        .code(0);
    // In steps: 399 rows of 500 steps.
    Command::cargo_bin("plateau")
        .unwrap()
        .args([
            "check",
            "--follow",
            "--until",
            "150000steps",
            "--stall-after",
            "1h",
        ])
        .arg(fixture("healthy.log"))
        .timeout(Duration::from_secs(120))
        .assert()
        .code(0);
}

#[test]
fn pid_exit_ends_the_watch() {
    let mut child = Std::new("sleep").arg("1").spawn().unwrap();
    let out = follow_until_exit(&mut child, &fixture("healthy.log"), 120);
    assert_eq!(
        out.status.code(),
        Some(0),
        "{}",
        String::from_utf8_lossy(&out.stdout)
    );
    assert!(String::from_utf8_lossy(&out.stderr).contains("finished"));
}

/// Found by trying it: a writer that appends its last rows and exits at once left them
/// unread (the watch ended at the next tick after the exit, before the follower had read
/// them). Every row the writer wrote is counted.
#[test]
fn rows_written_just_before_the_writer_exits_are_all_read() {
    let dir = tempfile::tempdir().unwrap();
    let source = dir.path().join("source.log");
    let live = dir.path().join("live.log");
    let rows = 300_000usize;
    let mut text = String::from("step time(ps) temperature(K)\n");
    for i in 0..rows {
        text.push_str(&format!(
            "{} {:.2} {:.3}\n",
            i * 10,
            i as f64 * 0.02,
            300.0 + (i % 7) as f64 * 0.5
        ));
    }
    std::fs::write(&source, text).unwrap();
    std::fs::write(&live, "").unwrap();
    // The writer: waits a second, appends everything in one go and exits.
    let script = format!(
        "sleep 1; cat '{}' >> '{}'",
        source.display(),
        live.display()
    );
    let mut child = Std::new("sh").args(["-c", &script]).spawn().unwrap();
    let out = follow_until_exit(&mut child, &live, 300);
    let stderr = String::from_utf8_lossy(&out.stderr);
    assert!(stderr.contains(&format!("({rows} rows")), "{stderr}");
}

#[test]
fn rows_appended_later_raise_alerts_while_following() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("live.log");
    let healthy = std::fs::read_to_string(fixture("healthy.log")).unwrap();
    let mut lines = healthy.lines();
    let header = lines.next().unwrap();
    let rows: Vec<&str> = lines.collect();
    let mut f = std::fs::File::create(&path).unwrap();
    writeln!(f, "{header}").unwrap();
    for r in &rows[..200] {
        writeln!(f, "{r}").unwrap();
    }
    f.flush().unwrap();
    let bin = assert_cmd::cargo::cargo_bin("plateau");
    let watcher = Std::new(bin)
        .args([
            "check",
            "--follow",
            "--until",
            "399ps",
            "--stall-after",
            "1h",
        ])
        .arg(&path)
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .unwrap();
    std::thread::sleep(Duration::from_millis(700));
    // The writer goes on; row 300 is broken.
    for (i, r) in rows[200..].iter().enumerate() {
        if i + 200 == 300 {
            let mut fields: Vec<&str> = r.split_whitespace().collect();
            fields[2] = "inf";
            writeln!(f, "{}", fields.join(" ")).unwrap();
        } else {
            writeln!(f, "{r}").unwrap();
        }
    }
    f.flush().unwrap();
    let out = watcher.wait_with_output().unwrap();
    assert_eq!(out.status.code(), Some(1));
    let stdout = String::from_utf8(out.stdout).unwrap();
    assert!(
        stdout.contains("critical nonfinite [temperature] line 302 row 300"),
        "{stdout}"
    );
    // The watched file was not changed by the watcher.
    let after = std::fs::read_to_string(&path).unwrap();
    assert_eq!(after.lines().count(), 401);
}

/// A long run on standard input with a small `--keep-rows`: the same alert lines as
/// without the cap, and the user is told that older rows were folded (stderr).
#[test]
fn keep_rows_folds_a_long_run_and_says_so() {
    use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};
    let spec = ScenarioSpec::new(Scenario::BlowUp, LogStyle::Whitespace, 12_000);
    let mut text = Vec::new();
    write_log(&spec, &mut text).unwrap();
    let run = |extra: &[&str]| {
        Command::cargo_bin("plateau")
            .unwrap()
            .args(["check", "--follow"])
            .args(extra)
            .arg("-")
            .write_stdin(text.clone())
            .timeout(Duration::from_secs(300))
            .output()
            .unwrap()
    };
    let capped = run(&["--keep-rows", "2000"]);
    let plain = run(&[]);
    assert_eq!(capped.status.code(), Some(1));
    let per_row = |out: &std::process::Output| -> Vec<String> {
        String::from_utf8_lossy(&out.stdout)
            .lines()
            .filter(|l| {
                l.contains(" nonfinite ") || l.contains(" runaway ") || l.contains(" spike ")
            })
            .map(String::from)
            .collect()
    };
    assert!(!per_row(&plain).is_empty());
    assert_eq!(per_row(&capped), per_row(&plain));
    let err = String::from_utf8_lossy(&capped.stderr);
    assert!(err.contains("memory cap of 2000 rows reached"), "{err}");
    assert!(
        err.contains("approximate from now on: equilibration"),
        "{err}"
    );
    assert!(!String::from_utf8_lossy(&plain.stderr).contains("memory cap"));
    // Both count every row of the run in the final status line.
    let rows = |out: &std::process::Output| {
        String::from_utf8_lossy(&out.stderr)
            .lines()
            .find(|l| l.starts_with("-: ") && l.contains(" rows, "))
            .map(|l| {
                l.split(" rows, ")
                    .next()
                    .unwrap()
                    .rsplit('(')
                    .next()
                    .unwrap()
                    .to_string()
            })
    };
    assert_eq!(rows(&capped), rows(&plain));
}

#[test]
fn keep_rows_is_checked() {
    Command::cargo_bin("plateau")
        .unwrap()
        .args(["check", "--follow", "--keep-rows", "10", "-"])
        .write_stdin("")
        .timeout(Duration::from_secs(60))
        .assert()
        .code(2)
        .stderr(predicates::str::contains("--keep-rows"));
    Command::cargo_bin("plateau")
        .unwrap()
        .args(["check", "--keep-rows", "5000"])
        .arg(fixture("healthy.log"))
        .assert()
        .code(2)
        .stderr(predicates::str::contains("--keep-rows needs --follow"));
}
