//! Thin binary: everything lives in the library.
//!
//! Exit codes: 0 success, 1 check failed (later commands), 2 unreadable input, bad
//! arguments or bad settings (clap's own usage errors exit 2 too). A closed pipe on
//! standard output exits 0 quietly.

use std::io::Write;
use std::process::ExitCode;

use clap::Parser;

fn main() -> ExitCode {
    let cli = plateau::cli::Cli::parse();
    // Not locked for the whole run: the dashboard's threads (and a panic hook restoring the
    // terminal) write to standard output too.
    let mut out = std::io::stdout();
    let result = plateau::commands::run(cli, &mut out).and_then(|code| {
        out.flush().map_err(plateau::error::Error::Output)?;
        Ok(code)
    });
    match result {
        Ok(code) => ExitCode::from(code),
        Err(e) if e.is_broken_pipe() => ExitCode::SUCCESS,
        Err(e) => {
            let text = e.to_string();
            eprintln!("plateau: error: {}", plateau::text::escape_document(&text));
            ExitCode::from(2)
        }
    }
}
