//! Regenerates the invented example logs under `demo-logs/` and their README:
//! `cargo run --example make_demo_logs`.
//!
//! The list of logs, their layouts and their stories live in `plateau::demo::examples`, so
//! the tests check the same list.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::Path;

use plateau::demo::examples::{readme, EXAMPLE_LOGS, FOLDER};
use plateau::scenario::write_log;

fn main() -> std::io::Result<()> {
    let folder = Path::new(env!("CARGO_MANIFEST_DIR")).join(FOLDER);
    std::fs::create_dir_all(&folder)?;
    for log in EXAMPLE_LOGS {
        let path = folder.join(log.file_name());
        let mut out = BufWriter::new(File::create(&path)?);
        write_log(&log.spec(), &mut out)?;
        out.flush()?;
        println!("{}: {}", path.display(), log.scenario.description());
    }
    std::fs::write(folder.join("README.md"), readme())?;
    println!("{}", folder.join("README.md").display());
    Ok(())
}
