//! `plateau completions SHELL`: the shell's completion script, generated from the same clap
//! definitions as the command line itself (never written by hand).

use std::io::Write;

use clap::{Args, CommandFactory};
use clap_complete::Shell;

use crate::cli::Cli;
use crate::error::Error;

/// Arguments of `plateau completions`.
#[derive(Debug, Clone, Args)]
#[command(after_help = "Install, for example:
  bash: plateau completions bash > ~/.local/share/bash-completion/completions/plateau
  zsh:  plateau completions zsh > ~/.zfunc/_plateau   (with ~/.zfunc in $fpath)
  fish: plateau completions fish > ~/.config/fish/completions/plateau.fish")]
pub struct CompletionsArgs {
    /// The shell to complete in.
    #[arg(value_enum)]
    pub shell: Shell,
}

/// Writes the completion script to `out`.
pub fn run(args: &CompletionsArgs, out: &mut dyn Write) -> Result<u8, Error> {
    let mut command = Cli::command();
    let mut script = Vec::new();
    clap_complete::generate(args.shell, &mut command, "plateau", &mut script);
    out.write_all(&script).map_err(Error::Output)?;
    Ok(0)
}
