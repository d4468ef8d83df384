//! Shell completions and the manual page come from the same clap definitions as the command
//! line: every subcommand and option is in them, and nothing is written by hand.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers

use assert_cmd::Command;
use clap::CommandFactory;
use plateau::cli::Cli;

fn plateau(args: &[&str]) -> String {
    let out = Command::cargo_bin("plateau")
        .unwrap()
        .args(args)
        .output()
        .unwrap();
    assert!(
        out.status.success(),
        "{args:?}: {}",
        String::from_utf8_lossy(&out.stderr)
    );
    String::from_utf8(out.stdout).unwrap()
}

/// Every subcommand name, and every long option of every subcommand.
fn vocabulary() -> (Vec<String>, Vec<String>) {
    let command = Cli::command();
    let subcommands: Vec<String> = command
        .get_subcommands()
        .map(|s| s.get_name().to_string())
        .collect();
    let mut options: Vec<String> = command
        .get_subcommands()
        .flat_map(|s| {
            s.get_arguments()
                .filter_map(|a| a.get_long())
                .map(str::to_string)
        })
        .collect();
    options.sort();
    options.dedup();
    (subcommands, options)
}

#[test]
fn completions_know_every_subcommand_and_option() {
    let (subcommands, options) = vocabulary();
    assert!(subcommands.iter().any(|s| s == "replay"));
    assert!(options.iter().any(|o| o == "rows-per-second"));
    for shell in ["bash", "zsh", "fish"] {
        let script = plateau(&["completions", shell]);
        for name in &subcommands {
            assert!(script.contains(name.as_str()), "{shell}: no {name}");
        }
        for option in &options {
            assert!(script.contains(option.as_str()), "{shell}: no --{option}");
        }
    }
    // bash can load it: the script is a function named after the binary.
    assert!(plateau(&["completions", "bash"]).contains("_plateau()"));
}

#[test]
fn manual_page_is_roff_with_every_subcommand() {
    let (subcommands, _) = vocabulary();
    let page = plateau(&["manpage"]);
    assert!(
        page.contains(".TH plateau 1"),
        "{}",
        &page[..200.min(page.len())]
    );
    assert!(page.contains(".SH SYNOPSIS"));
    for name in &subcommands {
        assert!(page.contains(name.as_str()), "no {name}");
    }
}

#[test]
fn manual_pages_for_every_subcommand_into_a_folder() {
    let dir = tempfile::tempdir().unwrap();
    let target = dir.path().join("man1");
    plateau(&["manpage", "--dir", target.to_str().unwrap()]);
    let (subcommands, _) = vocabulary();
    assert!(target.join("plateau.1").exists());
    for name in subcommands.iter().filter(|n| n.as_str() != "help") {
        let page = std::fs::read_to_string(target.join(format!("plateau-{name}.1"))).unwrap();
        assert!(page.contains(&format!(".TH plateau-{name} 1")), "{name}");
    }
    let replay = std::fs::read_to_string(target.join("plateau-replay.1")).unwrap();
    assert!(replay.contains("rows\\-per\\-second"));
}
