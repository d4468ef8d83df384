//! One module per subcommand: each turns validated settings into output and an outcome.
//!
//! [`run`] dispatches; each command writes its output to the writer it is given (stdout in
//! the binary) and returns an exit code (0 here; `check` will return 1 on alerts). Errors
//! (unreadable input, bad settings) are returned to `main`, which prints them and exits 2.

pub mod check;
pub mod columns;
pub mod completions;
pub mod demo;
pub mod export;
pub mod generate;
pub mod manpage;
pub mod replay;
pub mod report;
pub mod sources;
pub mod watch;

use std::io::Write;
use std::path::Path;

use crate::cli::{Cli, Command, InputArgs};
use crate::config::Settings;
use crate::error::Error;
use crate::table::RunTable;

/// Runs a parsed command line, writing output to `out`. Returns the exit code.
pub fn run(cli: Cli, out: &mut dyn Write) -> Result<u8, Error> {
    match cli.command {
        Command::Columns(args) => columns::run(&args, out),
        Command::Report(args) => report::run(&args, out),
        Command::Check(args) => check::run(&args, out),
        Command::Export(args) => export::run(&args, out),
        Command::Watch(args) => watch::run(&args),
        Command::Demo(args) => demo::run(&args),
        Command::Generate(args) => generate::run(&args).map(|()| 0).map_err(Error::Output),
        Command::Replay(args) => replay::run(&args, out),
        Command::Completions(args) => completions::run(&args, out),
        Command::Manpage(args) => manpage::run(&args, out),
    }
}

/// Resolves the settings (current folder's `plateau.toml` or `--config`) and reads a whole
/// file into a table.
pub fn load(file: &Path, input: &InputArgs) -> Result<(Settings, RunTable), Error> {
    let cwd = std::env::current_dir().unwrap_or_else(|_| Path::new(".").to_path_buf());
    let mut settings = Settings::resolve(input, &cwd)?;
    // Opened once: the layout is guessed from the first bytes, which the reader then reads
    // again, so a named pipe works too.
    let opened = crate::ingest::open_input(file, crate::live::SNIFF_BYTES)?;
    if !opened.start().is_empty() {
        let guess = crate::parse::sniff::sniff_layout(opened.start(), &settings.parse);
        apply_layout_guess(guess, &mut settings);
    }
    let label = file.display().to_string();
    let mut meter = crate::progress::Meter::stderr(&crate::text::escape_control(&label));
    let table = opened.read_observed(settings.parse.clone(), &mut |read, total| {
        meter.observe(read, total);
    });
    meter.finish();
    let mut table = table?;
    // Self-named rows (JSON objects, `name=value` pairs) whose names first appear after the
    // start the layout was guessed from (a stage that logs the pressure once the barostat is
    // on): read the file again with those names as columns too. Not for a pipe, which
    // cannot be read twice: its later names stay listed in the table.
    let regular = std::fs::metadata(file).is_ok_and(|m| m.is_file());
    if let Some(records) = settings.parse.records.as_mut().filter(|_| regular) {
        if !table.later_names.is_empty() {
            records
                .names
                .extend(table.later_names.iter().map(|n| n.name.clone()));
            let again = crate::ingest::open_input(file, 0)?;
            table = again.read_observed(settings.parse.clone(), &mut |_, _| {})?;
        }
    }
    Ok((settings, table))
}

/// Looks at the start of the file for its layout ([`crate::live::sniff_layout`]): without
/// `--row-tag`, a leading word that marks the data rows (used, marked as guessed); without
/// `--delimiter`, the separator the data lines agree on.
pub fn guess_row_tag(file: &Path, settings: &mut Settings) {
    if let Some(guess) = crate::live::sniff_layout(file, &settings.parse) {
        apply_layout_guess(guess, settings);
    }
}

/// Uses a layout guess where the user chose nothing (row tag, delimiter), marking a
/// guessed row tag as such.
fn apply_layout_guess(guess: crate::parse::sniff::LayoutGuess, settings: &mut Settings) {
    if settings.parse.row_tag.is_none() && guess.row_tag.is_some() {
        settings.row_tag_guessed = true;
    }
    guess.apply(&mut settings.parse);
    settings.layout_guess = Some(guess);
}

/// A JSON value for a float: non-finite as the strings "nan", "inf", "-inf" (Contract).
pub fn json_f64(v: f64) -> serde_json::Value {
    if v.is_nan() {
        serde_json::Value::from("nan")
    } else if v == f64::INFINITY {
        serde_json::Value::from("inf")
    } else if v == f64::NEG_INFINITY {
        serde_json::Value::from("-inf")
    } else {
        serde_json::Value::from(v)
    }
}

/// Writes a line to `out`, mapping failures to [`Error::Output`].
pub(crate) fn emit(out: &mut dyn Write, text: &str) -> Result<(), Error> {
    out.write_all(text.as_bytes()).map_err(Error::Output)
}
