//! `plateau manpage`: the manual page in roff, generated from the same clap definitions as
//! the command line itself (never written by hand). Standard output gets `plateau(1)`;
//! `--dir DIR` writes it and one page per subcommand (`plateau-report.1`, ...) into DIR.

use std::io::Write;
use std::path::Path;

use clap::CommandFactory;
use clap_mangen::Man;

use crate::cli::Cli;
pub use crate::cli::ManpageArgs;
use crate::error::Error;

/// The page of a command, in roff.
fn render(command: clap::Command) -> Result<Vec<u8>, Error> {
    let mut page = Vec::new();
    Man::new(command).render(&mut page).map_err(Error::Output)?;
    Ok(page)
}

fn write_file(path: &Path, bytes: &[u8]) -> Result<(), Error> {
    std::fs::write(path, bytes).map_err(|e| {
        Error::Output(std::io::Error::new(
            e.kind(),
            format!("{}: {e}", path.display()),
        ))
    })
}

/// Writes the pages.
pub fn run(args: &ManpageArgs, out: &mut dyn Write) -> Result<u8, Error> {
    let mut command = Cli::command();
    command.build();
    let Some(dir) = &args.dir else {
        out.write_all(&render(command)?).map_err(Error::Output)?;
        return Ok(0);
    };
    std::fs::create_dir_all(dir).map_err(|e| {
        Error::Output(std::io::Error::new(
            e.kind(),
            format!("{}: {e}", dir.display()),
        ))
    })?;
    write_file(&dir.join("plateau.1"), &render(command.clone())?)?;
    for sub in command.get_subcommands().filter(|s| s.get_name() != "help") {
        // Each page is named and titled after the full command: plateau-report(1).
        let name = format!("plateau-{}", sub.get_name());
        let page = sub.clone().name(name.clone()).display_name(name.clone());
        write_file(&dir.join(format!("{name}.1")), &render(page)?)?;
    }
    Ok(0)
}
