//! The binary: `columns` and `report`, text and JSON, exit codes.
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use std::path::PathBuf;

use assert_cmd::Command;
use predicates::prelude::*;

fn log(name: &str) -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures/logs")
        .join(name)
}

fn plateau() -> Command {
    let mut c = Command::cargo_bin("plateau").unwrap();
    // Run from an empty folder so no plateau.toml is picked up.
    c.current_dir(std::env::temp_dir());
    c
}

fn json(args: &[&str], file: &str) -> serde_json::Value {
    let out = plateau().args(args).arg(log(file)).output().unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    serde_json::from_slice(&out.stdout).unwrap()
}

#[test]
fn columns_text_shows_layout_and_map_line() {
    plateau()
        .arg("columns")
        .arg(log("commented_units.log"))
        .assert()
        .success()
        .stdout(predicate::str::contains("header at line 2 (behind a comment prefix)"))
        .stdout(predicate::str::contains("whitespace-separated, 3 rows, lines 3-5"))
        .stdout(predicate::str::contains(
            "map: --map step=1 --map time=2:ps --map temperature=3:K --map pressure=4:atm --map total=5:kcal/mol",
        ));
}

#[test]
fn columns_text_lists_skipped_lines_with_file_and_line() {
    plateau()
        .arg("columns")
        .arg(log("chatty.log"))
        .assert()
        .success()
        .stdout(predicate::str::contains("skipped lines: 2"))
        .stdout(predicate::str::contains(
            "chatty.log:8: field 3 is not a number: 'abc'",
        ))
        .stdout(predicate::str::contains(
            "chatty.log:9: expected 4 fields, found 3",
        ));
}

#[test]
fn columns_json() {
    let v = json(&["columns", "--format", "json"], "commented_units.log");
    assert_eq!(v["schema_version"], 1);
    assert_eq!(v["rows"], 3);
    assert_eq!(v["lines"], 5);
    let c = &v["segments"][0]["columns"];
    assert_eq!(c[3]["index"], 4);
    assert_eq!(c[3]["role"], "pressure");
    assert_eq!(c[3]["role_source"], "guessed");
    assert_eq!(c[3]["unit"], "bar");
    assert_eq!(c[3]["source_unit"], "atm");
    assert_eq!(c[3]["assumed"], false);
    assert_eq!(v["segments"][0]["delimiter"], "whitespace");
    let v = json(&["columns", "--format", "json"], "plain_whitespace.log");
    assert_eq!(v["segments"][0]["columns"][2]["assumed"], true);
    let v = json(&["columns", "--format", "json"], "wrong_fields.log");
    assert_eq!(v["skipped_lines"], 3);
    assert_eq!(v["skipped"][0]["line"], 3);
    assert_eq!(v["skipped"][0]["reason"], "expected 3 fields, found 2");
    assert_eq!(v["skipped"][0]["kind"], "field-count");
    let v = json(&["columns", "--format", "json"], "partial_last_line.log");
    assert_eq!(v["partial_line"]["line"], 4);
}

#[test]
fn columns_with_map_and_timestep() {
    let v = json(
        &[
            "columns",
            "--format",
            "json",
            "--map",
            "temperature=2:C",
            "--timestep",
            "2fs",
        ],
        "headerless.log",
    );
    let cols = &v["segments"][0]["columns"];
    assert_eq!(cols[1]["role"], "temperature");
    assert_eq!(cols[1]["role_source"], "given");
    assert_eq!(cols[1]["source_unit"], "°C");
}

#[test]
fn report_text_and_json() {
    plateau()
        .arg("report")
        .arg(log("plain_whitespace.log"))
        .assert()
        .success()
        .stdout(predicate::str::contains("rows: 3   segments: 1"));
    let v = json(&["report", "--format", "json"], "commented_units.log");
    let p = &v["columns"][3];
    assert_eq!(p["unit"], "bar");
    assert_eq!(p["count"], 3);
    // last of 1.0, 0.9, 1.1 atm in bar (1 atm = 1.01325 bar, exact)
    assert!((p["last"].as_f64().unwrap() - 1.1 * 1.01325).abs() < 1e-12);
    let v = json(&["report", "--format", "json"], "nonfinite.log");
    // 6 values, 3 of them non-finite (the report's `count` counts every value).
    assert_eq!(v["columns"][1]["nonfinite"], 3);
    assert_eq!(v["columns"][1]["count"], 6);
}

#[test]
fn report_reads_standard_input() {
    plateau()
        .args(["report", "-"])
        .write_stdin("step temp\n0 300\n1 302\n")
        .assert()
        .success()
        .stdout(predicate::str::contains("rows: 2   segments: 1"));
}

/// Standard input is looked at for its layout as a file is: a table behind a row tag and
/// split on a separator no list names (`|`) is read whole from a pipe too.
#[test]
fn standard_input_layout_is_guessed_as_for_a_file() {
    let mut text = String::from("title = invented box\nDATA | step | temp | pot\n");
    for i in 0..200 {
        text.push_str(&format!(
            "DATA | {i} | {} | {}\n",
            300.0 + f64::from(i % 5),
            -1000.0 - f64::from(i % 3)
        ));
    }
    let out = plateau()
        .args(["report", "--format", "json", "-"])
        .write_stdin(text)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{}",
        String::from_utf8_lossy(&out.stderr)
    );
    let report: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(report["rows"], 200, "{report}");
    let names: Vec<&str> = report["columns"]
        .as_array()
        .unwrap()
        .iter()
        .map(|c| c["name"].as_str().unwrap())
        .collect();
    assert_eq!(names, ["step", "temp", "pot"], "{report}");
}

#[test]
fn missing_file_exits_2_naming_it() {
    plateau()
        .args(["report", "no/such/file.log"])
        .assert()
        .code(2)
        .stderr(predicate::str::starts_with(
            "plateau: error: cannot read no/such/file.log",
        ));
}

#[test]
fn bad_arguments_exit_2() {
    plateau().arg("columns").assert().code(2);
    plateau()
        .args(["report", "--map", "heat=3", "x.log"])
        .assert()
        .code(2);
    plateau()
        .args(["report", "--delimiter", "semicolon", "x.log"])
        .assert()
        .code(2);
    plateau()
        .args(["report", "--timestep", "2 bananas", "x.log"])
        .assert()
        .code(2);
    plateau()
        .args(["report", "--layout", "nope"])
        .arg(log("plain_whitespace.log"))
        .assert()
        .code(2)
        .stderr(predicate::str::contains("no layout named 'nope'"));
}

#[test]
fn row_tag_is_guessed_from_a_chatty_log_and_shown_as_guessed() {
    // Without --row-tag the tagged rows are still read; the tag is marked as guessed.
    let v = json(&["columns", "--format", "json"], "tagged.log");
    assert_eq!(v["row_tag"], "DATA");
    assert_eq!(v["row_tag_guessed"], true);
    let guessed_rows = v["rows"].as_u64().unwrap();
    let given = json(
        &["columns", "--format", "json", "--row-tag", "DATA"],
        "tagged.log",
    );
    assert_eq!(given["row_tag_guessed"], false);
    assert_eq!(given["rows"].as_u64().unwrap(), guessed_rows);
    assert!(guessed_rows >= 4);
    plateau()
        .args(["columns"])
        .arg(log("tagged.log"))
        .assert()
        .success()
        .stdout(predicate::str::contains("row tag     DATA (guessed"));
    // A plain table gets no tag.
    let plain = json(&["columns", "--format", "json"], "plain_whitespace.log");
    assert!(plain["row_tag"].is_null());
}
