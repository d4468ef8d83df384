//! Settings files: every valid fixture loads; every invalid one fails naming the file and
//! the key or value (expected text in the `.expected` file beside it), both through the
//! library and through the binary (exit 2).
#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)]

use std::path::{Path, PathBuf};

use assert_cmd::Command;
use plateau::cli::InputArgs;
use plateau::config::{FileConfig, Settings};

fn dir(name: &str) -> PathBuf {
    Path::new(env!("CARGO_MANIFEST_DIR"))
        .join("tests/fixtures")
        .join(name)
}

fn tomls(name: &str) -> Vec<PathBuf> {
    let mut v: Vec<PathBuf> = std::fs::read_dir(dir(name))
        .unwrap()
        .map(|e| e.unwrap().path())
        .filter(|p| p.extension().is_some_and(|e| e == "toml"))
        .collect();
    v.sort();
    v
}

fn settings(path: &Path) -> Result<Settings, String> {
    let args = InputArgs {
        config: Some(path.to_path_buf()),
        ..InputArgs::default()
    };
    Settings::resolve(&args, Path::new(".")).map_err(|e| e.to_string())
}

#[test]
fn valid_configs_load() {
    let files = tomls("configs_valid");
    assert!(files.len() >= 2);
    for f in files {
        settings(&f).unwrap_or_else(|e| panic!("{}: {e}", f.display()));
    }
}

#[test]
fn full_config_values() {
    let s = settings(&dir("configs_valid/full.toml")).unwrap();
    assert_eq!(s.timestep_ps, Some(0.002));
    assert_eq!(s.layout.as_deref(), Some("tagged"));
    assert_eq!(s.parse.row_tag.as_deref(), Some("DATA"));
    assert_eq!(s.parse.comment_prefixes, ["#", ";"]);
    assert_eq!(s.parse.maps.len(), 3);
    // N_df = 3N - constraints - 3 (common practice, no source): 3000 - 500 - 3
    assert_eq!(s.degrees_of_freedom(), Some(2497));
    let args = InputArgs {
        config: Some(dir("configs_valid/full.toml")),
        layout: Some("csv".into()),
        timestep: Some(0.004),
        ..InputArgs::default()
    };
    let s = Settings::resolve(&args, Path::new(".")).unwrap();
    assert_eq!(
        s.timestep_ps,
        Some(0.004),
        "command line wins over the layout"
    );
    assert_eq!(s.dof, Some(2997));
    assert_eq!(s.parse.row_tag, None);
}

#[test]
fn invalid_configs_name_file_and_key() {
    let files = tomls("configs_invalid");
    assert!(files.len() >= 6);
    for f in files {
        let expected = std::fs::read_to_string(f.with_extension("expected")).unwrap();
        let err = match settings(&f) {
            Ok(_) => panic!("{} should fail", f.display()),
            Err(e) => e,
        };
        let name = f.file_name().unwrap().to_string_lossy().into_owned();
        assert!(
            err.contains(&name),
            "{name}: message does not name the file: {err}"
        );
        assert!(
            err.contains(expected.trim()),
            "{name}: expected '{}' in: {err}",
            expected.trim()
        );
        // Through the binary: exit 2 and the same message on stderr.
        let out = Command::cargo_bin("plateau")
            .unwrap()
            .args(["columns", "--config"])
            .arg(&f)
            .arg(dir("logs/plain_whitespace.log"))
            .output()
            .unwrap();
        assert_eq!(out.status.code(), Some(2), "{name}");
        let stderr = String::from_utf8_lossy(&out.stderr);
        assert!(stderr.starts_with("plateau: error: "), "{stderr}");
        assert!(stderr.contains(expected.trim()), "{name}: {stderr}");
    }
}

#[test]
fn plateau_toml_in_the_current_folder_is_used() {
    let tmp = tempfile::tempdir().unwrap();
    std::fs::write(tmp.path().join("plateau.toml"), "row-tag = \"DATA\"\n").unwrap();
    let out = Command::cargo_bin("plateau")
        .unwrap()
        .current_dir(tmp.path())
        .args(["columns", "--format", "json"])
        .arg(dir("logs/tagged.log"))
        .output()
        .unwrap();
    assert!(out.status.success());
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["rows"], 4);
    assert_eq!(v["row_tag"], "DATA");
    // The command line wins over the file.
    let out = Command::cargo_bin("plateau")
        .unwrap()
        .current_dir(tmp.path())
        .args(["columns", "--format", "json", "--row-tag", "NOTHING"])
        .arg(dir("logs/tagged.log"))
        .output()
        .unwrap();
    let v: serde_json::Value = serde_json::from_slice(&out.stdout).unwrap();
    assert_eq!(v["rows"], 0);
}

#[test]
fn keep_rows_key() {
    let s = settings(&dir("configs_valid/keep_rows.toml")).unwrap();
    assert_eq!(s.keep_rows, Some(50_000));
    let s = settings(&dir("configs_valid/full.toml")).unwrap();
    assert_eq!(s.keep_rows, None);
    let e = settings(&dir("configs_invalid/too_few_keep_rows.toml")).unwrap_err();
    assert!(e.contains("at least 2000"), "{e}");
}

#[test]
fn sample_file_parses() {
    let text = "map = [\"temperature=Temp\"]\n[layouts.a]\nrow-tag = \"T\"\n";
    let f = FileConfig::parse(text, Path::new("plateau.toml")).unwrap();
    assert_eq!(f.layouts.len(), 1);
}
