//! Criterion benches for the statistics module: each statistic on 10⁶ rows (the O(n²)
//! trend tests on their 2000-point cap), "all statistics for 1,000,000 rows × 10
//! columns", and the whole analysis of a report (`Analyzer::update` on an invented
//! 10-column log of 10⁶ rows: every statistic, every per-row detector, on all cores).
//! Synthetic data made here (AR(1) noise with transients, and the `equilibration`
//! scenario); not run in CI.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers may fail loudly

use std::hint::black_box;

use criterion::{criterion_group, Criterion};
use plateau::analysis::{AnalysisOptions, Analyzer};
use plateau::parse::ParseOptions;
use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};
use plateau::stats::{self, Estimator, HampelOptions, RunawayOptions, SlopeSeMethod};
use plateau::table::RunTable;

const N: usize = 1_000_000;

/// xorshift64* + Box–Muller.
struct Rng(u64);
impl Rng {
    fn uniform(&mut self) -> f64 {
        self.0 ^= self.0 >> 12;
        self.0 ^= self.0 << 25;
        self.0 ^= self.0 >> 27;
        ((self.0.wrapping_mul(0x2545_F491_4F6C_DD1D) >> 11) as f64 + 0.5) / (1u64 << 53) as f64
    }
    fn normal(&mut self) -> f64 {
        let (u, v) = (self.uniform(), self.uniform());
        (-2.0 * u.ln()).sqrt() * (2.0 * std::f64::consts::PI * v).cos()
    }
}

/// Column `c`: offset + AR(1) (φ between 0.5 and 0.95) + a decaying transient.
fn column(c: usize, n: usize) -> Vec<f64> {
    let mut rng = Rng(0x9E37_79B9_7F4A_7C15 ^ (c as u64 + 1));
    let phi = 0.5 + 0.05 * c as f64;
    let tau = 2000.0 * (c + 1) as f64;
    let mut x = 0.0;
    (0..n)
        .map(|t| {
            x = phi * x + rng.normal();
            -1000.0 * c as f64 + x + 20.0 * (-(t as f64) / tau).exp()
        })
        .collect()
}

/// Everything the analysis layer computes for one column of a finished run.
fn all_for_column(t: &[f64], x: &[f64]) -> usize {
    let mut acc = 0usize;
    acc += stats::non_finite_positions(x).len();
    acc += stats::summarize(x).map_or(0, |s| s.count);
    let onset = stats::detect_equilibration(x);
    let start = onset.row().unwrap_or(x.len() / 2);
    let prod = &x[start..];
    let tp = &t[start..];
    // The onset already carries g of the production part (one FFT); only without an
    // onset is g computed separately.
    if onset.row().is_none() {
        acc += stats::inefficiency(prod).map_or(0, |g| g.lags_used);
    }
    acc += stats::block_average(prod).map_or(0, |b| b.levels.len());
    acc += stats::mser(x).map_or(0, |m| m.d);
    acc += stats::mser5(x).map_or(0, |m| m.d);
    acc += stats::drift(tp, prod, SlopeSeMethod::SqrtG, 0.95).map_or(0, |d| d.fit.n);
    acc += stats::trend_test(prod, 2000).map_or(0, |r| r.block_size);
    acc += stats::hampel(x, &HampelOptions::default()).len();
    acc += usize::from(stats::runaway(x, &RunawayOptions::default()).is_runaway());
    acc
}

/// An invented 10-column log (step, time and 8 analysed columns) of `rows` rows, parsed.
fn scenario_table(rows: u64) -> RunTable {
    let spec = ScenarioSpec::new(Scenario::Equilibration, LogStyle::Whitespace, rows);
    let mut text = Vec::new();
    write_log(&spec, &mut text).unwrap();
    plateau::ingest::read_with(&text[..], ParseOptions::default(), 16 << 20).unwrap()
}

/// The whole analysis of a finished file, as `plateau report` runs it.
fn analyse(table: &RunTable) -> usize {
    let mut analyzer = Analyzer::new(AnalysisOptions::default());
    let a = analyzer.update(table, true, None, false);
    a.columns.len() + analyzer.engine().alerts().len()
}

fn benches(c: &mut Criterion) {
    let x = column(3, N);
    let t: Vec<f64> = (0..N).map(|i| i as f64 * 0.002).collect();
    let mut g = c.benchmark_group("stats_1e6");
    g.sample_size(10);
    g.bench_function("summarize", |b| b.iter(|| stats::summarize(black_box(&x))));
    g.bench_function("moments", |b| {
        b.iter(|| stats::Moments::from_slice(black_box(&x)))
    });
    g.bench_function("acf_biased_fft", |b| {
        b.iter(|| stats::acf_biased(black_box(&x)))
    });
    for e in Estimator::ALL {
        g.bench_function(format!("inefficiency_{e}"), |b| {
            b.iter(|| stats::statistical_inefficiency(black_box(&x), e))
        });
    }
    g.bench_function("block_average", |b| {
        b.iter(|| stats::block_average(black_box(&x)))
    });
    g.bench_function("equilibration", |b| {
        b.iter(|| stats::detect_equilibration(black_box(&x)))
    });
    g.bench_function("mser", |b| b.iter(|| stats::mser(black_box(&x))));
    g.bench_function("mser5", |b| b.iter(|| stats::mser5(black_box(&x))));
    g.bench_function("ols", |b| {
        b.iter(|| stats::ols(black_box(&t), black_box(&x)))
    });
    for m in [
        SlopeSeMethod::SqrtG,
        SlopeSeMethod::Ar1,
        SlopeSeMethod::NeweyWest,
    ] {
        g.bench_function(format!("drift_{m:?}"), |b| {
            b.iter(|| stats::drift(black_box(&t), black_box(&x), m, 0.95))
        });
    }
    g.bench_function("trend_test_cap2000", |b| {
        b.iter(|| stats::trend_test(black_box(&x), 2000))
    });
    g.bench_function("hampel_k10", |b| {
        b.iter(|| stats::hampel(black_box(&x), &HampelOptions::default()))
    });
    g.bench_function("median_mad", |b| b.iter(|| stats::mad(black_box(&x))));
    g.bench_function("runaway", |b| {
        b.iter(|| stats::runaway(black_box(&x), &RunawayOptions::default()))
    });
    let temps: Vec<f64> = x.iter().map(|v| 300.0 + 0.1 * (v + 3000.0)).collect();
    g.bench_function("temperature_fluctuation", |b| {
        b.iter(|| stats::temperature_fluctuation(black_box(&temps), 2997.0, None, 0.999))
    });
    let arrival: Vec<f64> = (0..N).map(|i| (i / 100) as f64 * 0.5).collect();
    g.bench_function("throughput_window200", |b| {
        b.iter(|| stats::throughput(black_box(&arrival), black_box(&t), 200))
    });
    g.finish();

    let cols: Vec<Vec<f64>> = (0..10).map(|c| column(c, N)).collect();
    let mut g = c.benchmark_group("all_statistics");
    g.sample_size(10);
    g.bench_function("1e6_rows_x_10_columns", |b| {
        b.iter(|| {
            cols.iter()
                .map(|x| all_for_column(&t, black_box(x)))
                .sum::<usize>()
        })
    });
    let table = scenario_table(N as u64);
    g.bench_function("report_analysis_1e6_rows_x_10_columns", |b| {
        b.iter(|| analyse(black_box(&table)))
    });
    g.finish();
}

criterion_group!(stats_benches, benches);

/// `PLATEAU_STATS_PASSES=K` skips criterion: it builds the 10 columns and runs the
/// all-statistics pass K times, so `perf stat -e task-clock` with K = 0 and K > 0 gives the
/// CPU time per pass even on a machine shared with other jobs (wall time is then
/// meaningless). With `PLATEAU_ANALYSIS_FILE=LOG` as well it reads LOG instead and runs
/// the whole report analysis (`Analyzer::update`) K times.
fn main() {
    let passes = std::env::var("PLATEAU_STATS_PASSES")
        .ok()
        .and_then(|v| v.parse::<usize>().ok());
    if let (Some(k), Some(path)) = (passes, std::env::var_os("PLATEAU_ANALYSIS_FILE")) {
        let table =
            plateau::ingest::read_path(std::path::Path::new(&path), ParseOptions::default())
                .unwrap();
        let acc: usize = (0..k).map(|_| analyse(black_box(&table))).sum();
        println!("{acc}");
        return;
    }
    if let Some(k) = passes {
        let t: Vec<f64> = (0..N).map(|i| i as f64 * 0.002).collect();
        let cols: Vec<Vec<f64>> = (0..10).map(|c| column(c, N)).collect();
        let mut acc = 0usize;
        for _ in 0..k {
            acc += cols
                .iter()
                .map(|x| all_for_column(&t, black_box(x)))
                .sum::<usize>();
        }
        println!("{acc}");
        return;
    }
    stats_benches();
    Criterion::default().configure_from_args().final_summary();
}
