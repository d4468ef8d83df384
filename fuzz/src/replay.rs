//! Runs a fuzz target's body on files without libFuzzer (stable Rust):
//!
//! ```text
//! cargo run --release --manifest-path fuzz/Cargo.toml --bin replay -- TARGET FILE_OR_DIR...
//! ```
//!
//! Each file is one input (a folder: every file in it). Used to check a crash input after
//! a fix and to replay a corpus; `cargo fuzz run` is the fuzzer itself.

use std::path::{Path, PathBuf};
use std::process::ExitCode;

fn inputs(path: &Path, out: &mut Vec<PathBuf>) -> std::io::Result<()> {
    if path.is_dir() {
        let mut entries: Vec<PathBuf> = std::fs::read_dir(path)?
            .filter_map(|e| e.ok().map(|e| e.path()))
            .collect();
        entries.sort();
        for e in entries {
            inputs(&e, out)?;
        }
    } else {
        out.push(path.to_path_buf());
    }
    Ok(())
}

fn main() -> ExitCode {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let Some((name, paths)) = args.split_first() else {
        eprintln!("usage: replay TARGET FILE_OR_DIR...");
        return ExitCode::from(2);
    };
    let Some((_, target)) = plateau_fuzz::TARGETS.iter().find(|(n, _)| n == name) else {
        eprintln!("unknown target {name}");
        return ExitCode::from(2);
    };
    let mut files = Vec::new();
    for p in paths {
        if let Err(e) = inputs(Path::new(p), &mut files) {
            eprintln!("{p}: {e}");
            return ExitCode::from(2);
        }
    }
    for f in &files {
        match std::fs::read(f) {
            Ok(bytes) => target(&bytes),
            Err(e) => {
                eprintln!("{}: {e}", f.display());
                return ExitCode::from(2);
            }
        }
    }
    println!("{name}: {} inputs, no crash", files.len());
    ExitCode::SUCCESS
}
