//! Seeded Monte-Carlo check of the verdicts, sized for CI (a debug build, each test well
//! under a minute on two cores): invented stationary AR(1) logs (φ in [0, 0.95],
//! 2,000–3,000 rows, plain names and names that say nothing) healthy and with one planted
//! fault each; the targets of the verdicts are asserted. The cases of a study run on two
//! threads. `examples/verdicts_monte_carlo.rs` runs the larger version (2,000–50,000 rows,
//! thousands of runs) and writes `docs/verdicts.md`.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test code

#[path = "support/verdicts_mc.rs"]
mod mc;

use mc::{draw, run_case, Fault, Tally};

const SEED: u64 = 20_261_203;
const MIN_ROWS: usize = 2_000;
const MAX_ROWS: usize = 3_000;

/// The cases `0..runs` of one fault, on two threads, tallied in case order.
fn study(fault: Fault, runs: usize) -> Tally {
    let outcomes: Vec<(usize, mc::Case, mc::Outcome)> = std::thread::scope(|s| {
        let handles: Vec<_> = (0..2)
            .map(|k| {
                s.spawn(move || {
                    (k..runs)
                        .step_by(2)
                        .map(|i| {
                            let case = draw(fault, i, SEED, MIN_ROWS, MAX_ROWS);
                            (i, case, run_case(&case))
                        })
                        .collect::<Vec<_>>()
                })
            })
            .collect();
        handles
            .into_iter()
            .flat_map(|h| h.join().unwrap())
            .collect()
    });
    let mut sorted = outcomes;
    sorted.sort_by_key(|x| x.0);
    let mut t = Tally::default();
    for (_, case, o) in &sorted {
        t.add(case, o);
    }
    t
}

/// Healthy runs: at most 1 % called "still changing", at most 1 % raise a warning or end
/// in a status other than steady (targets of the verdicts; 100 runs allow 1).
#[test]
fn healthy_runs_raise_nothing_and_are_steady() {
    let t = study(Fault::None, 100);
    assert!(t.still_changing <= 1, "{t:#?}");
    assert!(t.warned_or_not_steady <= 1, "{t:#?}");
}

/// Each planted fault is found in at least 95 % of runs (19 of 20), with at most one alert
/// for its episode (spikes at their row, runaways before their first non-finite row).
#[test]
fn planted_faults_are_found_once() {
    for fault in [
        Fault::Drift,
        Fault::Spike,
        Fault::Runaway,
        Fault::OffTarget,
        Fault::Transient,
    ] {
        let runs = 20;
        let t = study(fault, runs);
        assert!(
            t.detected * 100 >= 95 * runs,
            "{}: found in {} of {runs}: {t:#?}",
            fault.name(),
            t.detected
        );
        assert_eq!(t.more_than_one_alert, 0, "{}: {t:#?}", fault.name());
        if fault == Fault::Spike {
            assert_eq!(t.right_row, t.detected);
        }
    }
}

#[test]
#[ignore = "debugging aid"]
fn debug_cases() {
    for fault in Fault::ALL {
        let runs = if fault == Fault::None { 200 } else { 30 };
        for i in 0..runs {
            let case = draw(fault, i, SEED, MIN_ROWS, MAX_ROWS);
            let planted = mc::generate(&case);
            let (a, alerts) = mc::analyse(&case, &planted);
            let o = mc::judge(&case, &planted, &a, &alerts);
            let bad = match fault {
                Fault::None => o.warned || o.status != plateau::alert::RunStatus::Steady,
                _ => !o.detected || o.episode_alerts > 1,
            };
            if bad {
                println!(
                    "--- {fault:?} {i} {case:?} planted col {:?} row {:?} nf {:?} tau {:?}",
                    planted.column, planted.row, planted.first_nonfinite, planted.tau
                );
                println!(
                    "status {:?} {} onset {:?}",
                    a.status, a.status_reason, a.equilibration
                );
                for c in &a.columns {
                    println!(
                        "  {} role {:?} eq {:?} trend {:?}",
                        c.name,
                        c.role,
                        c.equilibration,
                        c.trend
                            .as_ref()
                            .map(|t| (t.p_value, t.change, t.sem, t.still_changing))
                    );
                }
                for al in alerts.iter().take(5) {
                    println!(
                        "  alert {:?} {:?} {:?} row {:?} raised {:?}: {}",
                        al.severity, al.kind, al.column, al.row, al.raised_row, al.message
                    );
                }
            }
        }
    }
}
