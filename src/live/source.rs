//! A run and where its rows come from.
//!
//! A [`RunSpec`] names one run: its [`RunSource`] (what is followed) and the label the user
//! sees. A source the engine cannot start by itself (a command's output, a scheduler step)
//! is handed over ready-made with `Live::add_source`; a kind the engine should start from a
//! description gets its own variant here and a branch in `Live::add`.

use std::fmt;
use std::path::{Path, PathBuf};

/// Where a run's rows come from.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum RunSource {
    /// A file followed by name (through growth, truncation, rotation, deletion; it may not
    /// exist yet).
    Path(PathBuf),
    /// Standard input, until it ends.
    Stdin,
    /// A source handed over ready-made ([`super::Live::add_source`]): a command's output,
    /// a scheduler step attached to a job; the text says what it is.
    Other(String),
}

impl RunSource {
    /// The source a command-line argument names: `-` is standard input, anything else a path.
    pub fn from_argument(arg: &Path) -> RunSource {
        if arg.as_os_str() == "-" {
            RunSource::Stdin
        } else {
            RunSource::Path(arg.to_path_buf())
        }
    }

    /// The file this source reads, if it is a file.
    pub fn path(&self) -> Option<&Path> {
        match self {
            RunSource::Path(p) => Some(p),
            RunSource::Stdin | RunSource::Other(_) => None,
        }
    }
}

impl fmt::Display for RunSource {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            RunSource::Path(p) => write!(f, "{}", p.display()),
            RunSource::Stdin => f.write_str("-"),
            RunSource::Other(what) => f.write_str(what),
        }
    }
}

/// One run to follow.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RunSpec {
    /// Where its rows come from.
    pub source: RunSource,
    /// The name shown to the user (the path as given, or `-`).
    pub label: String,
    /// The pattern that found it, when it was found by a glob.
    pub found_by: Option<String>,
    /// The batch job whose log it is, when it was found by job discovery.
    pub job: Option<RunJob>,
}

/// The batch job a run belongs to (shown beside the run; passed to alert hooks).
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct RunJob {
    /// The job id as the user knows it (`123`, `123_4` for an array element).
    pub id: String,
    /// The job's name.
    pub name: String,
}

impl fmt::Display for RunJob {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        write!(f, "{} {}", self.id, self.name)
    }
}

impl RunSpec {
    /// A run of `source`, labelled as the source is written.
    pub fn new(source: RunSource) -> RunSpec {
        RunSpec {
            label: source.to_string(),
            source,
            found_by: None,
            job: None,
        }
    }
}

/// Identifies a run inside a [`super::Live`]: runs are numbered in the order they are added.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Hash, PartialOrd, Ord)]
pub struct RunId(pub usize);
