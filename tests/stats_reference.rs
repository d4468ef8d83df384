//! Statistics checked against outside references: NIST StRD (univariate and linear
//! regression), statsmodels/scipy/pandas values and closed-form theory in
//! `tests/data/ar1/reference.json`, scipy chi-square bands and a velocity-Verlet oscillator
//! with a closed-form energy error. Provenance of every file: `tests/data/README.md`.

#![allow(clippy::unwrap_used, clippy::expect_used, clippy::panic)] // test helpers may fail loudly

use std::path::PathBuf;

use plateau::stats::{self, Equilibration, Estimator, HampelOptions, SlopeSeMethod};
use serde_json::Value;

fn data(rel: &str) -> String {
    let p = PathBuf::from(env!("CARGO_MANIFEST_DIR"))
        .join("tests/data")
        .join(rel);
    std::fs::read_to_string(&p).unwrap_or_else(|e| panic!("{}: {e}", p.display()))
}

/// Log relative error, the NIST StRD accuracy measure: −log10(|x − c|/|c|).
fn lre(x: f64, c: f64) -> f64 {
    if x == c {
        return 16.0;
    }
    if c == 0.0 {
        return -x.abs().log10();
    }
    -((x - c).abs() / c.abs()).log10()
}

fn after_colon(line: &str) -> f64 {
    line.rsplit(':').next().unwrap().trim().parse().unwrap()
}

struct Univariate {
    y: Vec<f64>,
    mean: f64,
    sd: f64,
    r1: f64,
}

/// NIST univariate parsing rules (reference-data README §1): observations are the numeric
/// lines after `Data: Y` and the dashed line; certified values after the last ':'.
fn nist_univariate(name: &str) -> Univariate {
    let text = data(&format!("nist-strd/univariate/{name}.dat"));
    let lines: Vec<&str> = text.lines().collect();
    let find = |p: &str| {
        after_colon(
            lines
                .iter()
                .find(|l| l.trim_start().starts_with(p))
                .unwrap(),
        )
    };
    let start = lines
        .iter()
        .rposition(|l| l.starts_with("Data: Y"))
        .unwrap()
        + 2;
    let y: Vec<f64> = lines[start..]
        .iter()
        .filter(|l| !l.trim().is_empty())
        .map(|l| l.trim().parse().unwrap())
        .collect();
    let n = find("Number of Observations") as usize;
    assert_eq!(y.len(), n, "{name}");
    Univariate {
        y,
        mean: find("Sample Mean"),
        sd: find("Sample Standard Deviation"),
        r1: find("Sample Autocorrelation Coefficient"),
    }
}

#[test]
fn nist_univariate_mean_sd_r1() {
    // NIST StRD univariate certified values (in the .dat files); LRE thresholds from
    // reference-data README "Tolerances": >= 12, but >= 8 for NumAcc3/NumAcc4.
    for (name, min_lre) in [
        ("Lew", 12.0),
        ("Lottery", 12.0),
        ("Mavro", 12.0),
        ("Michelso", 12.0),
        ("NumAcc1", 12.0),
        ("NumAcc2", 12.0),
        ("NumAcc3", 8.0),
        ("NumAcc4", 8.0),
    ] {
        let u = nist_univariate(name);
        let m = stats::mean(&u.y).unwrap();
        let sd = stats::std_dev(&u.y).unwrap();
        let r1 = stats::lag1_autocorrelation(&u.y).unwrap();
        assert!(
            lre(m, u.mean) >= min_lre,
            "{name} mean {m} LRE {}",
            lre(m, u.mean)
        );
        assert!(
            lre(sd, u.sd) >= min_lre,
            "{name} sd {sd} LRE {}",
            lre(sd, u.sd)
        );
        assert!(
            lre(r1, u.r1) >= min_lre,
            "{name} r1 {r1} LRE {}",
            lre(r1, u.r1)
        );
        // The biased lag-1 value of the FFT acf is the same quantity (METHODS §0).
        let acf = stats::acf_biased(&u.y).unwrap();
        assert!(
            lre(acf[1], u.r1) >= min_lre.min(10.0),
            "{name} fft r1 {}",
            acf[1]
        );
        // Welford accumulator, split in two and merged, agrees as well.
        let half = u.y.len() / 2;
        let mut a = stats::Moments::from_slice(&u.y[..half]);
        a.merge(&stats::Moments::from_slice(&u.y[half..]));
        assert!(
            lre(a.mean().unwrap(), u.mean) >= min_lre,
            "{name} moments mean"
        );
        assert!(
            lre(a.std_dev().unwrap(), u.sd) >= min_lre.min(8.0),
            "{name} moments sd"
        );
    }
}

#[test]
fn nist_lew_median_and_mad() {
    // reference.json mad_lew (scipy median_abs_deviation, external): median -162,
    // raw MAD 270.5, normal-scaled 401.0439001057653 (1/Φ⁻¹(3/4)); 1.4826·MAD = 401.0433.
    let u = nist_univariate("Lew");
    assert_eq!(stats::median(&u.y), Some(-162.0));
    assert_eq!(stats::mad(&u.y), Some(270.5));
    let r = stats::robust_sd(&u.y).unwrap();
    assert!((r - 401.0433).abs() < 1e-9);
    assert!((r / 401.0439001057653 - 1.0).abs() < 2e-6);
}

struct Regression {
    x: Vec<f64>,
    y: Vec<f64>,
    params: Vec<(f64, f64)>,
    resid_sd: f64,
    r2: f64,
}

/// NIST regression parsing rules: rows after the last `Data:` line, y first then x;
/// certified `B0/B1 estimate sd`, `Standard Deviation`, `R-Squared`.
fn nist_regression(name: &str) -> Regression {
    let text = data(&format!("nist-strd/regression/{name}.dat"));
    let lines: Vec<&str> = text.lines().collect();
    let start = lines
        .iter()
        .rposition(|l| l.trim_start().starts_with("Data:"))
        .unwrap()
        + 1;
    let (mut x, mut y) = (vec![], vec![]);
    for l in &lines[start..] {
        let f: Vec<f64> = l
            .split_whitespace()
            .filter_map(|v| v.parse().ok())
            .collect();
        if f.len() == 2 {
            y.push(f[0]);
            x.push(f[1]);
        }
    }
    let mut params = vec![];
    for l in &lines {
        let f: Vec<&str> = l.split_whitespace().collect();
        if f.len() == 3 && (f[0] == "B0" || f[0] == "B1") {
            params.push((f[1].parse().unwrap(), f[2].parse().unwrap()));
        }
    }
    let last_num = |p: &str| -> f64 {
        lines
            .iter()
            .filter(|l| l.trim_start().starts_with(p))
            .find_map(|l| l.split_whitespace().last()?.parse().ok())
            .unwrap()
    };
    Regression {
        x,
        y,
        params,
        resid_sd: last_num("Standard Deviation"),
        r2: last_num("R-Squared"),
    }
}

#[test]
fn nist_norris_ols() {
    // NIST StRD Norris certified B0, B1, their SDs, residual SD and R²; LRE >= 9
    // (reference-data README "Tolerances" for float64 code).
    let r = nist_regression("Norris");
    assert_eq!(r.x.len(), 36);
    let f = stats::ols(&r.x, &r.y).unwrap();
    let (b0, s0) = r.params[0];
    let (b1, s1) = r.params[1];
    assert!(lre(f.intercept, b0) >= 9.0, "B0 {}", f.intercept);
    assert!(lre(f.slope, b1) >= 9.0, "B1 {}", f.slope);
    assert!(lre(f.se_intercept.unwrap(), s0) >= 9.0);
    assert!(lre(f.se_slope.unwrap(), s1) >= 9.0);
    assert!(lre(f.residual_sd.unwrap(), r.resid_sd) >= 9.0);
    assert!(lre(f.r_squared.unwrap(), r.r2) >= 9.0);
}

#[test]
fn nist_no_intercept() {
    // NIST StRD NoInt1 / NoInt2 certified B1, SD(B1), residual SD, uncentred R²; LRE >= 9.
    for name in ["NoInt1", "NoInt2"] {
        let r = nist_regression(name);
        let f = stats::ols_no_intercept(&r.x, &r.y).unwrap();
        let (b1, s1) = r.params[0];
        assert!(lre(f.slope, b1) >= 9.0, "{name} B1 {}", f.slope);
        assert!(lre(f.se_slope.unwrap(), s1) >= 9.0, "{name} SD");
        assert!(
            lre(f.residual_sd.unwrap(), r.resid_sd) >= 9.0,
            "{name} resid"
        );
        assert!(lre(f.r_squared.unwrap(), r.r2) >= 9.0, "{name} R2");
    }
}

fn csv(rel: &str) -> Vec<Vec<f64>> {
    data(rel)
        .lines()
        .skip(1)
        .map(|l| {
            l.split(',')
                .map(|v| v.trim().parse::<f64>().unwrap())
                .collect()
        })
        .collect()
}

fn column(rows: &[Vec<f64>], i: usize) -> Vec<f64> {
    rows.iter().map(|r| r[i]).collect()
}

fn reference() -> Value {
    serde_json::from_str(&data("ar1/reference.json")).unwrap()
}

fn num(v: &Value, path: &str) -> f64 {
    let mut cur = v;
    for k in path.split('.') {
        cur = &cur[k];
    }
    cur.as_f64().unwrap_or_else(|| panic!("{path}"))
}

#[test]
fn ar1_acf_matches_statsmodels() {
    // ar1_acf.csv: statsmodels acf(x, nlags=20, adjusted=False/True, fft=False), external;
    // METHODS §1.1: assert |Δ| <= 1e-12.
    let x = column(&csv("ar1/ar1_series.csv"), 1);
    let rows = csv("ar1/ar1_acf.csv");
    let b = stats::acf_biased(&x).unwrap();
    let a = stats::acf_adjusted(&x).unwrap();
    for r in &rows {
        let lag = r[0] as usize;
        assert!((b[lag] - r[2]).abs() <= 1e-12, "biased lag {lag}");
        assert!((a[lag] - r[4]).abs() <= 1e-12, "adjusted lag {lag}");
    }
}

#[test]
fn ar1_inefficiency_estimators() {
    // reference.json ar1.script (regression values from make_ar1_reference.py):
    // first-negative 10.323050824439227, Sokal ĝ-form c = 5 7.9300291873796835 (M = 40),
    // Geyer IPS = IMS 10.321045494193019 (9 pairs).
    let x = column(&csv("ar1/ar1_series.csv"), 1);
    let r = reference();
    let close = |a: f64, b: f64| (a - b).abs() <= 1e-9 * b.abs();
    let fnn = stats::statistical_inefficiency(&x, Estimator::FirstNegative).unwrap();
    assert!(
        close(
            fnn.g,
            num(&r, "ar1.script.g_truncated_first_nonpositive_mintime3")
        ),
        "{}",
        fnn.g
    );
    let sok = stats::statistical_inefficiency(&x, Estimator::SokalWindow).unwrap();
    assert!(close(sok.g, num(&r, "ar1.script.g_sokal_c5")), "{}", sok.g);
    assert_eq!(sok.lags_used, 40);
    let ips = stats::statistical_inefficiency(&x, Estimator::GeyerIps).unwrap();
    let ims = stats::statistical_inefficiency(&x, Estimator::GeyerIms).unwrap();
    assert!(
        close(ips.g, num(&r, "ar1.script.g_geyer_initial_positive")),
        "{}",
        ips.g
    );
    assert!(
        close(ims.g, num(&r, "ar1.script.g_geyer_initial_monotone")),
        "{}",
        ims.g
    );
    assert_eq!(ips.lags_used, 18);
    // Theory (closed form, METHODS §0): g = (1+φ)/(1−φ) = 9 → sampling noise: [6, 13].
    for e in Estimator::ALL {
        let g = stats::statistical_inefficiency(&x, e).unwrap().g;
        assert!((6.0..=13.0).contains(&g), "{e}: {g}");
    }
    // SE from g (METHODS §3 "SE from truncated g" = 0.12381177637533045, script).
    let var0 = stats::variance_population(&x).unwrap();
    let se = stats::sem_from_g(var0, fnn.g, x.len()).unwrap();
    assert!(close(se, num(&r, "ar1.script.se_mean_from_g_truncated")));
}

#[test]
fn ar1_blocking_levels() {
    // reference.json ar1.script.blocking (Flyvbjerg–Petersen levels, script values).
    let x = column(&csv("ar1/ar1_series.csv"), 1);
    let r = reference();
    let levels = r["ar1"]["script"]["blocking"].as_array().unwrap();
    let b = stats::block_average(&x).unwrap();
    assert_eq!(b.levels.len(), levels.len());
    for (got, want) in b.levels.iter().zip(levels) {
        assert_eq!(got.n_blocks as u64, want["n_blocks"].as_u64().unwrap());
        assert_eq!(got.block_size as u64, want["block_size"].as_u64().unwrap());
        assert!((got.se - want["se"].as_f64().unwrap()).abs() < 1e-12);
        assert!((got.se_error - want["se_err"].as_f64().unwrap()).abs() < 1e-12);
    }
    // Our plateau rule picks level 5 (block size 32); theory sqrt(σ² g_N/N) = 0.11168
    // (reference.json se_mean_theory, closed form) lies within its ± error (METHODS §3).
    assert!(b.resolved);
    assert_eq!(b.plateau_level, Some(5));
    let theory = num(&r, "ar1.script.se_mean_theory");
    assert!(
        (b.sem - theory).abs() <= b.sem_error,
        "{} vs {theory}",
        b.sem
    );
}

#[test]
fn equilibration_series_onset_and_mser() {
    // METHODS §2: the transient falls below the noise SD by t ≈ 180, so an onset
    // outside ~[100, 400] is wrong (external sanity window). Script values: max-N_eff
    // t0 = 167, g = 10.870114396033182; MSER d* = 171; MSER-5 d* = 34 batches.
    let y = column(&csv("ar1/equilibration_series.csv"), 1);
    let r = reference();
    match stats::detect_equilibration(&y) {
        Equilibration::Onset { row, g, n_eff } => {
            assert!((100..=400).contains(&row), "{row}");
            assert_eq!(
                row as f64,
                num(&r, "equilibration.script.chodera_max_neff.t0")
            );
            let gw = num(&r, "equilibration.script.chodera_max_neff.g");
            assert!((g - gw).abs() < 1e-9 * gw, "{g}");
            let nw = num(&r, "equilibration.script.chodera_max_neff.neff");
            assert!((n_eff - nw).abs() < 1e-9 * nw, "{n_eff}");
        }
        other => panic!("{other:?}"),
    }
    let m = stats::mser(&y).unwrap();
    assert_eq!(m.d as f64, num(&r, "equilibration.script.mser.t0"));
    assert!((m.value - num(&r, "equilibration.script.mser.mser")).abs() < 1e-12);
    let m5 = stats::mser5(&y).unwrap();
    assert_eq!(m5.d as f64, num(&r, "equilibration.script.mser5.d_batches"));
    assert_eq!(
        m5.row as f64,
        num(&r, "equilibration.script.mser5.t0_samples")
    );
    assert!((m5.value - num(&r, "equilibration.script.mser5.mser")).abs() < 1e-12);
    assert!(!m.near_limit && !m5.near_limit);
    // g of the whole non-stationary series (script): 80.81762922300487.
    let gw = num(&r, "equilibration.script.g_full_series");
    assert!((stats::inefficiency(&y).unwrap().g - gw).abs() < 1e-9 * gw);
}

#[test]
fn ar1_stationary_onset_near_zero() {
    // A stationary series must get its onset at or near 0 (PRODUCT Contract "Onset";
    // Chodera 2016). "Near" = within 10 % of the series (common practice, no source).
    let x = column(&csv("ar1/ar1_series.csv"), 1);
    match stats::detect_equilibration(&x) {
        Equilibration::Onset { row, .. } => assert!(row <= 200, "{row}"),
        other => panic!("{other:?}"),
    }
}

#[test]
fn trend_series_slope_se_and_mann_kendall() {
    // reference.json trend: statsmodels OLS / HAC (external), scipy kendalltau and
    // theilslopes (external), script values for sqrt(g) and AR(1) corrections and Hamed–Rao.
    let rows = csv("ar1/trend_series.csv");
    let t = column(&rows, 0);
    let y = column(&rows, 1);
    let r = reference();
    let rel = |a: f64, b: f64, tol: f64| (a - b).abs() <= tol * b.abs();
    let f = stats::ols(&t, &y).unwrap();
    assert!(rel(f.slope, num(&r, "trend.external.ols_slope"), 1e-10));
    assert!(rel(
        f.intercept,
        num(&r, "trend.external.ols_intercept"),
        1e-10
    ));
    assert!(rel(
        f.se_slope.unwrap(),
        num(&r, "trend.external.ols_se_slope"),
        1e-10
    ));
    assert!(rel(
        f.residual_sd.unwrap(),
        num(&r, "trend.external.ols_residual_sd"),
        1e-10
    ));
    let res = f.residuals(&t, &y);
    let r1 = stats::lag1_autocorrelation(&res).unwrap();
    assert!(rel(r1, num(&r, "trend.external.residual_acf_lag1"), 1e-10));

    let g = stats::drift(&t, &y, SlopeSeMethod::SqrtG, 0.95).unwrap();
    assert!(rel(
        g.inflation,
        num(&r, "trend.script.g_residuals_truncated"),
        1e-9
    ));
    assert!(rel(g.se, num(&r, "trend.script.se_slope_sqrt_g"), 1e-9));
    assert!(
        g.ci_low < 0.01 && 0.01 < g.ci_high,
        "true slope 0.01 inside the 95 % CI"
    );

    let hac = stats::drift(&t, &y, SlopeSeMethod::NeweyWest, 0.95).unwrap();
    assert_eq!(hac.lags, Some(5));
    assert!(
        rel(hac.se, num(&r, "trend.external.hac_se_slope"), 1e-9),
        "{}",
        hac.se
    );

    let ar = stats::drift(&t, &y, SlopeSeMethod::Ar1, 0.95).unwrap();
    // Large-N AR(1) form SE·sqrt((1+r1)/(1−r1)) (script) equals SE_OLS·sqrt(N/N_eff).
    let neff = stats::drift::ar1_effective_n(t.len(), r1).unwrap();
    let large_n = f.se_slope.unwrap() * (t.len() as f64 / neff).sqrt();
    assert!(rel(
        large_n,
        num(&r, "trend.script.se_slope_ar1_neff"),
        1e-9
    ));
    // Finite-N Santer form: SE_OLS·sqrt((N−2)/(N_eff−2)).
    let santer = f.se_slope.unwrap() * ((t.len() as f64 - 2.0) / (neff - 2.0)).sqrt();
    assert!(rel(ar.se, santer, 1e-12));
    assert!(rel(ar.dof, neff - 2.0, 1e-12));

    let mk = stats::mann_kendall(&y).unwrap();
    assert_eq!(mk.s as f64, num(&r, "trend.script.mk_S"));
    assert_eq!(mk.s as f64, num(&r, "trend.script.mk_S_from_scipy_tau"));
    assert!(rel(mk.var_s, num(&r, "trend.script.mk_var_S"), 1e-12));
    assert!(rel(mk.z, num(&r, "trend.script.mk_Z"), 1e-12));
    let sen = stats::sen_slope(&t, &y).unwrap();
    assert!(rel(
        sen,
        num(&r, "trend.external.scipy_theilslopes_slope"),
        1e-12
    ));
    let hr = stats::hamed_rao(&y, &mk, sen).unwrap();
    assert!(rel(
        hr.n_over_nstar,
        num(&r, "trend.script.hamed_rao_n_over_nstar"),
        1e-9
    ));
    assert_eq!(
        hr.significant_lags as f64,
        num(&r, "trend.script.hamed_rao_significant_lags")
    );
    assert!(rel(hr.z, num(&r, "trend.script.hamed_rao_Z"), 1e-9));
    let tt = stats::trend_test(&y, 2000).unwrap();
    assert_eq!(tt.block_size, 1);
    assert_eq!(tt.mann_kendall.s, mk.s);
}

#[test]
fn spikes_series_flags() {
    // reference.json spikes: non-finite [260, 261]; Hampel k = 10, t0 = 5 flags exactly the
    // injected spikes, k = 5, t0 = 3 the 16 listed (pandas rolling windows, external).
    let text = data("ar1/spikes_series.csv");
    let y: Vec<f64> = text
        .lines()
        .skip(1)
        .map(|l| l.split(',').nth(1).unwrap().parse::<f64>().unwrap())
        .collect();
    let r = reference();
    let list = |v: &Value| -> Vec<usize> {
        v.as_array()
            .unwrap()
            .iter()
            .map(|i| i.as_u64().unwrap() as usize)
            .collect()
    };
    assert_eq!(
        stats::non_finite_positions(&y),
        list(&r["spikes"]["external"]["nonfinite_indices"])
    );
    let flags = stats::hampel(&y, &HampelOptions::default());
    assert_eq!(
        flags,
        list(&r["spikes"]["external"]["pandas_rolling_flags"]["k10_t5_conservative"])
    );
    assert_eq!(flags, list(&r["spikes"]["injected_spike_indices"]));
    let o = HampelOptions {
        half_window: 5,
        threshold: 3.0,
        ..HampelOptions::default()
    };
    assert_eq!(
        stats::hampel(&y, &o),
        list(&r["spikes"]["external"]["pandas_rolling_flags"]["k5_t3_pearson_default"])
    );
    // scipy median_abs_deviation of the finite values (external).
    let finite: Vec<f64> = y.iter().copied().filter(|v| v.is_finite()).collect();
    let m = stats::mad(&finite).unwrap();
    assert!((m - num(&r, "spikes.external.scipy_mad_raw_all_finite")).abs() < 1e-12);
}

#[test]
fn kinetic_temperature_bands() {
    // physics/kinetic_temperature_bands.csv: sqrt(2/N_df) and scipy chi2.ppf quantiles of
    // χ²(N_df)/N_df (external). statrs' inverse CDF is iterative: assert 1e-8 relative.
    let rows = csv("physics/kinetic_temperature_bands.csv");
    for r in rows {
        let ndf = r[0];
        let rel = stats::canonical_relative_sd(ndf).unwrap();
        assert!((rel - r[1]).abs() <= 1e-14 * r[1], "rel sd {ndf}");
        for (cov, lo, hi) in [
            (0.95, r[3], r[4]),
            (0.99, r[5], r[6]),
            (0.999, r[7], r[8]),
            (0.9999, r[9], r[10]),
        ] {
            let (a, b) = stats::chi2_band(ndf, cov).unwrap();
            assert!(
                (a / lo - 1.0).abs() < 1e-8,
                "N_df {ndf} cov {cov} low {a} vs {lo}"
            );
            assert!(
                (b / hi - 1.0).abs() < 1e-8,
                "N_df {ndf} cov {cov} high {b} vs {hi}"
            );
        }
    }
}

/// Velocity Verlet on H = (p² + x²)/2, x0 = 1, p0 = 0 (Swope et al. 1982); H after each step.
fn verlet_energy(dt: f64, steps: usize) -> (Vec<f64>, Vec<f64>) {
    let (mut x, mut p) = (1.0f64, 0.0f64);
    let mut t = Vec::with_capacity(steps);
    let mut h = Vec::with_capacity(steps);
    for i in 0..steps {
        p -= 0.5 * dt * x;
        x += dt * p;
        p -= 0.5 * dt * x;
        t.push((i + 1) as f64 * dt);
        h.push(0.5 * (p * p + x * x));
    }
    (t, h)
}

#[test]
fn verlet_oscillator_energy_error_and_no_drift() {
    // physics/verlet_ho.json (closed form SD(H) = Δt²/(16√2), Tuckerman 2010 §3.13 via
    // METHODS §7) and SD ratios ≈ 4 for halved Δt (assert |ratio − 4| < 0.01).
    let j: Value = serde_json::from_str(&data("physics/verlet_ho.json")).unwrap();
    let dts = [0.2, 0.1, 0.05, 0.025];
    let mut sds = vec![];
    for dt in dts {
        let key = format!("{dt}");
        let steps = j[&key]["n_steps"].as_u64().unwrap() as usize;
        let (t, h) = verlet_energy(dt, steps);
        let sd = stats::std_dev(&h).unwrap();
        let theory = dt * dt / (16.0 * 2f64.sqrt());
        assert!(
            (sd / theory - 1.0).abs() < 1e-3,
            "dt {dt}: {sd} vs {theory}"
        );
        assert!((sd / j[&key]["sd_H"].as_f64().unwrap() - 1.0).abs() < 1e-3);
        // Our drift test says "no drift": |slope|/SE <= 3 (METHODS §4.2 rule).
        let d = stats::drift(&t, &h, SlopeSeMethod::SqrtG, 0.95).unwrap();
        let t_no = d.t_stat.unwrap();
        assert!(t_no.abs() <= 3.0, "dt {dt}: t = {t_no}");
        // ...and it does see a real drift of 1e-6 per time unit added to the same data.
        let hd: Vec<f64> = h.iter().zip(&t).map(|(e, tt)| e + 1e-6 * tt).collect();
        let d2 = stats::drift(&t, &hd, SlopeSeMethod::SqrtG, 0.95).unwrap();
        let t_yes = d2.t_stat.unwrap();
        assert!(t_yes > 3.0, "dt {dt}: t = {t_yes}");
        sds.push(sd);
    }
    for w in sds.windows(2) {
        assert!((w[0] / w[1] - 4.0).abs() < 0.01, "ratio {}", w[0] / w[1]);
    }
}
