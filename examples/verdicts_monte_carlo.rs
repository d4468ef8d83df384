//! The larger Monte-Carlo check of plateau's verdicts: invented stationary AR(1) logs
//! (2,000–50,000 rows, φ in [0, 0.95], plain names and names that say nothing), healthy and
//! with one planted fault each, through plateau's reader and analysis; writes the table of
//! false-alarm and detection rates with 95 % Wilson intervals and the median detection
//! delays to `docs/verdicts.md`.
//!
//! ```text
//! cargo run --release --example verdicts_monte_carlo [RUNS_PER_FAULT] [OUT]
//! ```

#![allow(clippy::unwrap_used, clippy::expect_used)] // a command for developers

#[path = "../tests/support/verdicts_mc.rs"]
mod mc;

use std::fmt::Write as _;

use mc::{draw, median, run_case, wilson, Fault, Tally};

const SEED: u64 = 7_770_001;

fn pct(k: usize, n: usize) -> String {
    let (lo, hi) = wilson(k, n);
    format!(
        "{:.1} % ({:.1}–{:.1} %)",
        100.0 * k as f64 / n.max(1) as f64,
        100.0 * lo,
        100.0 * hi
    )
}

fn main() {
    let args: Vec<String> = std::env::args().collect();
    let runs: usize = args.get(1).and_then(|a| a.parse().ok()).unwrap_or(400);
    let out = args
        .get(2)
        .cloned()
        .unwrap_or_else(|| "docs/verdicts.md".to_string());
    let started = std::time::Instant::now();
    let mut tallies = Vec::new();
    // MC_FAULTS=name,name... runs only those (names as in `Fault::name`'s first word).
    let only: Option<Vec<String>> = std::env::var("MC_FAULTS")
        .ok()
        .map(|v| v.split(',').map(str::to_string).collect());
    for fault in Fault::ALL {
        let first = fault.name().split(' ').next().unwrap_or("").to_string();
        if only.as_ref().is_some_and(|o| !o.contains(&first)) {
            continue;
        }
        let n = if fault == Fault::None { 3 * runs } else { runs };
        // Two threads, each its share of the cases; tallied in case order.
        let threads = std::thread::available_parallelism().map_or(1, |p| p.get().min(2));
        let outcomes: Vec<(mc::Case, mc::Outcome)> = std::thread::scope(|s| {
            let handles: Vec<_> = (0..threads)
                .map(|k| {
                    s.spawn(move || {
                        (k..n)
                            .step_by(threads)
                            .map(|i| {
                                let case = draw(fault, i, SEED, 2_000, 50_000);
                                (i, case, run_case(&case))
                            })
                            .collect::<Vec<_>>()
                    })
                })
                .collect();
            let mut all: Vec<_> = handles
                .into_iter()
                .flat_map(|h| h.join().unwrap())
                .collect();
            all.sort_by_key(|x| x.0);
            all.into_iter().map(|(_, c, o)| (c, o)).collect()
        });
        let mut t = Tally::default();
        for (case, o) in &outcomes {
            t.add(case, o);
        }
        eprintln!("{}: {} runs", fault.name(), t.runs);
        for m in &t.misses {
            eprintln!("  missed: {m:?}");
        }
        tallies.push((fault, t));
    }
    let mut md = String::new();
    writeln!(md, "# Verdicts: Monte-Carlo rates").unwrap();
    writeln!(
        md,
        "\nWritten by `cargo run --release --example verdicts_monte_carlo {runs}` (seed {SEED}, \
         {:.0} s). Invented logs: stationary AR(1) columns (temperature, pressure, potential and \
         total energy, plus step and time counters) of 2,000–50,000 rows (log-uniform) with φ \
         uniform in [0, 0.95]; every other log has names that say nothing (`c1 c2 ...`, the \
         off-target runs excepted: a target needs a temperature column). Each faulty log has \
         one planted fault on a random observable column. Rates with 95 % Wilson intervals.\n",
        started.elapsed().as_secs_f64()
    )
    .unwrap();
    writeln!(md, "| runs | n | target | result |").unwrap();
    writeln!(md, "|---|---|---|---|").unwrap();
    for (fault, t) in &tallies {
        match fault {
            Fault::None => {
                writeln!(
                    md,
                    "| healthy: called still changing | {} | ≤ 1 % | {} |",
                    t.runs,
                    pct(t.still_changing, t.runs)
                )
                .unwrap();
                writeln!(
                    md,
                    "| healthy: any warning, or status not steady | {} | ≤ 1 % | {} |",
                    t.runs,
                    pct(t.warned_or_not_steady, t.runs)
                )
                .unwrap();
            }
            _ => {
                writeln!(
                    md,
                    "| {}: detected | {} | ≥ 95 % | {} |",
                    fault.name(),
                    t.runs,
                    pct(t.detected, t.runs)
                )
                .unwrap();
                writeln!(
                    md,
                    "| {}: more than one alert for the episode | {} | 0 | {} |",
                    fault.name(),
                    t.runs,
                    pct(t.more_than_one_alert, t.runs)
                )
                .unwrap();
            }
        }
    }
    writeln!(md, "\n## Runs that missed a target\n").unwrap();
    let mut any = false;
    for (fault, t) in &tallies {
        if t.misses.is_empty() {
            continue;
        }
        any = true;
        let cases: Vec<String> = t
            .misses
            .iter()
            .take(8)
            .map(|c| format!("{} rows, φ = {:.2}", c.rows, c.phi))
            .collect();
        writeln!(
            md,
            "- {}: {} of {} ({}{})",
            fault.name(),
            t.misses.len(),
            t.runs,
            cases.join("; "),
            if t.misses.len() > 8 { "; ..." } else { "" }
        )
        .unwrap();
    }
    if !any {
        writeln!(md, "None.").unwrap();
    }
    writeln!(md, "\n## Detection delays (medians)\n").unwrap();
    for (fault, t) in &tallies {
        match fault {
            Fault::Runaway => writeln!(
                md,
                "- runaway: {} rows, {} e-folding times after the growth started from 1 SD \
                 (every detection before the first non-finite row, which comes 18.4 e-folding \
                 times after the start)",
                fmt(median(&t.delays_rows)),
                fmt(median(&t.delays_tau))
            )
            .unwrap(),
            Fault::OffTarget => writeln!(
                md,
                "- temperature 10 % off target (300 → 330 K over a tenth of the run, tolerance \
                 5 K): raised {} rows ({} ps) after the true mean left the 5 K band",
                fmt(median(&t.delays_rows)),
                fmt(median(&t.delays_rows) * mc::ROW_PS)
            )
            .unwrap(),
            Fault::Spike => writeln!(
                md,
                "- spike: at its own row in {} of {} runs",
                t.right_row, t.runs
            )
            .unwrap(),
            Fault::Transient => writeln!(
                md,
                "- initial transient (10 SD, time constant τ): run onset at {} τ",
                fmt(median(&t.delays_tau))
            )
            .unwrap(),
            _ => {}
        }
    }
    writeln!(md, "\n## What the rules promise (stated, not measured)\n").unwrap();
    writeln!(
        md,
        "- Runaway: growth is judged over windows of {:?} rows, each against the median and \
         robust SD of the rows before it; a window catches growth that is tenfold across it \
         and still accelerating: e-folding times up to about {} rows (window − 1)/ln 10. That \
         is the slowest growth caught: {:.0} rows per e-folding time (a tenfold rise every {} \
         rows). A far excursion ({} robust SDs of the rows just before it, for {} rows) is \
         also a runaway; it does not catch slower growth, whose recent rows rise with it. One \
         episode is one alert, cleared only after {} rows with no row flagged.",
        plateau::analysis::runaway_windows(20),
        plateau::analysis::runaway_windows(20)
            .iter()
            .map(|w| format!("{:.0}", (*w as f64 - 1.0) / std::f64::consts::LN_10))
            .collect::<Vec<_>>()
            .join(", "),
        (plateau::analysis::runaway_windows(20)[plateau::analysis::RUNAWAY_SCALES - 1] as f64
            - 1.0)
            / std::f64::consts::LN_10,
        plateau::analysis::runaway_windows(20)[plateau::analysis::RUNAWAY_SCALES - 1] - 1,
        plateau::analysis::RUNAWAY_FAR_SIGMAS,
        plateau::analysis::RUNAWAY_FAR_ROWS,
        plateau::analysis::runaway_windows(20)[plateau::analysis::RUNAWAY_SCALES - 1],
    )
    .unwrap();
    writeln!(
        md,
        "- Off-target: the window is set in correlation times, W = g · N_eff rows with N_eff \
         ≥ {} and large enough that the margin ({} standard errors of the window mean, from \
         the window's own SD and N_eff) is at most {} of the tolerance. After a step of the \
         mean to twice the tolerance beyond the target (10 % of 100 K with the 5 K default), \
         the window mean passes tolerance + margin once about three quarters of the window \
         are past the step: a delay of about 0.8 W rows (`tests/verdicts_regressions.rs` \
         checks ≤ 1.5 W on the 100 K case). A short window of W/{} rows with a margin of {} \
         of its own standard errors sees a large excursion sooner (six tolerances: within \
         W/4, checked on a noisy pressure). The alert is raised after a tenth of the short \
         window and cleared after {} windows back inside the tolerance.",
        plateau::alert::OFF_TARGET_MIN_NEFF,
        plateau::alert::Thresholds::default().off_target_sigmas,
        plateau::alert::OFF_TARGET_MARGIN_OF_TOLERANCE,
        plateau::alert::OFF_TARGET_SHORT_FRACTION,
        plateau::alert::OFF_TARGET_SHORT_SIGMAS,
        plateau::alert::OFF_TARGET_CLEAR_WINDOWS
    )
    .unwrap();
    std::fs::write(&out, md).unwrap();
    eprintln!("wrote {out}");
}

fn fmt(v: f64) -> String {
    if v.is_finite() {
        format!("{v:.3}")
            .trim_end_matches('0')
            .trim_end_matches('.')
            .to_string()
    } else {
        "-".to_string()
    }
}
