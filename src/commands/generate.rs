//! `plateau generate`: writes an invented scenario's log, for examples, rehearsals and
//! benchmarks.

use std::fs::File;
use std::io::{self, BufWriter, Write};

pub use crate::cli::GenerateArgs;
use crate::scenario::{write_log, ScenarioSpec};

/// Writes the requested log.
pub fn run(args: &GenerateArgs) -> io::Result<()> {
    if let Some(dir) = &args.stages {
        return write_stages(dir, args.seed);
    }
    let Some(scenario) = args.scenario else {
        return Err(io::Error::other("name a scenario or give --stages DIR"));
    };
    let mut spec = ScenarioSpec::new(scenario, args.style, args.rows);
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

/// The chain's file names, in stage order.
pub const STAGE_FILES: [&str; 5] = ["min.log", "heat.log", "nvt.log", "npt.log", "prod.log"];

/// Writes the five-stage preparation into `dir` (created if missing): prep.log and the
/// chain of [`STAGE_FILES`].
fn write_stages(dir: &std::path::Path, seed: u64) -> io::Result<()> {
    use crate::scenario::stages::{five_stage_logs, StagePlan};
    std::fs::create_dir_all(dir)?;
    let logs = five_stage_logs(&StagePlan {
        seed,
        ..StagePlan::default()
    });
    std::fs::write(dir.join("prep.log"), &logs.one_log)?;
    for (name, text) in STAGE_FILES.iter().zip(&logs.chain) {
        std::fs::write(dir.join(name), text)?;
    }
    Ok(())
}
