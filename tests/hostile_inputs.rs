//! Hostile inputs, one test each, generated in a temporary folder: a named pipe, binary
//! garbage, invalid UTF-8, a symlink loop, an unreadable file, a folder instead of a file,
//! a header of 10,000 columns, an empty file, a file of only comments, a full disk for the
//! alert log. Each must give a clear message naming the file (and the line where there is
//! one), the exit code of the Contract (2: unreadable input; 1: alerts; 0: none), and the
//! other files must go on. No timing is asserted: limits are generous and only a hang
//! reaches them. The expectations are the Contract's and common practice (no source).

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use std::path::{Path, PathBuf};
use std::process::Output;
use std::time::Duration;

use assert_cmd::Command;
use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

const PATIENCE: Duration = Duration::from_secs(120);

fn plateau(dir: &Path) -> Command {
    let mut c = Command::cargo_bin("plateau").unwrap();
    c.current_dir(dir).timeout(PATIENCE);
    c
}

fn stderr(out: &Output) -> String {
    String::from_utf8_lossy(&out.stderr).into_owned()
}

fn no_panic(out: &Output) {
    let err = stderr(out);
    assert!(!err.contains("panicked"), "{err}");
    assert_ne!(out.status.code(), Some(101), "{err}");
    assert!(out.status.code().is_some(), "killed by a signal: {err}");
}

/// A generated log of `rows` rows (the number is the planted truth).
fn good_log(rows: u64, style: LogStyle) -> Vec<u8> {
    let spec = ScenarioSpec::new(Scenario::Equilibration, style, rows);
    let mut text = Vec::new();
    write_log(&spec, &mut text).unwrap();
    text
}

/// `report --format json` of `file`: the parsed document.
fn report_json(dir: &Path, file: &str) -> serde_json::Value {
    let out = plateau(dir)
        .args(["report", "--format", "json", file])
        .output()
        .unwrap();
    no_panic(&out);
    assert!(out.status.success(), "{}", stderr(&out));
    serde_json::from_slice(&out.stdout).unwrap()
}

/// A seeded xorshift64* stream (Vigna 2016, "An experimental exploration of Marsaglia's
/// xorshift generators, scrambled"): the garbage is the same on every run.
fn garbage(len: usize, mut state: u64) -> Vec<u8> {
    (0..len)
        .map(|_| {
            state ^= state >> 12;
            state ^= state << 25;
            state ^= state >> 27;
            (state.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 56) as u8
        })
        .collect()
}

#[cfg(unix)]
fn mkfifo(path: &Path) {
    use std::os::unix::ffi::OsStrExt;
    let c = std::ffi::CString::new(path.as_os_str().as_bytes()).unwrap();
    // SAFETY: a valid NUL-terminated path.
    assert_eq!(unsafe { libc::mkfifo(c.as_ptr(), 0o600) }, 0);
}

/// Fills the named pipe at `path` in two halves a second apart, then closes it.
#[cfg(unix)]
fn fill_fifo_later(path: PathBuf, text: Vec<u8>) -> std::thread::JoinHandle<()> {
    std::thread::spawn(move || {
        use std::io::Write;
        // Blocks until plateau opens the pipe for reading.
        let mut f = std::fs::OpenOptions::new().write(true).open(&path).unwrap();
        let half = text.len() / 2;
        f.write_all(&text[..half]).unwrap();
        f.flush().unwrap();
        std::thread::sleep(Duration::from_secs(1));
        f.write_all(&text[half..]).unwrap();
    })
}

#[cfg(unix)]
#[test]
fn named_pipe_is_read_to_its_end() {
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("pipe.log");
    mkfifo(&fifo);
    let writer = fill_fifo_later(fifo.clone(), good_log(600, LogStyle::Whitespace));
    let report = report_json(dir.path(), "pipe.log");
    writer.join().unwrap();
    assert_eq!(report["rows"], 600);
}

#[cfg(unix)]
#[test]
fn named_pipe_with_tagged_rows_still_has_its_tag_guessed() {
    // The tag is guessed from the start of the input, which a pipe gives only once.
    let dir = tempfile::tempdir().unwrap();
    let fifo = dir.path().join("pipe.log");
    mkfifo(&fifo);
    let writer = fill_fifo_later(fifo.clone(), good_log(600, LogStyle::Tagged));
    let out = plateau(dir.path())
        .args(["columns", "--format", "json", "pipe.log"])
        .output()
        .unwrap();
    writer.join().unwrap();
    no_panic(&out);
    assert!(out.status.success(), "{}", stderr(&out));
    let view: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(view["rows"], 600, "{view}");
    assert_eq!(view["row_tag_guessed"], true, "{view}");
}

#[test]
fn binary_garbage_is_survived_and_named() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("garbage.bin"), garbage(256 * 1024, 42)).unwrap();
    std::fs::write(
        dir.path().join("good.log"),
        good_log(400, LogStyle::Whitespace),
    )
    .unwrap();
    for command in ["report", "columns"] {
        let out = plateau(dir.path())
            .args([command, "garbage.bin"])
            .output()
            .unwrap();
        no_panic(&out);
        assert_eq!(out.status.code(), Some(0), "{command}: {}", stderr(&out));
        let text = String::from_utf8(out.stdout).expect("output is UTF-8 whatever the input");
        assert!(text.contains("garbage.bin"), "{text}");
        assert!(
            !text
                .chars()
                .any(|c| c != '\n' && ::plateau::text::needs_escape(c)),
            "{command} printed a control character from the garbage"
        );
    }
    // Garbage and a good log together: the good log is judged as alone.
    let both = plateau(dir.path())
        .args(["check", "garbage.bin", "good.log"])
        .output()
        .unwrap();
    no_panic(&both);
    let alone = plateau(dir.path())
        .args(["check", "good.log"])
        .output()
        .unwrap();
    let good_lines = |o: &Output| {
        String::from_utf8_lossy(&o.stdout)
            .lines()
            .filter(|l| l.starts_with("good.log:"))
            .map(str::to_string)
            .collect::<Vec<_>>()
    };
    assert_eq!(good_lines(&both), good_lines(&alone));
    assert!(stderr(&both).contains("garbage.bin: "), "{}", stderr(&both));
}

#[test]
fn invalid_utf8_in_names_and_rows_is_shown_and_skipped_by_line() {
    let dir = tempfile::tempdir().unwrap();
    let mut text = b"step temp\xff\xfe(K) pressure\n".to_vec();
    for i in 0..300u32 {
        if i == 100 {
            text.extend_from_slice(b"100 \xc3\x28 1.0\n"); // an invalid two-byte sequence
        } else {
            let t = 300.0 + f64::from(i % 7) * 0.25;
            text.extend_from_slice(format!("{i} {t} 1.0\n").as_bytes());
        }
    }
    std::fs::write(dir.path().join("bad-utf8.log"), &text).unwrap();
    let report = report_json(dir.path(), "bad-utf8.log");
    assert_eq!(report["rows"], 299, "{report}");
    assert_eq!(report["skipped_lines"], 1, "{report}");
    assert_eq!(report["skipped"][0]["line"], 102, "{report}");
    let names: Vec<&str> = report["columns"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["name"].as_str().unwrap())
        .collect();
    // A line that is not UTF-8 is read as Latin-1 (ISO/IEC 8859-1: one character per byte,
    // 0xFF 'ÿ', 0xFE 'þ'), so nothing of the name is lost.
    assert!(names.contains(&"temp\u{ff}\u{fe}"), "{names:?}");
}

#[cfg(unix)]
#[test]
fn symlink_loop_is_an_error_naming_the_file_and_others_go_on() {
    let dir = tempfile::tempdir().unwrap();
    std::os::unix::fs::symlink("loop-b.log", dir.path().join("loop-a.log")).unwrap();
    std::os::unix::fs::symlink("loop-a.log", dir.path().join("loop-b.log")).unwrap();
    std::fs::write(
        dir.path().join("good.log"),
        good_log(400, LogStyle::Whitespace),
    )
    .unwrap();
    let out = plateau(dir.path())
        .args(["report", "loop-a.log"])
        .output()
        .unwrap();
    no_panic(&out);
    assert_eq!(out.status.code(), Some(2));
    let err = stderr(&out);
    assert!(err.contains("loop-a.log"), "{err}");
    assert!(err.to_lowercase().contains("symbolic links"), "{err}");

    let out = plateau(dir.path())
        .args(["check", "loop-a.log", "good.log"])
        .output()
        .unwrap();
    no_panic(&out);
    assert_eq!(out.status.code(), Some(2), "exit 2 wins over 1 and 0");
    let err = stderr(&out);
    assert!(
        err.contains("loop-a.log") && err.contains("good.log:"),
        "{err}"
    );
}

#[cfg(unix)]
#[test]
fn unreadable_file_is_an_error_naming_it() {
    use std::os::unix::fs::PermissionsExt;
    use std::os::unix::process::CommandExt;
    let dir = tempfile::tempdir().unwrap();
    std::fs::set_permissions(dir.path(), std::fs::Permissions::from_mode(0o755)).unwrap();
    let path = dir.path().join("secret.log");
    std::fs::write(&path, good_log(200, LogStyle::Whitespace)).unwrap();
    std::fs::set_permissions(&path, std::fs::Permissions::from_mode(0o000)).unwrap();
    std::fs::write(
        dir.path().join("good.log"),
        good_log(400, LogStyle::Whitespace),
    )
    .unwrap();
    std::fs::set_permissions(
        dir.path().join("good.log"),
        std::fs::Permissions::from_mode(0o644),
    )
    .unwrap();
    for command in ["report", "check"] {
        let mut cmd = std::process::Command::new(env!("CARGO_BIN_EXE_plateau"));
        cmd.current_dir(dir.path()).args([command, "secret.log"]);
        if command == "check" {
            cmd.arg("good.log");
        }
        // Root reads any file: run as the unprivileged user `nobody` then.
        // SAFETY: geteuid has no failure; the closure calls only setgid and setuid.
        if unsafe { libc::geteuid() } == 0 {
            unsafe {
                cmd.pre_exec(|| {
                    if libc::setgid(65534) != 0 || libc::setuid(65534) != 0 {
                        return Err(std::io::Error::last_os_error());
                    }
                    Ok(())
                });
            }
        }
        let out = cmd.output().unwrap();
        no_panic(&out);
        assert_eq!(out.status.code(), Some(2), "{command}");
        let err = stderr(&out);
        assert!(
            err.contains("secret.log") && err.contains("ermission"),
            "{err}"
        );
        if command == "check" {
            assert!(err.contains("good.log: "), "the other file goes on: {err}");
        }
    }
}

#[test]
fn a_folder_is_refused_by_name() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::create_dir(dir.path().join("run.log")).unwrap();
    for command in ["report", "columns", "check"] {
        let out = plateau(dir.path())
            .args([command, "run.log"])
            .output()
            .unwrap();
        no_panic(&out);
        assert_eq!(out.status.code(), Some(2), "{command}");
        let err = stderr(&out);
        assert!(err.contains("run.log") && err.contains("folder"), "{err}");
    }
}

#[test]
fn ten_thousand_columns_are_read() {
    let dir = tempfile::tempdir().unwrap();
    let columns = 10_000usize;
    let mut text = String::from("step");
    for c in 1..columns {
        text.push_str(&format!(" q{c}"));
    }
    text.push('\n');
    for row in 0..30u32 {
        text.push_str(&row.to_string());
        for c in 1..columns {
            text.push_str(&format!(" {}", (c % 97) as f64 + f64::from(row % 5) * 0.5));
        }
        text.push('\n');
    }
    std::fs::write(dir.path().join("wide.log"), text).unwrap();
    let out = plateau(dir.path())
        .args(["columns", "--format", "json", "wide.log"])
        .output()
        .unwrap();
    no_panic(&out);
    assert!(out.status.success(), "{}", stderr(&out));
    let view: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(view["rows"], 30);
    assert_eq!(
        view["segments"][0]["columns"].as_array().unwrap().len(),
        columns,
        "{}",
        view["segments"][0]["map"]
    );
    let report = report_json(dir.path(), "wide.log");
    assert_eq!(report["rows"], 30);
}

#[test]
fn empty_file_and_only_comments_say_there_are_no_rows() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("empty.log"), b"").unwrap();
    let comments: String = (0..500).map(|i| format!("# comment line {i}\n")).collect();
    std::fs::write(dir.path().join("comments.log"), comments).unwrap();
    for file in ["empty.log", "comments.log"] {
        let report = report_json(dir.path(), file);
        assert_eq!(report["rows"], 0, "{file}");
        let out = plateau(dir.path()).args(["report", file]).output().unwrap();
        no_panic(&out);
        let text = String::from_utf8_lossy(&out.stdout).into_owned();
        assert!(text.contains(file) && text.contains("rows: 0"), "{text}");
        let out = plateau(dir.path()).args(["check", file]).output().unwrap();
        no_panic(&out);
        assert!(
            matches!(out.status.code(), Some(0 | 1)),
            "{file}: {}",
            stderr(&out)
        );
        assert!(stderr(&out).contains(file), "{}", stderr(&out));
    }
}

#[cfg(target_os = "linux")]
#[test]
fn full_disk_for_the_alert_log_is_reported_and_checking_goes_on() {
    // /dev/full: every write fails with "No space left on device" (ENOSPC).
    let dir = tempfile::tempdir().unwrap();
    let mut text = String::from("step time(ps) temperature(K)\n");
    for i in 0..400u32 {
        let t = if i == 300 {
            "nan".to_string()
        } else {
            format!("{:.2}", 300.0 + f64::from((i * 7919) % 13) * 0.1)
        };
        text.push_str(&format!("{i} {}.0 {t}\n", i * 2));
    }
    std::fs::write(dir.path().join("nan.log"), text).unwrap();
    let out = plateau(dir.path())
        .args(["check", "--alert-log", "/dev/full", "nan.log"])
        .output()
        .unwrap();
    no_panic(&out);
    assert_eq!(out.status.code(), Some(1), "{}", stderr(&out));
    let err = stderr(&out);
    assert!(
        err.contains("/dev/full") && err.contains("No space left"),
        "{err}"
    );
    assert_eq!(err.matches("cannot append").count(), 1, "told once: {err}");
    assert!(err.contains("1 alert(s) could not be appended"), "{err}");
    assert!(String::from_utf8_lossy(&out.stdout).contains("nonfinite"));
}
