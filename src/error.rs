//! Typed errors with context (file, line, key).
//!
//! Library modules return these; only `main.rs` turns them into a message on stderr and an
//! exit code (2 for every error here: unreadable input, bad arguments, bad settings).

use std::io;
use std::path::PathBuf;

use thiserror::Error;

/// Anything that stops a command.
#[derive(Debug, Error)]
pub enum Error {
    /// An input file that cannot be opened or read. Names the path.
    #[error("cannot read {}: {source}", path.display())]
    Read {
        /// The file given on the command line.
        path: PathBuf,
        /// The operating-system error.
        source: io::Error,
    },
    /// Settings from the command line or `plateau.toml` are invalid.
    #[error(transparent)]
    Config(#[from] ConfigError),
    /// A command-line argument that parsed but makes no sense (names the option).
    #[error("{0}")]
    Usage(String),
    /// Writing to standard output failed (a closed pipe is handled quietly by `main`).
    #[error("writing output: {0}")]
    Output(#[source] io::Error),
}

impl Error {
    /// True when the error is a closed pipe on output (`plateau ... | head`): exit 0 quietly.
    pub fn is_broken_pipe(&self) -> bool {
        matches!(self, Error::Output(e) if e.kind() == io::ErrorKind::BrokenPipe)
    }
}

/// Errors in settings: names the origin (the file, or "command line") and the key.
#[derive(Debug, Error)]
pub enum ConfigError {
    /// The settings file given with `--config` cannot be read.
    #[error("cannot read settings file {}: {source}", path.display())]
    Read {
        /// The settings file.
        path: PathBuf,
        /// The operating-system error.
        source: io::Error,
    },
    /// The settings file is not valid TOML or has an unknown key or a value of the wrong type.
    #[error("{}: {message}", path.display())]
    Parse {
        /// The settings file.
        path: PathBuf,
        /// The parser's message (it names the key and the line).
        message: String,
    },
    /// `--layout NAME` (or `layout = "NAME"`) names a layout that is not defined.
    #[error("no layout named '{name}'{}", known_list(known, origin))]
    UnknownLayout {
        /// The name asked for.
        name: String,
        /// The layouts that exist.
        known: Vec<String>,
        /// Where the layouts were looked for.
        origin: String,
    },
    /// A value that is of the right type but invalid (names where it came from and the key).
    #[error("{origin}: {key}: {message}")]
    Value {
        /// The settings file or "command line".
        origin: String,
        /// The option or file key, as the user spells it.
        key: String,
        /// What is wrong with it.
        message: String,
    },
}

fn known_list(known: &[String], origin: &str) -> String {
    if known.is_empty() {
        format!(" (no layouts are defined in {origin})")
    } else {
        format!(" in {origin} (defined: {})", known.join(", "))
    }
}

/// Errors when reading a unit, a quantity with a suffix, a duration or a schedule.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum UnitError {
    /// The unit text is not one plateau knows.
    #[error("unknown unit '{0}'")]
    Unknown(String),
    /// The unit is known but measures something else (e.g. `bar` for a temperature).
    #[error("'{text}' is not a unit of {expected}")]
    WrongDimension {
        /// The unit text.
        text: String,
        /// The quantity expected (e.g. "temperature").
        expected: &'static str,
    },
    /// `kT` without a reference temperature.
    #[error("'{0}' needs a reference temperature, e.g. kT@300K")]
    KtWithoutTemperature(String),
    /// The number part is missing or not a number.
    #[error("'{0}' is not a number with an optional unit")]
    BadNumber(String),
    /// A schedule whose points are not in increasing time, or empty.
    #[error("bad schedule '{text}': {reason}")]
    BadSchedule {
        /// The schedule text.
        text: String,
        /// What is wrong.
        reason: String,
    },
    /// A step count (`500000steps`) where no time step is known.
    #[error("'{0}' is a number of steps, but no --timestep is set")]
    StepsWithoutTimestep(String),
}

/// Errors in a `--map ROLE=COLUMN[:UNIT]` argument.
#[derive(Debug, Clone, PartialEq, Error)]
pub enum MapError {
    /// Not of the form `ROLE=COLUMN[:UNIT]`.
    #[error("'{0}' is not ROLE=COLUMN[:UNIT] (e.g. temperature=3 or pressure=Press:atm)")]
    Syntax(String),
    /// The role is not one of the known roles.
    #[error("unknown role '{0}' (roles: step, time, temperature, pressure, potential, kinetic, total, conserved, volume, density)")]
    UnknownRole(String),
    /// Column index 0 (indices are 1-based).
    #[error("column index in '{0}' starts at 1")]
    ZeroIndex(String),
    /// The unit does not parse or does not fit the role.
    #[error("in '{text}': {source}")]
    Unit {
        /// The whole `--map` value.
        text: String,
        /// The unit problem.
        source: UnitError,
    },
}
