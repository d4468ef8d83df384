//! Monte-Carlo check of plateau's verdicts, shared by `tests/verdicts_monte_carlo.rs` (a
//! seeded run sized for CI) and `examples/verdicts_monte_carlo.rs` (the larger run that
//! writes `docs/verdicts.md`).
//!
//! Every log is invented here: stationary AR(1) columns (x_t = φ x_{t−1} + √(1−φ²) ε_t, so
//! the marginal SD is 1 before scaling; Box & Jenkins, textbook) of 2,000 to 50,000 rows
//! with φ drawn from [0, 0.95], under plain names (`temperature`, `pressure`, ...) or names
//! that say nothing (`c1 c2 ...`), healthy or with one planted fault whose row and size are
//! known. The log text goes through plateau's reader and analysis exactly as a file would.

#![allow(dead_code)] // each user takes what it needs

use plateau::alert::{Alert, AlertKind, RunStatus, Severity, Target, Thresholds};
use plateau::analysis::{AnalysisOptions, Analyzer, RunAnalysis};
use plateau::parse::{LogParser, ParseOptions};

/// SplitMix64 (Steele, Lea & Flood 2014): a small, seeded, portable generator.
#[derive(Debug, Clone)]
pub struct Rng(u64);

impl Rng {
    /// A generator from a seed.
    pub fn new(seed: u64) -> Rng {
        Rng(seed ^ 0x9E37_79B9_7F4A_7C15)
    }
    /// The next 64 random bits.
    pub fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    /// Uniform in [0, 1).
    pub fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    /// Uniform in [a, b).
    pub fn between(&mut self, a: f64, b: f64) -> f64 {
        a + (b - a) * self.uniform()
    }
    /// Standard normal (Box–Muller, textbook).
    pub fn normal(&mut self) -> f64 {
        let u1 = self.uniform().max(1e-300);
        let u2 = self.uniform();
        (-2.0 * u1.ln()).sqrt() * (2.0 * std::f64::consts::PI * u2).cos()
    }
    /// An index below `n`.
    pub fn index(&mut self, n: usize) -> usize {
        ((self.uniform() * n as f64) as usize).min(n.saturating_sub(1))
    }
}

/// The planted faults.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Fault {
    /// Nothing planted.
    None,
    /// A linear drift over the whole run of 10 standard errors of the OLS slope fitted over
    /// the run's last half.
    Drift,
    /// One row 20 SD away.
    Spike,
    /// Exponential growth from one SD at a known row, non-finite once 10⁸ SD away.
    Runaway,
    /// The temperature ramps to 10 % above its 300 K target and stays there.
    OffTarget,
    /// An initial transient of 10 SD decaying with a known time constant.
    Transient,
}

impl Fault {
    /// Every kind, healthy first.
    pub const ALL: [Fault; 6] = [
        Fault::None,
        Fault::Drift,
        Fault::Spike,
        Fault::Runaway,
        Fault::OffTarget,
        Fault::Transient,
    ];
    /// A short name.
    pub fn name(self) -> &'static str {
        match self {
            Fault::None => "healthy",
            Fault::Drift => "drift (10 SE of the slope over the last half)",
            Fault::Spike => "single-row spike (20 SD)",
            Fault::Runaway => "exponential runaway",
            Fault::OffTarget => "temperature 10 % off target",
            Fault::Transient => "initial transient",
        }
    }
}

/// One invented run.
#[derive(Debug, Clone, Copy)]
pub struct Case {
    pub rows: usize,
    pub phi: f64,
    /// Plain names (`temperature`, ...) or `c1 c2 ...`.
    pub plain: bool,
    pub fault: Fault,
    pub seed: u64,
}

/// Column layout: name (plain), name (unnamed), mean, SD.
const COLUMNS: [(&str, &str, f64, f64); 4] = [
    ("temperature(K)", "c3", 300.0, 2.0),
    ("pressure(bar)", "c4", 1.0, 150.0),
    ("potential(kJ/mol)", "c5", -41_000.0, 40.0),
    ("total(kJ/mol)", "c6", -33_000.0, 45.0),
];
/// Simulated time per row, ps.
pub const ROW_PS: f64 = 0.1;
/// Steps per row.
const ROW_STEPS: u64 = 50;

/// What was planted, to judge the verdicts against.
#[derive(Debug, Clone)]
pub struct Planted {
    pub text: Vec<u8>,
    /// Name of the faulty column, as written in the header.
    pub column: Option<String>,
    /// Row where the fault starts (spike row, runaway start, ramp start, 0 for drift).
    pub row: Option<usize>,
    /// First non-finite row (runaway).
    pub first_nonfinite: Option<usize>,
    /// Runaway e-folding time or transient time constant, rows.
    pub tau: Option<f64>,
    /// Row where the temperature's true mean leaves the 5 K band (off-target).
    pub leaves_band: Option<usize>,
}

/// Writes the log of `case`.
pub fn generate(case: &Case) -> Planted {
    let mut rng = Rng::new(case.seed);
    let n = case.rows;
    let phi = case.phi;
    let innovation = (1.0 - phi * phi).sqrt();
    let mut cols: Vec<Vec<f64>> = COLUMNS
        .iter()
        .map(|&(_, _, mean, sd)| {
            let mut x = rng.normal();
            (0..n)
                .map(|_| {
                    let v = mean + sd * x;
                    x = phi * x + innovation * rng.normal();
                    v
                })
                .collect()
        })
        .collect();
    let which = match case.fault {
        Fault::OffTarget => 0,
        Fault::None => 0,
        _ => rng.index(COLUMNS.len()),
    };
    let (_, _, _, sd) = COLUMNS[which];
    let sign = if rng.uniform() < 0.5 { -1.0 } else { 1.0 };
    let mut planted = Planted {
        text: Vec::new(),
        column: None,
        row: None,
        first_nonfinite: None,
        tau: None,
        leaves_band: None,
    };
    let col = &mut cols[which];
    match case.fault {
        Fault::None => {}
        Fault::Drift => {
            // SE of the OLS slope per row for AR(1) noise over M rows: sqrt(12 g σ² / M³),
            // g = (1+φ)/(1−φ) (large-N textbook result; METHODS §4.2), taken over the last
            // half of the run (M = N/2), the part a user keeps as production.
            let g = (1.0 + phi) / (1.0 - phi);
            let se = (12.0 * g / (n as f64 / 2.0).powi(3)).sqrt() * sd;
            let b = 10.0 * se * sign;
            for (r, v) in col.iter_mut().enumerate() {
                *v += b * (r as f64 - n as f64 / 2.0);
            }
            planted.row = Some(0);
        }
        Fault::Spike => {
            let r = (n as f64 * rng.between(0.2, 0.9)) as usize;
            col[r] += 20.0 * sd * sign;
            planted.row = Some(r);
        }
        Fault::Runaway => {
            let r0 = (n as f64 * rng.between(0.3, 0.6)) as usize;
            // e-folding times from 3 rows to what fits in the rows left (log-uniform).
            let room = (n - r0) as f64 / 20.0;
            let tau = (rng.between(3f64.ln(), room.clamp(4.0, 1000.0).ln())).exp();
            let mut first_bad = None;
            for (r, v) in col.iter_mut().enumerate().skip(r0) {
                let k = (r - r0) as f64 / tau;
                if k > 1e8f64.ln() || first_bad.is_some() {
                    first_bad.get_or_insert(r);
                    *v = f64::NAN;
                } else {
                    *v += sign * sd * k.exp();
                }
            }
            planted.row = Some(r0);
            planted.tau = Some(tau);
            planted.first_nonfinite = first_bad;
        }
        Fault::OffTarget => {
            // From 300 K to 330 K over a tenth of the run, from a random row, then held.
            let r0 = (n as f64 * rng.between(0.3, 0.6)) as usize;
            let ramp = (n / 10).max(1);
            for (r, v) in col.iter_mut().enumerate().skip(r0) {
                let f = ((r - r0) as f64 / ramp as f64).min(1.0);
                *v += 30.0 * f;
            }
            planted.row = Some(r0);
            // The true mean leaves 300 ± 5 K when 30·f = 5.
            planted.leaves_band = Some(r0 + (ramp as f64 * 5.0 / 30.0).ceil() as usize);
        }
        Fault::Transient => {
            let tau = n as f64 * rng.between(0.01, 0.05);
            for (r, v) in col.iter_mut().enumerate() {
                *v += sign * 10.0 * sd * (-(r as f64) / tau).exp();
            }
            planted.row = Some(0);
            planted.tau = Some(tau);
        }
    }
    if case.fault != Fault::None {
        planted.column = Some(name_of(which, case.plain).to_string());
    }
    // The text.
    let mut out = String::with_capacity(n * 80);
    if case.plain {
        out.push_str("step time(ps)");
    } else {
        out.push_str("c1 c2");
    }
    for i in 0..COLUMNS.len() {
        out.push(' ');
        out.push_str(header_of(i, case.plain));
    }
    out.push('\n');
    for r in 0..n {
        let step = r as u64 * ROW_STEPS;
        out.push_str(&format!("{step} {:.3}", r as f64 * ROW_PS));
        for c in &cols {
            let v = c[r];
            if v.is_finite() {
                out.push_str(&format!(" {v:.6e}"));
            } else {
                out.push_str(" nan");
            }
        }
        out.push('\n');
    }
    planted.text = out.into_bytes();
    planted
}

fn header_of(i: usize, plain: bool) -> &'static str {
    if plain {
        COLUMNS[i].0
    } else {
        COLUMNS[i].1
    }
}

/// The column name plateau reads from a header entry (`temperature(K)` → `temperature`).
fn name_of(i: usize, plain: bool) -> &'static str {
    let h = header_of(i, plain);
    h.split('(').next().unwrap_or(h)
}

/// What plateau said about one run.
#[derive(Debug, Clone)]
pub struct Outcome {
    pub status: RunStatus,
    /// Some quantity was called still changing.
    pub still_changing: bool,
    /// A warning or critical alert was raised.
    pub warned: bool,
    /// The planted fault was found (healthy runs: false).
    pub detected: bool,
    /// Alerts of the fault's kind on the faulty column.
    pub episode_alerts: usize,
    /// Rows from the fault's start (or leaving the band) to its detection.
    pub delay_rows: Option<f64>,
    /// Delay in units of the fault's time constant (runaway: e-folding times).
    pub delay_tau: Option<f64>,
    /// Spikes: the alert is at the planted row.
    pub right_row: bool,
}

/// Analyses a planted log as `plateau report` would (whole file), with a 300 K target for
/// the temperature when the names are plain.
pub fn analyse(case: &Case, planted: &Planted) -> (RunAnalysis, Vec<Alert>) {
    let mut parser = LogParser::new(ParseOptions::default());
    parser.feed(&planted.text);
    parser.finish();
    let opts = AnalysisOptions {
        thresholds: Thresholds::default(),
        target_temperature: case.plain.then(|| Target::constant(300.0)),
        ..AnalysisOptions::default()
    };
    let mut analyzer = Analyzer::new(opts);
    let analysis = analyzer.update(parser.table(), true, None, false);
    let alerts = analyzer.engine().alerts_by_row();
    (analysis, alerts)
}

/// Judges plateau's verdicts on one run against what was planted.
pub fn judge(case: &Case, planted: &Planted, analysis: &RunAnalysis, alerts: &[Alert]) -> Outcome {
    let still_changing = analysis
        .columns
        .iter()
        .any(|c| c.trend.as_ref().is_some_and(|t| t.still_changing));
    let warned = alerts.iter().any(|a| a.severity >= Severity::Warning);
    let column = planted.column.as_deref();
    let on_column = |kind: AlertKind| -> Vec<&Alert> {
        alerts
            .iter()
            .filter(|a| a.kind == kind && a.column.as_deref() == column)
            .collect()
    };
    let mut out = Outcome {
        status: analysis.status,
        still_changing,
        warned,
        detected: false,
        episode_alerts: 0,
        delay_rows: None,
        delay_tau: None,
        right_row: false,
    };
    match case.fault {
        Fault::None => {}
        Fault::Drift => {
            let drift = on_column(AlertKind::Drift);
            let trend = analysis.columns.iter().any(|c| {
                Some(c.name.as_str()) == column
                    && c.trend.as_ref().is_some_and(|t| t.still_changing)
            });
            out.episode_alerts = drift.len();
            // Found: the quantity is called still changing, the run is not steady (a drift
            // from the first row may also keep it from settling), or a drift alert.
            out.detected = trend
                || analysis.status != RunStatus::Steady
                || drift.iter().any(|a| a.severity >= Severity::Warning);
        }
        Fault::Spike => {
            let spikes = on_column(AlertKind::Spike);
            out.episode_alerts = spikes.len();
            out.right_row = spikes
                .iter()
                .any(|a| a.row.map(|r| r as usize) == planted.row);
            out.detected = out.right_row;
        }
        Fault::Runaway => {
            let run = on_column(AlertKind::Runaway);
            out.episode_alerts = run.len();
            let first = run.iter().filter_map(|a| a.row).min().map(|r| r as usize);
            if let (Some(r), Some(r0)) = (first, planted.row) {
                let before = planted.first_nonfinite.is_none_or(|b| r < b);
                out.detected = before && r >= r0;
                out.delay_rows = Some(r as f64 - r0 as f64);
                out.delay_tau = planted.tau.map(|t| (r as f64 - r0 as f64) / t);
            }
        }
        Fault::OffTarget => {
            let off = on_column(AlertKind::TemperatureOffTarget);
            out.episode_alerts = off.len();
            // The alert's row is the start of the episode; its detection is when it was
            // raised: the engine raises it when its sustained window is complete, which
            // the alert records as its first update (`last_row`) at raising time.
            let raised = off.iter().filter_map(|a| a.raised_row.or(a.row)).min();
            if let (Some(r), Some(b)) = (raised, planted.leaves_band) {
                out.detected = r as usize >= planted.row.unwrap_or(0);
                out.delay_rows = Some(r as f64 - b as f64);
            }
        }
        Fault::Transient => {
            // The faulty column's own onset cuts at least one time constant of the
            // transient, and nothing is raised (a transient is no alarm).
            let onset = analysis
                .columns
                .iter()
                .find(|c| Some(c.name.as_str()) == column)
                .and_then(|c| c.equilibration)
                .and_then(|e| e.row());
            if let (Some(o), Some(tau)) = (onset, planted.tau) {
                out.detected = o as f64 >= tau && !warned;
                out.delay_tau = Some(o as f64 / tau);
            }
        }
    }
    out
}

/// Draws the `i`-th case of a study: rows log-uniform in [min_rows, max_rows], φ uniform
/// in [0, 0.95], plain names every other case.
pub fn draw(fault: Fault, i: usize, base_seed: u64, min_rows: usize, max_rows: usize) -> Case {
    let seed = base_seed
        .wrapping_mul(1_000_003)
        .wrapping_add(i as u64)
        .wrapping_add((fault as u64) << 40);
    let mut rng = Rng::new(seed);
    let rows = rng
        .between((min_rows as f64).ln(), (max_rows as f64).ln())
        .exp() as usize;
    let phi = rng.between(0.0, 0.95);
    let plain = fault == Fault::OffTarget || i.is_multiple_of(2);
    Case {
        rows,
        phi,
        plain,
        fault,
        seed: rng.next_u64(),
    }
}

/// Counts and delays of one fault over a study.
#[derive(Debug, Clone, Default)]
pub struct Tally {
    pub runs: usize,
    pub still_changing: usize,
    pub warned_or_not_steady: usize,
    pub detected: usize,
    pub right_row: usize,
    pub more_than_one_alert: usize,
    pub delays_rows: Vec<f64>,
    pub delays_tau: Vec<f64>,
    /// Seeds of the runs that missed a target (for debugging).
    pub misses: Vec<Case>,
}

impl Tally {
    /// Adds one outcome.
    pub fn add(&mut self, case: &Case, o: &Outcome) {
        self.runs += 1;
        if o.still_changing {
            self.still_changing += 1;
        }
        let bad = o.warned || o.status != RunStatus::Steady;
        if bad {
            self.warned_or_not_steady += 1;
        }
        if o.detected {
            self.detected += 1;
        }
        if o.right_row {
            self.right_row += 1;
        }
        if o.episode_alerts > 1 {
            self.more_than_one_alert += 1;
        }
        if let Some(d) = o.delay_rows {
            self.delays_rows.push(d);
        }
        if let Some(d) = o.delay_tau {
            self.delays_tau.push(d);
        }
        let missed = match case.fault {
            Fault::None => bad || o.still_changing,
            _ => !o.detected || o.episode_alerts > 1,
        };
        if missed {
            self.misses.push(*case);
        }
    }
}

/// Runs one case end to end.
pub fn run_case(case: &Case) -> Outcome {
    let planted = generate(case);
    let (analysis, alerts) = analyse(case, &planted);
    judge(case, &planted, &analysis, &alerts)
}

/// Wilson score interval for k successes in n trials at 95 % (Wilson 1927, textbook).
pub fn wilson(k: usize, n: usize) -> (f64, f64) {
    if n == 0 {
        return (0.0, 1.0);
    }
    let z = 1.959_963_984_540_054_f64;
    let nf = n as f64;
    let p = k as f64 / nf;
    let denom = 1.0 + z * z / nf;
    let centre = (p + z * z / (2.0 * nf)) / denom;
    let half = z * (p * (1.0 - p) / nf + z * z / (4.0 * nf * nf)).sqrt() / denom;
    ((centre - half).max(0.0), (centre + half).min(1.0))
}

/// Median of a list (NaN when empty).
pub fn median(v: &[f64]) -> f64 {
    let mut s: Vec<f64> = v.iter().copied().filter(|x| x.is_finite()).collect();
    if s.is_empty() {
        return f64::NAN;
    }
    s.sort_by(f64::total_cmp);
    let m = s.len() / 2;
    if !s.len().is_multiple_of(2) {
        s[m]
    } else {
        0.5 * (s[m - 1] + s[m])
    }
}
