//! Statistics: edge cases, invariants (proptest), synthetic scenarios with known answers
//! from theory, and a 10⁷-row pass over the O(N) functions.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers may fail loudly

use plateau::stats::{self, Equilibration, Estimator, FluctuationVerdict, SlopeSeMethod};
use proptest::prelude::*;

/// xorshift64* (Vigna 2016) + Box–Muller: a small deterministic normal generator.
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
    /// AR(1) with unit innovations, stationary start.
    fn ar1(&mut self, n: usize, phi: f64) -> Vec<f64> {
        let mut x = self.normal() / (1.0 - phi * phi).sqrt();
        (0..n)
            .map(|_| {
                let v = x;
                x = phi * x + self.normal();
                v
            })
            .collect()
    }
}

#[test]
fn edge_cases_return_none_or_flags_not_nan() {
    let empty: [f64; 0] = [];
    let one = [1.0];
    let constant = [2.0; 200];
    let all_nan = [f64::NAN; 200];
    for x in [&empty[..], &one[..]] {
        assert_eq!(stats::std_dev(x), None);
        assert!(stats::acf_biased(x).is_none());
        assert!(stats::inefficiency(x).is_none());
        assert!(stats::block_average(x).is_none());
        assert!(stats::mser(x).is_none());
        assert!(stats::mann_kendall(x).is_none());
        assert!(stats::trend_test(x, 2000).is_none());
        assert!(stats::drift(x, x, SlopeSeMethod::SqrtG, 0.95).is_none());
        assert_eq!(stats::detect_equilibration(x), Equilibration::TooShort);
        assert!(stats::hampel(x, &Default::default()).is_empty());
        assert!(!stats::runaway(x, &Default::default()).is_runaway());
    }
    // Constant column: g = 1 with the flag (METHODS §0), onset at 0, no trend, no spikes.
    let g = stats::inefficiency(&constant).unwrap();
    assert!(g.constant && g.g == 1.0);
    assert_eq!(stats::acf_biased(&constant), None);
    assert!(matches!(
        stats::detect_equilibration(&constant),
        Equilibration::Onset { row: 0, .. }
    ));
    assert!(stats::mann_kendall(&constant).is_none());
    assert!(stats::hampel(&constant, &Default::default()).is_empty());
    assert_eq!(stats::std_dev(&constant), Some(0.0));
    assert!(stats::temperature_fluctuation(&constant, 100.0, None, 0.99).is_some());
    // All NaN: the helper reports every row; nothing returns NaN.
    assert_eq!(stats::non_finite_positions(&all_nan).len(), 200);
    assert_eq!(stats::mean(&all_nan), None);
    assert_eq!(stats::std_dev(&all_nan), None);
    assert!(stats::inefficiency(&all_nan).is_none());
    assert!(stats::block_average(&all_nan).is_none());
    assert!(stats::mser(&all_nan).is_none());
    assert!(stats::median(&all_nan).is_none());
    assert!(stats::hampel(&all_nan, &Default::default()).is_empty());
    assert!(!stats::runaway(&all_nan, &Default::default()).is_runaway());
    let t: Vec<f64> = (0..200).map(|i| i as f64).collect();
    assert!(stats::ols(&t, &all_nan).is_none());
    assert!(!matches!(
        stats::detect_equilibration(&all_nan),
        Equilibration::Onset { .. }
    ));
}

#[test]
fn slow_relaxation_is_not_yet() {
    // A series still relaxing over its whole length (10·e^{−t/2000} + noise, N = 2000) has
    // no equilibrated part: the Contract ("Onset") requires `not-yet`.
    let mut rng = Rng(7);
    let y: Vec<f64> = (0..2000)
        .map(|t| 10.0 * (-(t as f64) / 2000.0).exp() + 0.1 * rng.normal())
        .collect();
    assert_eq!(stats::detect_equilibration(&y), Equilibration::NotYet);
    // A straight ramp is never equilibrated either.
    let ramp: Vec<f64> = (0..3000).map(|t| 0.01 * t as f64 + rng.normal()).collect();
    assert_eq!(stats::detect_equilibration(&ramp), Equilibration::NotYet);
}

#[test]
fn long_series_use_block_means() {
    // Stationary AR(1), φ = 0.8, N = 60 000 (block path, b = 3): onset at or near 0
    // (Contract; Chodera 2016). g of the production part from full resolution: theory 9
    // (closed form (1+φ)/(1−φ)), sampling noise allowed [6, 13] (METHODS §1.2).
    let mut rng = Rng(11);
    let x = rng.ar1(60_000, 0.8);
    match stats::detect_equilibration(&x) {
        Equilibration::Onset { row, g, .. } => {
            assert!(row <= 6000, "{row}");
            assert!((6.0..=13.0).contains(&g), "{g}");
        }
        other => panic!("{other:?}"),
    }
    // Same noise plus a transient 10·e^{−t/5000}: the onset lies where the transient has
    // decayed to within ~2 noise SD (1.67·2) and well before the N/2 limit (common
    // practice, by analogy with METHODS §2 check window).
    let y: Vec<f64> = x
        .iter()
        .enumerate()
        .map(|(t, v)| v + 10.0 * (-(t as f64) / 5000.0).exp())
        .collect();
    match stats::detect_equilibration(&y) {
        Equilibration::Onset { row, .. } => assert!((5000..=25_000).contains(&row), "{row}"),
        other => panic!("{other:?}"),
    }
}

#[test]
fn runaway_is_flagged_before_values_turn_non_finite() {
    // Noise, then exponential growth 1e-3·e^{0.2 k}: flagged long before overflow
    // (METHODS §8 growth rule), never on stationary noise or a slow linear ramp.
    let mut rng = Rng(3);
    let mut x = rng.ar1(500, 0.5);
    for k in 0..5000 {
        x.push(rng.normal() + 1e-3 * (0.2 * k as f64).exp());
    }
    let first_bad = stats::non_finite_positions(&x)[0];
    let opts = stats::RunawayOptions::default();
    let flagged = (40..x.len())
        .find(|&end| stats::runaway(&x[..end], &opts).is_runaway())
        .unwrap();
    assert!(flagged < first_bad, "{flagged} vs {first_bad}");
    assert!(
        flagged < 600,
        "flagged at {flagged}: growth is visible within ~100 samples"
    );
    let quiet = rng.ar1(1500, 0.8);
    let ramp: Vec<f64> = (0..1500).map(|t| 0.005 * t as f64 + rng.normal()).collect();
    for s in [&quiet, &ramp] {
        for end in (40..s.len()).step_by(7) {
            assert!(
                !stats::runaway(&s[..end], &opts).is_runaway(),
                "false alarm at {end}"
            );
        }
    }
}

fn chi2_temperatures(rng: &mut Rng, n: usize, ndf: usize, t0: f64) -> Vec<f64> {
    (0..n)
        .map(|_| t0 * (0..ndf).map(|_| rng.normal().powi(2)).sum::<f64>() / ndf as f64)
        .collect()
}

#[test]
fn fluctuation_verdicts() {
    // Canonical T_inst = T·χ²(N_df)/N_df (METHODS §6): consistent; the same samples with
    // fluctuations halved (weak-coupling thermostat) too small, doubled too large.
    let mut rng = Rng(5);
    let ndf = 30;
    let t = chi2_temperatures(&mut rng, 4000, ndf, 300.0);
    let check = |v: &[f64]| stats::temperature_fluctuation(v, ndf as f64, None, 0.999).unwrap();
    let c = check(&t);
    assert_eq!(
        c.verdict,
        FluctuationVerdict::Consistent,
        "{}",
        c.describe()
    );
    assert!(c.describe().contains("N_df = 30"));
    let small: Vec<f64> = t.iter().map(|v| 300.0 + 0.5 * (v - 300.0)).collect();
    assert_eq!(check(&small).verdict, FluctuationVerdict::TooSmall);
    let large: Vec<f64> = t.iter().map(|v| 300.0 + 2.0 * (v - 300.0)).collect();
    assert_eq!(check(&large).verdict, FluctuationVerdict::TooLarge);
    assert!(stats::temperature_fluctuation(&t, 0.0, None, 0.99).is_none());
    assert!(stats::temperature_fluctuation(&t[..2], 30.0, None, 0.99).is_none());
}

#[test]
fn ensemble_inference() {
    // Common practice (no source): volume varies -> NPT; total-energy SD far below the
    // kinetic-energy SD -> NVE; otherwise NVT.
    let mut rng = Rng(9);
    let kin: Vec<f64> = (0..500).map(|_| 1000.0 + 30.0 * rng.normal()).collect();
    let tot_nve: Vec<f64> = (0..500).map(|_| -5000.0 + 0.3 * rng.normal()).collect();
    let tot_nvt: Vec<f64> = (0..500).map(|_| -5000.0 + 60.0 * rng.normal()).collect();
    let vol_fixed = vec![27.0; 500];
    let vol_npt: Vec<f64> = (0..500).map(|_| 27.0 + 0.05 * rng.normal()).collect();
    let e = |t: &[f64], v: &[f64]| stats::infer_ensemble(Some(t), Some(&kin), Some(v)).unwrap();
    assert_eq!(e(&tot_nve, &vol_fixed).ensemble, stats::Ensemble::Nve);
    assert_eq!(e(&tot_nvt, &vol_fixed).ensemble, stats::Ensemble::Nvt);
    assert_eq!(e(&tot_nve, &vol_npt).ensemble, stats::Ensemble::Npt);
    assert!(e(&tot_nve, &vol_npt).reason.contains("volume"));
    assert!(stats::infer_ensemble(None, None, None).is_none());
}

#[test]
fn ten_million_rows_linear_functions() {
    // O(N) functions at 10^7 rows; checks against the closed form of a ramp 0..N−1:
    // mean (N−1)/2, sample variance N(N+1)/12, min 0, max N−1.
    let n = 10_000_000usize;
    let x: Vec<f64> = (0..n).map(|i| i as f64).collect();
    let s = stats::summarize(&x).unwrap();
    let nf = n as f64;
    assert!((s.mean - (nf - 1.0) / 2.0).abs() < 1e-6);
    assert!((s.std.unwrap().powi(2) / (nf * (nf + 1.0) / 12.0) - 1.0).abs() < 1e-12);
    assert_eq!((s.min, s.max), (0.0, nf - 1.0));
    let m = stats::Moments::from_slice(&x);
    assert!((m.variance().unwrap() / (nf * (nf + 1.0) / 12.0) - 1.0).abs() < 1e-9);
    assert!(stats::non_finite_positions(&x).is_empty());
    // MSER on a ramp keeps the shortest allowed tail: d* = N/2 − 1, at the limit.
    let r = stats::mser(&x).unwrap();
    assert_eq!(r.d, n / 2 - 1);
    assert!(r.near_limit);
}

fn naive_mser(y: &[f64]) -> (usize, f64) {
    let n = y.len();
    let mut best = (0, f64::INFINITY);
    for d in 0..n / 2 {
        let tail = &y[d..];
        let m = tail.iter().sum::<f64>() / tail.len() as f64;
        let v = tail.iter().map(|a| (a - m).powi(2)).sum::<f64>() / ((n - d) as f64).powi(2);
        if v < best.1 {
            best = (d, v);
        }
    }
    best
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(64))]

    #[test]
    fn slope_se_is_shift_invariant(
        y in prop::collection::vec(-100.0f64..100.0, 8..200),
        c in -1e4f64..1e4,
        dt in 0.1f64..10.0,
    ) {
        // Adding a constant to y or t changes neither slope nor any SE (OLS algebra).
        let t: Vec<f64> = (0..y.len()).map(|i| i as f64 * dt).collect();
        let ys: Vec<f64> = y.iter().map(|v| v + c).collect();
        let ts: Vec<f64> = t.iter().map(|v| v + c).collect();
        let a = stats::ols(&t, &y).unwrap();
        for (tt, yy) in [(&t, &ys), (&ts, &y)] {
            let b = stats::ols(tt, yy).unwrap();
            prop_assert!((a.slope - b.slope).abs() <= 1e-9 * (1.0 + a.slope.abs()));
            let (sa, sb) = (a.se_slope.unwrap(), b.se_slope.unwrap());
            prop_assert!((sa - sb).abs() <= 1e-7 * (1.0 + sa));
        }
        for m in [SlopeSeMethod::SqrtG, SlopeSeMethod::NeweyWest] {
            if let (Some(p), Some(q)) = (stats::drift(&t, &y, m, 0.95), stats::drift(&t, &ys, m, 0.95)) {
                prop_assert!((p.se - q.se).abs() <= 1e-6 * (1.0 + p.se));
            }
        }
    }

    #[test]
    fn g_is_at_least_one(x in prop::collection::vec(-10.0f64..10.0, 2..300)) {
        for e in Estimator::ALL {
            let r = stats::statistical_inefficiency(&x, e).unwrap();
            prop_assert!(r.g >= 1.0 && r.g.is_finite());
            prop_assert!(r.n_eff <= x.len() as f64 + 1e-9);
        }
    }

    #[test]
    fn moments_merge_equals_whole(x in prop::collection::vec(-1e3f64..1e3, 2..200), cut in 0usize..200) {
        let cut = cut.min(x.len());
        let mut a = stats::Moments::from_slice(&x[..cut]);
        a.merge(&stats::Moments::from_slice(&x[cut..]));
        let v = stats::variance(&x).unwrap();
        prop_assert!((a.variance().unwrap() - v).abs() <= 1e-9 * (1.0 + v));
        prop_assert!((a.mean().unwrap() - stats::mean(&x).unwrap()).abs() <= 1e-9);
    }

    #[test]
    fn mser_suffix_sums_equal_naive(x in prop::collection::vec(-50.0f64..50.0, 2..120)) {
        let fast = stats::mser(&x).unwrap();
        let (d, v) = naive_mser(&x);
        prop_assert!((fast.value - v).abs() <= 1e-9 * (1.0 + v));
        if fast.d != d {
            // Only a near-tie may pick another index: the naive MSER at our d* is the minimum.
            let (_, at) = naive_mser(&x[fast.d..]);
            let tail = &x[fast.d..];
            let m = tail.iter().sum::<f64>() / tail.len() as f64;
            let here = tail.iter().map(|a| (a - m).powi(2)).sum::<f64>() / (tail.len() as f64).powi(2);
            prop_assert!((here - v).abs() <= 1e-9 * (1.0 + v), "{} {}", here, at);
        }
    }

    #[test]
    fn mann_kendall_is_antisymmetric(x in prop::collection::vec(-5i32..5, 3..80)) {
        let x: Vec<f64> = x.into_iter().map(f64::from).collect();
        let neg: Vec<f64> = x.iter().map(|v| -v).collect();
        if let (Some(a), Some(b)) = (stats::mann_kendall(&x), stats::mann_kendall(&neg)) {
            prop_assert_eq!(a.s, -b.s);
            prop_assert!((a.var_s - b.var_s).abs() < 1e-9);
        }
    }
}
