//! Reader throughput on a generated 10-column whitespace log (invented values).
//!
//! `cargo bench --bench parse` reports MB/s for: the sequential parser (`LogParser::feed`
//! on the whole buffer), the block stage alone (`parse_block`), and the two-core ingest
//! (`ingest::read_blocks`: two workers reading and parsing 1 MiB blocks, merged in order,
//! columns reserved from the input size); and the sequential parser
//! on a chatty log with a line of free text after every row.
#![allow(clippy::unwrap_used, clippy::expect_used)]

use std::hint::black_box;

use criterion::{criterion_group, criterion_main, Criterion, Throughput};
use plateau::ingest::{read_blocks, BLOCK_SIZE, WORKERS};
use plateau::parse::{parse_block, LogParser, ParseOptions};

/// About `target` bytes of a 10-column log: step, time, temperature, pressure, energies,
/// volume, density, with a header, as an MD code might print them.
fn generate(target: usize) -> Vec<u8> {
    let mut out = String::with_capacity(target + 200);
    out.push_str("# step time temp press epot ekin etot econs volume density\n");
    let mut x: u64 = 0x2545_F491_4F6C_DD1D;
    let mut noise = || {
        // xorshift64*: deterministic noise in [-0.5, 0.5)
        x ^= x >> 12;
        x ^= x << 25;
        x ^= x >> 27;
        (x.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11) as f64 / (1u64 << 53) as f64 - 0.5
    };
    let mut step = 0u64;
    while out.len() < target {
        let t = step as f64 * 0.002;
        let temp = 300.0 + 5.0 * noise();
        let epot = -45_000.0 + 150.0 * noise();
        let ekin = 11_200.0 + 180.0 * noise();
        out.push_str(&format!(
            "{step:>10} {t:>12.3} {temp:>10.3} {:>10.4} {epot:>14.5e} {ekin:>14.5e} {:>14.5e} {:>14.5e} {:>10.4} {:>10.3}\n",
            1.0 + 150.0 * noise(),
            epot + ekin,
            epot + ekin + 0.01 * noise(),
            27.0 + 0.1 * noise(),
            997.0 + 3.0 * noise(),
        ));
        step += 500;
    }
    out.into_bytes()
}

fn bench(c: &mut Criterion) {
    let log = generate(64 << 20);
    let mut g = c.benchmark_group("parse");
    g.throughput(Throughput::Bytes(log.len() as u64));
    g.sample_size(10);
    g.bench_function("sequential_feed", |b| {
        b.iter(|| {
            let mut p = LogParser::new(ParseOptions::default());
            p.feed(black_box(&log));
            p.finish();
            black_box(p.into_table().rows())
        })
    });
    g.bench_function("block_stage_only", |b| {
        b.iter(|| black_box(parse_block(black_box(&log), &ParseOptions::default()).1))
    });
    g.bench_function("two_core_ingest", |b| {
        b.iter(|| {
            let size = Some(log.len() as u64);
            let options = ParseOptions::default();
            let t = read_blocks(black_box(&log[..]), options, BLOCK_SIZE, WORKERS, size).unwrap();
            black_box(t.rows())
        })
    });
    g.finish();

    // A chatty log: a line of free text after every row.
    let chatty: Vec<u8> = log
        .split_inclusive(|&b| b == b'\n')
        .take(200_000)
        .flat_map(|row| {
            row.iter()
                .chain(b"Note: neighbour list rebuilt with a new cell grid\n")
        })
        .copied()
        .collect();
    let mut g = c.benchmark_group("parse_chatty");
    g.throughput(Throughput::Bytes(chatty.len() as u64));
    g.sample_size(10);
    g.bench_function("sequential_feed", |b| {
        b.iter(|| {
            let mut p = LogParser::new(ParseOptions::default());
            p.feed(black_box(&chatty));
            p.finish();
            black_box(p.into_table().rows())
        })
    });
    g.finish();
}

criterion_group!(benches, bench);
criterion_main!(benches);
