//! Regenerates the invented example logs under `demo-logs/`:
//! `cargo run --example make_demo_logs`.
//!
//! Each scenario is written in a different layout so that the examples also show column
//! mapping at work (whitespace, CSV, tab-separated in other units, tagged rows inside a chatty
//! log, fixed-width with `D` exponents).

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;

use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

fn main() -> std::io::Result<()> {
    let folder = Path::new(env!("CARGO_MANIFEST_DIR")).join("demo-logs");
    std::fs::create_dir_all(&folder)?;
    let plan = [
        (Scenario::Equilibration, LogStyle::Whitespace, 2000),
        (Scenario::Heating, LogStyle::Csv, 1500),
        (Scenario::NveDrift, LogStyle::Tab, 2000),
        (Scenario::BlowUp, LogStyle::Fortran, 1200),
        (Scenario::Stalled, LogStyle::Tagged, 800),
        (Scenario::ThermostatFailure, LogStyle::Whitespace, 2000),
    ];
    for (scenario, style, rows) in plan {
        let spec = ScenarioSpec::new(scenario, style, rows);
        let path = folder.join(format!("{}.{}", scenario.name(), style.extension()));
        let mut out = BufWriter::new(File::create(&path)?);
        write_log(&spec, &mut out)?;
        out.flush()?;
        println!("{}: {}", path.display(), scenario.description());
    }
    Ok(())
}
