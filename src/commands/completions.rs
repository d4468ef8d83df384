//! `plateau completions SHELL`: the shell's completion script, generated from the same clap
//! definitions as the command line itself (never written by hand).

use std::io::Write;

use clap::CommandFactory;

use crate::cli::Cli;
pub use crate::cli::CompletionsArgs;
use crate::error::Error;

/// Writes the completion script to `out`.
pub fn run(args: &CompletionsArgs, out: &mut dyn Write) -> Result<u8, Error> {
    let mut command = Cli::command();
    let mut script = Vec::new();
    clap_complete::generate(args.shell, &mut command, "plateau", &mut script);
    out.write_all(&script).map_err(Error::Output)?;
    Ok(0)
}
