//! `plateau generate`: writes an invented scenario's log, for examples, rehearsals and
//! benchmarks.

use std::fs::File;
use std::io::{self, BufWriter, Write};

pub use crate::cli::GenerateArgs;
use crate::scenario::{write_log, ScenarioSpec};

/// Writes the requested log.
pub fn run(args: &GenerateArgs) -> io::Result<()> {
    let mut spec = ScenarioSpec::new(args.scenario, args.style, args.rows);
    spec.seed = args.seed;
    if let Some(atoms) = args.atoms {
        spec.atoms = atoms;
    }
    match &args.output {
        Some(path) => {
            let mut out = BufWriter::with_capacity(1 << 20, File::create(path)?);
            write_log(&spec, &mut out)?;
            out.flush()
        }
        None => {
            let stdout = io::stdout();
            let mut out = BufWriter::with_capacity(1 << 20, stdout.lock());
            write_log(&spec, &mut out)?;
            out.flush()
        }
    }
}
