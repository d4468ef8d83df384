//! A budgeted, seeded mutation fuzzer for plateau's readers on stable Rust, running the
//! same target bodies as the cargo-fuzz targets (`fuzz/src/lib.rs`):
//!
//! ```text
//! cargo run --release --example fuzz_mutate -- TARGET SECONDS [SEED]
//! cargo run --release --example fuzz_mutate -- all SECONDS [SEED]
//! ```
//!
//! It is not coverage-guided (libFuzzer is: `scripts/fuzz.sh`); it starts from seed inputs
//! (the example logs of `demo-logs/`, the test fixtures, short texts of each grammar) and
//! applies random mutations (bit flips, byte and chunk insertions, deletions, duplications,
//! splices of two inputs, tokens of the trade such as `nan`, `****`, `1D+03`, `\r`, `#`,
//! header words, units) with a seeded xorshift generator, so a run is repeatable. A panic
//! is a crash: the input is written to `fuzz/artifacts/TARGET/crash-HASH` and the run goes
//! on. It prints executions and crashes per target (recorded in docs/reliability.md).

#![allow(clippy::panic, clippy::unwrap_used, clippy::expect_used)] // the target bodies assert

#[path = "../fuzz/src/lib.rs"]
#[allow(dead_code)]
mod targets;

use std::collections::hash_map::DefaultHasher;
use std::hash::{Hash, Hasher};
use std::path::{Path, PathBuf};
use std::time::{Duration, Instant};

/// xorshift64* (Vigna 2016): small, seeded, good enough to pick mutations.
struct Rng(u64);

impl Rng {
    fn next(&mut self) -> u64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        self.0.wrapping_mul(0x2545_F491_4F6C_DD1D)
    }
    fn below(&mut self, n: usize) -> usize {
        if n == 0 {
            0
        } else {
            (self.next() % n as u64) as usize
        }
    }
}

const TOKENS: &[&[u8]] = &[
    b"nan",
    b"NaN",
    b"inf",
    b"-inf",
    b"****",
    b"1D+03",
    b"1.5E-310",
    b"1e999",
    b"-0",
    b"\r",
    b"\r\n",
    b"\n",
    b"\t",
    b",",
    b" ",
    b"#",
    b"@",
    b";",
    b"%",
    b"\"",
    b"\0",
    b"\xff",
    b"\xc3\x28",
    b"\x1b[2J",
    b"step",
    b"time",
    b"Temperature (K)",
    b"Pressure [bar]",
    b"Total Energy",
    b"Volume (A^3)",
    b"Density (g/cm^3)",
    b"DATA",
    b"kJ/mol",
    b"kcal/mol",
    b"eV",
    b"atm",
    b"fs",
    b"ns",
    b"steps",
    b"=",
    b"0ps=10K",
    b",50ps=300K",
    b"K",
    b"degC",
    b"99999999999999999999",
    b"0",
    b"1",
    b"-1",
    b"1.0",
    b"[layouts.x]",
    b"map = [\"step=1\"]",
    b"keep-rows = ",
    b"[alerts]",
    b"delimiter = \"comma\"",
    b"timestep = \"2fs\"",
];

fn mutate(rng: &mut Rng, input: &mut Vec<u8>, pool: &[Vec<u8>], max_len: usize) {
    let rounds = 1 + rng.below(6);
    for _ in 0..rounds {
        let len = input.len();
        match rng.below(9) {
            0 if len > 0 => {
                let i = rng.below(len);
                input[i] ^= 1 << rng.below(8);
            }
            1 if len > 0 => {
                let i = rng.below(len);
                input[i] = rng.next() as u8;
            }
            2 => {
                let t = TOKENS[rng.below(TOKENS.len())];
                let at = rng.below(len + 1);
                input.splice(at..at, t.iter().copied());
            }
            3 if len > 0 => {
                let a = rng.below(len);
                let b = (a + 1 + rng.below(64)).min(len);
                input.drain(a..b);
            }
            4 if len > 0 => {
                // Duplicate a chunk (repeated lines, headers, restarts).
                let a = rng.below(len);
                let b = (a + 1 + rng.below(256)).min(len);
                let chunk = input[a..b].to_vec();
                let at = rng.below(len + 1);
                input.splice(at..at, chunk);
            }
            5 if !pool.is_empty() => {
                // Splice: the head of this input, the tail of another.
                let other = &pool[rng.below(pool.len())];
                let cut = rng.below(len + 1);
                let from = rng.below(other.len() + 1);
                input.truncate(cut);
                input.extend_from_slice(&other[from..]);
            }
            6 if len > 0 => {
                // A digit run made long (overlong numbers, huge counters).
                let at = rng.below(len + 1);
                let n = 1 + rng.below(40);
                input.splice(at..at, std::iter::repeat_n(b'9', n));
            }
            7 if len > 1 => {
                let a = rng.below(len);
                let b = rng.below(len);
                input.swap(a, b);
            }
            _ => {
                let at = rng.below(len + 1);
                input.insert(at, rng.next() as u8);
            }
        }
    }
    input.truncate(max_len);
}

fn files_under(dir: &Path, out: &mut Vec<PathBuf>) {
    let Ok(entries) = std::fs::read_dir(dir) else {
        return;
    };
    let mut paths: Vec<PathBuf> = entries.filter_map(|e| e.ok().map(|e| e.path())).collect();
    paths.sort();
    for p in paths {
        if p.is_dir() {
            files_under(&p, out);
        } else {
            out.push(p);
        }
    }
}

/// Seed inputs for a target (the option selector and cut bytes in front where it has them).
fn seeds(target: &str, root: &Path) -> Vec<Vec<u8>> {
    let text_seeds: &[&str] = match target {
        "units" => &[
            "K", "degC", "kJ/mol", "kcal/mol", "eV", "hartree", "Ry", "bar", "atm", "Pa", "MPa",
            "GPa", "fs", "ps", "ns", "Å^3", "nm^3", "g/cm^3", "kg/m³", "2fs", "10ns",
            "500000steps", "300K", "1atm", "500ms", "10min", "1h",
        ],
        "schedule" => &[
            "\u{1}0ps=10K,50ps=300K",
            "\u{1}300K",
            "\u{2}0=1atm,1000steps=1bar,2ns=5bar",
        ],
        "header_layout" => &[
            "step time(ps) Temperature (K) Pressure [bar] Total Energy (kJ/mol)",
            "Step,Time,Temp/K,Press/atm,Volume (A^3)",
            "   Step     Time    Kinetic En.   Potential   Total Energy",
        ],
        "config" => &[
            "layout = \"a\"\n[layouts.a]\nmap = [\"step=1\", \"temperature=3:K\"]\ndelimiter = \"comma\"\ntimestep = \"2fs\"\n[alerts]\n",
            "keep-rows = 5000\nrow-tag = \"DATA\"\ncomment = [\"#\", \"@\"]\natoms = 1000\nensemble = \"nvt\"\n",
        ],
        _ => &[],
    };
    let mut out: Vec<Vec<u8>> = text_seeds.iter().map(|s| s.as_bytes().to_vec()).collect();
    let mut files = Vec::new();
    match target {
        "block_parser" | "log_parser" => {
            files_under(&root.join("demo-logs"), &mut files);
            files_under(&root.join("tests/fixtures/logs"), &mut files);
            files_under(&root.join("tests/fixtures/alerts"), &mut files);
            files.retain(|p| p.extension().is_some_and(|e| e != "md" && e != "json"));
        }
        "config" => {
            files_under(&root.join("tests/fixtures/configs_valid"), &mut files);
            files_under(&root.join("tests/fixtures/configs_invalid"), &mut files);
        }
        _ => {}
    }
    let prefix: &[u8] = match target {
        "block_parser" => &[0],
        "log_parser" => &[0, 64, 128],
        _ => &[],
    };
    for f in files {
        if let Ok(bytes) = std::fs::read(&f) {
            let mut input = prefix.to_vec();
            input.extend_from_slice(&bytes[..bytes.len().min(16 * 1024)]);
            out.push(input);
        }
    }
    if out.is_empty() {
        out.push(Vec::new());
    }
    out
}

fn hash(bytes: &[u8]) -> u64 {
    let mut h = DefaultHasher::new();
    bytes.hash(&mut h);
    h.finish()
}

fn run_target(name: &str, body: fn(&[u8]), budget: Duration, seed: u64, root: &Path) -> bool {
    let pool = seeds(name, root);
    let max_len = match name {
        "block_parser" | "log_parser" => 32 * 1024,
        _ => 4096,
    };
    let mut rng = Rng(seed ^ hash(name.as_bytes()) | 1);
    let start = Instant::now();
    let (mut execs, mut crashes) = (0u64, 0u64);
    let mut seen_crashes = std::collections::HashSet::new();
    // Each seed once as it is, then mutations until the budget is spent.
    let mut queue: Vec<Vec<u8>> = pool.clone();
    while start.elapsed() < budget {
        let input = match queue.pop() {
            Some(i) => i,
            None => {
                let mut i = pool[rng.below(pool.len())].clone();
                mutate(&mut rng, &mut i, &pool, max_len);
                i
            }
        };
        execs += 1;
        let result = std::panic::catch_unwind(|| body(&input));
        if result.is_err() {
            let h = hash(&input);
            if seen_crashes.insert(h) {
                crashes += 1;
                let dir = root.join("fuzz/artifacts").join(name);
                let _ = std::fs::create_dir_all(&dir);
                let path = dir.join(format!("crash-{h:016x}"));
                let _ = std::fs::write(&path, &input);
                eprintln!("{name}: crash saved to {}", path.display());
            }
        }
    }
    let secs = start.elapsed().as_secs_f64();
    println!(
        "{name}: {execs} executions in {secs:.0} s ({:.0}/s), {crashes} distinct crashing inputs, seed {seed}",
        execs as f64 / secs
    );
    crashes == 0
}

fn main() {
    let args: Vec<String> = std::env::args().skip(1).collect();
    let target = args.first().map(String::as_str).unwrap_or("all");
    let seconds: u64 = args.get(1).and_then(|s| s.parse().ok()).unwrap_or(60);
    let seed: u64 = args
        .get(2)
        .and_then(|s| s.parse().ok())
        .unwrap_or(20_261_203);
    let root = PathBuf::from(env!("CARGO_MANIFEST_DIR"));
    // Crashes are reported by the summary; keep the default hook's message short.
    std::panic::set_hook(Box::new(|info| {
        eprintln!("panic: {info}");
    }));
    let mut clean = true;
    for (name, body) in targets::TARGETS {
        if target == "all" || target == name {
            clean &= run_target(name, body, Duration::from_secs(seconds), seed, &root);
        }
    }
    if !clean {
        std::process::exit(1);
    }
}
