//! Detectors: turn statistics (computed by `analysis` with `stats`) into observations for the
//! engine, with the windows and hysteresis of each kind. All pure; O(rows) per scan.

use std::ops::Range;

use super::{
    format_duration_ps, format_number, Alert, AlertEngine, AlertKind, Measure, Observed,
    RowLocator, Severity, Sustain, Target,
};

/// One column's data for the off-target test.
#[derive(Debug, Clone, Copy)]
pub struct OffTargetInput<'a> {
    /// `TemperatureOffTarget` or `PressureOffTarget`.
    pub kind: AlertKind,
    pub column: &'a str,
    pub unit: &'a str,
    /// Values by row (row `i` is `values[i]`).
    pub values: &'a [f64],
    /// Simulated time by row, ps.
    pub times: &'a [f64],
    pub target: &'a Target,
    /// Allowed offset before the statistical margin, in the column's unit.
    pub tolerance: f64,
    /// Statistical inefficiency of the column (g ≥ 1), for the standard error of a window
    /// mean: SE = s·sqrt(g/W), and the window's length in correlation times.
    pub inefficiency: f64,
    /// Standard deviation of the column (at its onset's rows), for the window's length.
    pub sd: Option<f64>,
    /// First row (index into `values`) that may be tested (the onset; 0 along a schedule).
    pub start_row: usize,
    /// Row of the run that `values[0]` is (rows of later segments continue the numbering).
    pub row_offset: usize,
}

/// Evidence of a drift fit.
#[derive(Debug, Clone, Copy)]
pub struct DriftEvidence<'a> {
    pub column: &'a str,
    pub unit: &'a str,
    pub slope_per_ns: f64,
    pub stderr_per_ns: f64,
    /// Slope in k_B·T per ns per degree of freedom, when it can be normalised.
    pub kt_per_ns_per_dof: Option<f64>,
    /// First row of the fit (the onset).
    pub from_row: usize,
    /// Last row of the fit (the newest row analysed).
    pub to_row: usize,
}

/// Evidence of the fluctuation-size test.
#[derive(Debug, Clone, Copy)]
pub struct FluctuationEvidence<'a> {
    pub column: &'a str,
    pub observed: f64,
    pub expected: f64,
    pub low: f64,
    pub high: f64,
    pub degrees_of_freedom: f64,
    /// First row of the tested part (the onset).
    pub from_row: usize,
    /// Last row of the tested part (the newest row analysed).
    pub to_row: usize,
}

/// Key used for run-wide alerts (no column).
pub const RUN: &str = "";

/// Least effective samples in the off-target window (common practice, no source): below
/// about ten the window's own standard deviation is too noisy for its standard error.
pub const OFF_TARGET_MIN_NEFF: f64 = 10.0;
/// The off-target window is long enough that its statistical margin (`off_target_sigmas`
/// standard errors) is at most this fraction of the tolerance on a run at its target, so
/// an excursion of twice the tolerance (10 % of 100 K with the default 5 K) is told from the
/// noise once three quarters of the window are past it (our derivation).
pub const OFF_TARGET_MARGIN_OF_TOLERANCE: f64 = 0.5;
/// Longest off-target window, rows (bounds the delay when the noise is large; the margin
/// may then exceed [`OFF_TARGET_MARGIN_OF_TOLERANCE`] of the tolerance, and the message
/// says how large it is).
pub const OFF_TARGET_MAX_ROWS: usize = 20_000;

/// Rows of the off-target window, set in correlation times: `g · N_eff` rows, where
/// `N_eff` is at least [`OFF_TARGET_MIN_NEFF`] and large enough that
/// `sigmas · sd / √N_eff ≤` [`OFF_TARGET_MARGIN_OF_TOLERANCE`] `· tolerance`
/// (the standard error of a mean of N_eff effective samples, textbook); at least
/// `min_rows`, at most [`OFF_TARGET_MAX_ROWS`].
pub fn off_target_window_rows(
    min_rows: usize,
    inefficiency: f64,
    sd: Option<f64>,
    tolerance: f64,
    sigmas: f64,
) -> usize {
    let g = if inefficiency.is_finite() && inefficiency >= 1.0 {
        inefficiency
    } else {
        1.0
    };
    let margin = OFF_TARGET_MARGIN_OF_TOLERANCE * tolerance;
    let need = match sd {
        Some(s) if s.is_finite() && s > 0.0 && margin > 0.0 => {
            (sigmas * s / margin).powi(2).max(OFF_TARGET_MIN_NEFF)
        }
        _ => OFF_TARGET_MIN_NEFF,
    };
    let rows = (g * need).ceil();
    let rows = if rows.is_finite() {
        rows.min(OFF_TARGET_MAX_ROWS as f64) as usize
    } else {
        OFF_TARGET_MAX_ROWS
    };
    rows.max(min_rows.max(2))
}

/// Margin of the short off-target window, in its own standard errors (ours): wider than
/// the long window's, because the short window is tested on more nearly independent
/// stretches of a long run.
pub const OFF_TARGET_SHORT_SIGMAS: f64 = 4.0;
/// The short off-target window is this fraction of the long one (ours): a large excursion
/// (several tolerances) is then seen in about this fraction of the long window's delay.
pub const OFF_TARGET_SHORT_FRACTION: usize = 8;
/// An off-target episode is cleared after its window mean has been back inside the
/// tolerance for this many long windows (ours): a mean that crosses the threshold slowly,
/// with noise, is one episode, not several.
pub const OFF_TARGET_CLEAR_WINDOWS: u32 = 3;

/// Sliding-window statistics of the off-target test at each row of `start..end`: the
/// window mean, the mean target over the window and the standard error of the window mean
/// (`None` while the window is incomplete, holds a written non-finite value, or has a
/// value in fewer than half its rows). Sums are shifted by a reference value (no
/// cancellation). O(rows).
fn window_stats(
    input: &OffTargetInput<'_>,
    start: usize,
    end: usize,
    w: usize,
    g: f64,
) -> Vec<Option<(f64, f64, f64)>> {
    let values = input.values;
    let times = input.times;
    let shift = values
        .get(input.start_row..end)
        .and_then(|v| v.iter().copied().find(|x| x.is_finite()))
        .unwrap_or(0.0);
    #[derive(Default)]
    struct Sums {
        sum: f64,
        sum2: f64,
        tsum: f64,
        count: usize,
        bad: usize,
    }
    let add = |acc: &mut Sums, i: usize, sign: f64| {
        let v = values.get(i).copied().unwrap_or(f64::NAN);
        let t = times.get(i).copied().unwrap_or(f64::NAN);
        if crate::table::is_absent(v) {
            return;
        }
        if v.is_finite() && t.is_finite() {
            let d = v - shift;
            acc.sum += sign * d;
            acc.sum2 += sign * d * d;
            acc.tsum += sign * input.target.value_at(t);
            if sign > 0.0 {
                acc.count += 1;
            } else {
                acc.count = acc.count.saturating_sub(1);
            }
        } else if sign > 0.0 {
            acc.bad += 1;
        } else {
            acc.bad = acc.bad.saturating_sub(1);
        }
    };
    let mut acc = Sums::default();
    let mut stats: Vec<Option<(f64, f64, f64)>> = Vec::with_capacity(end.saturating_sub(start));
    // The window before row `start`: the `w` rows before it, as the loop below leaves it
    // after row `start − 1` (its first step adds row `start` and removes row `start − w`).
    let first = start.saturating_sub(w).max(input.start_row);
    for i in first..start {
        add(&mut acc, i, 1.0);
    }
    for r in start..end {
        add(&mut acc, r, 1.0);
        if r >= input.start_row + w {
            add(&mut acc, r - w, -1.0);
        }
        let filled = r + 1 - input.start_row;
        if filled < w || acc.bad > 0 || acc.count < 2 || 2 * acc.count < w {
            stats.push(None);
            continue;
        }
        let n = acc.count as f64;
        let mean_d = acc.sum / n;
        let var = ((acc.sum2 - n * mean_d * mean_d) / (n - 1.0)).max(0.0);
        let se = (var * g / n).sqrt();
        stats.push(Some((mean_d + shift, acc.tsum / n, se)));
    }
    stats
}

/// Simulated time spanned by `w` rows ending at row `end - 1`, ps.
fn window_span_ps(times: &[f64], end: usize, w: usize) -> Option<f64> {
    match (
        times.get(end.checked_sub(1)?),
        times.get((end - 1).saturating_sub(w - 1)),
    ) {
        (Some(a), Some(b)) if a.is_finite() && b.is_finite() && a > b => {
            Some((a - b) * w as f64 / (w - 1).max(1) as f64)
        }
        _ => None,
    }
}

impl AlertEngine {
    /// Off-target test over rows `rows`: at each row whose window (from `start_row` on) is
    /// complete, the window mean is compared with the mean target over the same rows. The
    /// window is [`off_target_window_rows`] rows (set in correlation times); its margin is
    /// `off_target_sigmas` standard errors of the window mean from the window's own SD and
    /// N_eff = W/g. A short window ([`OFF_TARGET_SHORT_FRACTION`] of it, margin
    /// [`OFF_TARGET_SHORT_SIGMAS`] of its own SEs) catches a large excursion sooner. The
    /// alert is raised when either window mean has been beyond tolerance + its margin for
    /// a tenth of the short window (at least one row), and cleared once the long window
    /// mean has been back inside the tolerance for [`OFF_TARGET_CLEAR_WINDOWS`] long
    /// windows in a row (hysteresis in value and in time). Rows without a
    /// value (absent) are left out of a window; a written non-finite value makes its
    /// windows undecided.
    ///
    /// Detection delay: after a step of the mean to twice the tolerance beyond the target
    /// (10 % of 100 K with a 5 K tolerance), the long window mean passes tolerance + margin
    /// once about three quarters of the window are past the step (our derivation; measured
    /// in `tests/verdicts_regressions.rs`); a step of several tolerances is seen by the
    /// short window within about an eighth of the long window.
    pub fn scan_off_target(
        &mut self,
        input: &OffTargetInput<'_>,
        rows: Range<usize>,
        locator: &dyn RowLocator,
    ) -> usize {
        let sigmas = self.thresholds().off_target_sigmas;
        let g = if input.inefficiency.is_finite() && input.inefficiency >= 1.0 {
            input.inefficiency
        } else {
            1.0
        };
        let w = off_target_window_rows(
            self.thresholds().off_target_window,
            g,
            input.sd,
            input.tolerance,
            sigmas,
        );
        // The short window keeps at least the least N_eff of the long one.
        let min_short = (g * OFF_TARGET_MIN_NEFF).ceil() as usize;
        let short = (w / OFF_TARGET_SHORT_FRACTION).max(min_short).max(2);
        let short = (2 * short <= w).then_some(short);
        let wu = u32::try_from(w).unwrap_or(u32::MAX);
        let hold = u32::try_from(short.unwrap_or(w) / 10)
            .unwrap_or(u32::MAX)
            .max(1);
        let sustain = Sustain::new(hold, wu.saturating_mul(OFF_TARGET_CLEAR_WINDOWS));
        let values = input.values;
        let times = input.times;
        let start = rows.start.max(input.start_row);
        let end = rows.end.min(values.len()).min(times.len());
        if start >= end {
            return 0;
        }
        let long_stats = window_stats(input, start, end, w, g);
        let short_stats = short.map(|ws| window_stats(input, start, end, ws, g));
        let tolerance = input.tolerance;
        let kind = input.kind;
        let column = input.column;
        let unit = input.unit;
        let name = match kind {
            AlertKind::PressureOffTarget => "pressure",
            _ => "temperature",
        };
        let at = |stats: &[Option<(f64, f64, f64)>], r: usize| -> Option<(f64, f64, f64)> {
            r.checked_sub(start)
                .and_then(|i| stats.get(i).copied().flatten())
        };
        let long_at = |r: usize| at(&long_stats, r);
        let short_at = |r: usize| short_stats.as_deref().and_then(|s| at(s, r));
        let beyond = |s: Option<(f64, f64, f64)>, k: f64| {
            s.is_some_and(|(m, t, se)| (m - t).abs() > tolerance + k * se)
        };
        // Which window decides at row `r`: the long one when it is beyond, else the short.
        let deciding = |r: usize| -> Option<(usize, f64, (f64, f64, f64))> {
            if beyond(long_at(r), sigmas) {
                long_at(r).map(|s| (w, sigmas, s))
            } else if beyond(short_at(r), OFF_TARGET_SHORT_SIGMAS) {
                short_at(r).map(|s| (short.unwrap_or(w), OFF_TARGET_SHORT_SIGMAS, s))
            } else {
                None
            }
        };
        let off = input.row_offset;
        self.scan(
            kind,
            column,
            sustain,
            off + start..off + end,
            |r, active| {
                // Hysteresis in value: raised when a window mean is beyond tolerance + its
                // margin; while raised, it holds as long as the long window mean is beyond
                // the tolerance itself, so the clearing time counts only rows back inside
                // the tolerance, and a mean that crosses the threshold slowly (a slow ramp,
                // with noise) is one episode, not several.
                if active {
                    match long_at(r - off) {
                        Some((m, t, _)) => (m - t).abs() > tolerance,
                        None => true,
                    }
                } else {
                    deciding(r - off).is_some()
                }
            },
            |_, r| {
                let s = long_at(r - off).or_else(|| short_at(r - off));
                s.map(|(m, t, _)| Measure::new(m, (m - t).abs()))
            },
            |since, now| {
                let (ww, k, (m, t, se)) = deciding(now - off)
                    .or_else(|| long_at(now - off).map(|s| (w, sigmas, s)))
                    .unwrap_or((w, sigmas, (f64::NAN, f64::NAN, f64::NAN)));
                let direction = if m < t { "below" } else { "above" };
                let window_ps = window_span_ps(times, end, ww);
                Alert::new(
                    kind,
                    Severity::Warning,
                    format!(
                        "mean {name} over the last {} is {} {direction} its target {} \
                         (allowed {} + {} SE = {}); check the {} settings and coupling",
                        match window_ps {
                            Some(ps) => format!("{} ({ww} rows)", format_duration_ps(ps)),
                            None => format!("{ww} rows"),
                        },
                        format_number((m - t).abs(), unit),
                        format_number(t, unit),
                        format_number(tolerance, unit),
                        format_number(k, ""),
                        format_number(tolerance + k * se, unit),
                        if name == "pressure" {
                            "barostat"
                        } else {
                            "thermostat"
                        },
                    ),
                )
                .column(column)
                .value(m, unit)
                .at(since, locator)
            },
            locator,
        )
    }

    /// One evaluation of the drift of the conserved energy (`index` increases with each
    /// evaluation). Significant when |slope|/stderr > `drift_sigmas`; warning above
    /// `drift_warning`, critical above `drift_critical` (k_B·T/ns/dof); `info` when no
    /// normalisation is known. Cleared after three evaluations without it.
    pub fn evaluate_drift(
        &mut self,
        ev: &DriftEvidence<'_>,
        index: u64,
        locator: &dyn RowLocator,
    ) -> bool {
        let t = self.thresholds().clone();
        let significant = ev.stderr_per_ns.is_finite()
            && ev.stderr_per_ns > 0.0
            && ev.slope_per_ns.is_finite()
            && (ev.slope_per_ns / ev.stderr_per_ns).abs() > t.drift_sigmas;
        let severity = match ev.kt_per_ns_per_dof {
            Some(k) if significant && k.abs() >= t.drift_critical => Some(Severity::Critical),
            Some(k) if significant && k.abs() >= t.drift_warning => Some(Severity::Warning),
            Some(_) => None,
            None if significant => Some(Severity::Info),
            None => None,
        };
        let make = |severity: Severity| {
            let normalised = match ev.kt_per_ns_per_dof {
                Some(k) => format!(
                    " = {} k_B·T/ns per degree of freedom (warning at {}, critical at {})",
                    format_number(k, ""),
                    format_number(t.drift_warning, ""),
                    format_number(t.drift_critical, "")
                ),
                None => " (give --atoms or --dof, or map a kinetic column, to judge its size)"
                    .to_string(),
            };
            Alert::new(
                AlertKind::Drift,
                severity,
                format!(
                    "{} drifts by {} ± {} per ns{normalised}; check the time step, constraint \
                     tolerance and cut-off treatment",
                    ev.column,
                    format_number(ev.slope_per_ns, ev.unit),
                    format_number(ev.stderr_per_ns, ev.unit),
                ),
            )
            .column(ev.column)
            .value(ev.slope_per_ns, &format!("{}/ns", ev.unit))
            .at(ev.from_row, locator)
        };
        let sustain = Sustain::new(1, 3);
        let at = Observed {
            row: Some(ev.to_row),
            measure: Some(Measure::new(ev.slope_per_ns, ev.slope_per_ns.abs())),
            locator,
        };
        match severity {
            Some(s) => {
                let raised = self.evaluate(
                    AlertKind::Drift,
                    ev.column,
                    sustain,
                    index,
                    true,
                    at,
                    || make(s),
                );
                if !raised {
                    self.escalate(AlertKind::Drift, ev.column, s, || make(s));
                }
                raised
            }
            None => self.evaluate(
                AlertKind::Drift,
                ev.column,
                sustain,
                index,
                false,
                at,
                || make(Severity::Info),
            ),
        }
    }

    /// One evaluation of the fluctuation-size test; `verdict_wrong` when σ_T/⟨T⟩ is outside
    /// the band. Cleared after three evaluations inside it.
    pub fn evaluate_fluctuation(
        &mut self,
        ev: &FluctuationEvidence<'_>,
        verdict_wrong: bool,
        index: u64,
        locator: &dyn RowLocator,
    ) -> bool {
        let sustain = Sustain::new(1, 3);
        let at = Observed {
            row: Some(ev.to_row),
            measure: Some(Measure::new(ev.observed, (ev.observed - ev.expected).abs())),
            locator,
        };
        self.evaluate(
            AlertKind::FluctuationSize,
            ev.column,
            sustain,
            index,
            verdict_wrong,
            at,
            || {
                let (size, hint) = if ev.observed < ev.low {
                    (
                        "too small",
                        "the thermostat suppresses fluctuations (a weak-coupling scheme does not \
                         sample the canonical ensemble), or the degrees of freedom are wrong",
                    )
                } else {
                    (
                        "too large",
                        "the system is heating or cooling, or the degrees of freedom are wrong",
                    )
                };
                Alert::new(
                    AlertKind::FluctuationSize,
                    Severity::Warning,
                    format!(
                        "{} fluctuates {size}: σ/mean = {}, canonical {} for N_df = {} (band {} .. {}); {hint}",
                        ev.column,
                        format_number(ev.observed, ""),
                        format_number(ev.expected, ""),
                        format_number(ev.degrees_of_freedom, ""),
                        format_number(ev.low, ""),
                        format_number(ev.high, ""),
                    ),
                )
                .column(ev.column)
                .value(ev.observed, "")
                .at(ev.from_row, locator)
            },
        )
    }

    /// Stall check at wall time `now_s` (seconds, any epoch shared with `last_arrival_s`).
    /// `median_gap_s` is the median gap between row arrivals; `last_row` the last row seen.
    pub fn evaluate_stall(
        &mut self,
        now_s: f64,
        last_arrival_s: f64,
        median_gap_s: Option<f64>,
        last_row: Option<usize>,
        index: u64,
        locator: &dyn RowLocator,
    ) -> bool {
        let limit = self.thresholds().stall_limit_seconds(median_gap_s);
        let waited = now_s - last_arrival_s;
        let stalled = waited.is_finite() && waited > limit;
        let at = Observed {
            row: last_row,
            measure: Some(Measure::new(waited, waited)),
            locator,
        };
        self.evaluate(
            AlertKind::Stalled,
            RUN,
            Sustain::new(1, 1),
            index,
            stalled,
            at,
            || {
                let a = Alert::new(
                    AlertKind::Stalled,
                    Severity::Warning,
                    format!(
                        "no new row for {} (limit {}); check that the job is still running and \
                         not stuck writing or waiting in a queue",
                        format_number(waited, "s"),
                        format_number(limit, "s")
                    ),
                )
                .value(waited, "s");
                match last_row {
                    Some(r) => a.at(r, locator),
                    None => a,
                }
            },
        )
    }

    /// A restart: rows from `row` on replaced `replaced` earlier rows.
    pub fn restart(&mut self, row: usize, replaced: u64, locator: &dyn RowLocator) {
        let a = Alert::new(
            AlertKind::Restart,
            Severity::Info,
            format!(
                "the step counter went back: {replaced} earlier rows were replaced by the rows \
                 from here on (a restart from a checkpoint, or a rewritten file)"
            ),
        )
        .value(replaced as f64, "rows")
        .at(row, locator);
        self.push_event(a);
    }

    /// Skipped data-like lines so far: `info` from the first, `warning` once they exceed
    /// `skipped_warning_fraction` of the data lines. `first_line` is the first skipped line.
    pub fn evaluate_skipped(&mut self, skipped: u64, data_lines: u64, first_line: Option<u64>) {
        if skipped == 0 {
            return;
        }
        let fraction = skipped as f64 / data_lines.max(1) as f64;
        let severity = if fraction > self.thresholds().skipped_warning_fraction {
            Severity::Warning
        } else {
            Severity::Info
        };
        let make = || {
            let mut a = Alert::new(
                AlertKind::SkippedLines,
                severity,
                format!(
                    "{skipped} data-like lines could not be read ({} of the data lines); the \
                     report lists them with line numbers: check the column mapping and the \
                     writer",
                    format_percent(fraction)
                ),
            )
            .value(skipped as f64, "lines");
            a.line = first_line;
            a
        };
        let at = Observed {
            row: None,
            measure: None,
            locator: &super::NoLocator,
        };
        let raised = self.evaluate(
            AlertKind::SkippedLines,
            RUN,
            Sustain::new(1, 1),
            0,
            true,
            at,
            make,
        );
        if !raised {
            self.escalate(AlertKind::SkippedLines, RUN, severity, make);
        }
    }
}

fn format_percent(f: f64) -> String {
    format!("{} %", format_number(f * 100.0, ""))
}

#[cfg(test)]
mod tests {
    use super::super::{SliceLocator, Thresholds};
    use super::*;

    fn series(n: usize, f: impl Fn(usize) -> f64) -> (Vec<f64>, Vec<f64>, Vec<u64>) {
        let v = (0..n).map(f).collect();
        let t = (0..n).map(|i| i as f64).collect();
        let l = (0..n).map(|i| i as u64 + 2).collect();
        (v, t, l)
    }

    /// Deterministic noise in [-1, 1] (a fixed LCG; not random in the statistical sense,
    /// enough for a window test).
    fn noise(i: usize) -> f64 {
        let x = (i as u64)
            .wrapping_mul(6364136223846793005)
            .wrapping_add(1442695040888963407);
        ((x >> 33) as f64 / (1u64 << 31) as f64) * 2.0 - 1.0
    }

    fn off_target(values: &[f64], times: &[f64], lines: &[u64], target: &Target) -> Vec<Alert> {
        let mut e = AlertEngine::new(Thresholds::default());
        let input = OffTargetInput {
            kind: AlertKind::TemperatureOffTarget,
            column: "temperature",
            unit: "K",
            values,
            times,
            target,
            tolerance: 5.0,
            inefficiency: 2.0,
            sd: None,
            start_row: 0,
            row_offset: 0,
        };
        let loc = SliceLocator {
            lines,
            times,
            offset: 0,
        };
        e.scan_off_target(&input, 0..values.len(), &loc);
        e.alerts().to_vec()
    }

    #[test]
    fn off_target_raised_inside_the_window_after_the_shift() {
        // 300 K ± 4.5 K noise, then 285 K from row 400.
        let (v, t, l) = series(800, |i| {
            (if i < 400 { 300.0 } else { 285.0 }) + 4.5 * noise(i)
        });
        let a = off_target(&v, &t, &l, &Target::constant(300.0));
        assert_eq!(a.len(), 1, "{a:?}");
        let row = a[0].row.unwrap();
        assert!((400..450).contains(&row), "row {row}");
        assert_eq!(a[0].kind, AlertKind::TemperatureOffTarget);
        assert!(a[0].value.unwrap() < 295.0);
        assert!(a[0].message.contains("below"));
    }

    /// A followed run is scanned a few rows at a time: the window statistics from any
    /// later start are those of the scan from the first row (the window before the start is
    /// rebuilt whole). A window rebuilt one row short once dropped a row it never held: a
    /// wrong mean and a standard error of zero, and false alarms while following.
    #[test]
    fn window_statistics_do_not_depend_on_where_a_scan_starts() {
        let (v, t, _) = series(600, |i| 1.0 + 65.0 * noise(i));
        let target = Target::constant(1.0);
        let input = OffTargetInput {
            kind: AlertKind::PressureOffTarget,
            column: "pressure",
            unit: "bar",
            values: &v,
            times: &t,
            target: &target,
            tolerance: 50.0,
            inefficiency: 1.5,
            sd: None,
            start_row: 40,
            row_offset: 0,
        };
        let w = 11;
        let whole = window_stats(&input, 40, v.len(), w, 1.5);
        for start in [41, 45, 51, 52, 100, 333, 599] {
            let part = window_stats(&input, start, v.len(), w, 1.5);
            for (i, (a, b)) in part.iter().zip(&whole[start - 40..]).enumerate() {
                match (a, b) {
                    (Some(a), Some(b)) => {
                        assert!(
                            (a.0 - b.0).abs() < 1e-9,
                            "start {start}, row {i}: {a:?} {b:?}"
                        );
                        assert!(
                            (a.2 - b.2).abs() < 1e-9,
                            "start {start}, row {i}: {a:?} {b:?}"
                        );
                    }
                    (None, None) => {}
                    _ => panic!("start {start}, row {i}: {a:?} vs {b:?}"),
                }
            }
        }
    }

    #[test]
    fn off_target_not_raised_on_target_or_by_one_wild_row() {
        let (mut v, t, l) = series(800, |i| 300.0 + 4.5 * noise(i));
        v[500] = 200.0;
        assert!(off_target(&v, &t, &l, &Target::constant(300.0)).is_empty());
    }

    #[test]
    fn off_target_follows_a_schedule() {
        // Ramp 10 K -> 300 K over rows 0..100, then held: on schedule, no alert.
        let target = Target::schedule(vec![(0.0, 10.0), (100.0, 300.0)]).unwrap();
        let (v, t, l) = series(600, |i| target.value_at(i as f64) + 2.0 * noise(i));
        assert!(off_target(&v, &t, &l, &target).is_empty());
        // Held at 10 K instead: raised.
        let (v, t, l) = series(600, |i| 10.0 + 2.0 * noise(i));
        assert_eq!(off_target(&v, &t, &l, &target).len(), 1);
    }

    #[test]
    fn drift_severity_follows_normalised_size() {
        let lines: Vec<u64> = (1..100).collect();
        let times: Vec<f64> = (0..99).map(f64::from).collect();
        let loc = SliceLocator {
            lines: &lines,
            times: &times,
            offset: 0,
        };
        let ev = |k: Option<f64>, slope: f64| DriftEvidence {
            column: "conserved",
            unit: "kJ/mol",
            slope_per_ns: slope,
            stderr_per_ns: 10.0,
            kt_per_ns_per_dof: k,
            from_row: 20,
            to_row: 90,
        };
        let mut e = AlertEngine::new(Thresholds::default());
        // Not significant (|b|/SE = 2): nothing, whatever its size.
        assert!(!e.evaluate_drift(&ev(Some(0.5), 20.0), 0, &loc));
        // Significant but below 0.01 kT/ns/dof: nothing.
        assert!(!e.evaluate_drift(&ev(Some(0.005), 400.0), 1, &loc));
        // Warning, then escalated to critical.
        assert!(e.evaluate_drift(&ev(Some(0.02), 400.0), 2, &loc));
        assert_eq!(e.alerts()[0].severity, Severity::Warning);
        assert_eq!(e.alerts()[0].row, Some(20));
        assert_eq!(e.alerts()[0].line, Some(21));
        // One episode, one alert: escalated in place, its latest value and peak kept.
        assert!(!e.evaluate_drift(&ev(Some(0.2), 4000.0), 3, &loc));
        assert_eq!(e.alerts().len(), 1);
        assert_eq!(e.alerts()[0].severity, Severity::Critical);
        assert_eq!(e.alerts()[0].row, Some(20));
        assert_eq!(e.alerts()[0].peak, Some(4000.0));
        assert_eq!(e.alerts()[0].last_row, Some(90));
        // Unnormalised but significant: info.
        let mut e = AlertEngine::new(Thresholds::default());
        assert!(e.evaluate_drift(&ev(None, 400.0), 0, &loc));
        assert_eq!(e.alerts()[0].severity, Severity::Info);
    }

    #[test]
    fn stall_uses_the_limit_and_clears_on_a_new_row() {
        let mut e = AlertEngine::new(Thresholds::default());
        let loc = super::super::NoLocator;
        // Rows every 2 s: limit is the one-minute minimum.
        assert!(!e.evaluate_stall(159.0, 100.0, Some(2.0), Some(5), 0, &loc));
        assert!(e.evaluate_stall(161.0, 100.0, Some(2.0), Some(5), 1, &loc));
        assert!(e.is_active(AlertKind::Stalled, RUN));
        assert!(!e.evaluate_stall(162.0, 161.5, Some(2.0), Some(6), 2, &loc));
        assert!(!e.is_active(AlertKind::Stalled, RUN));
    }

    #[test]
    fn skipped_lines_info_then_warning() {
        let mut e = AlertEngine::new(Thresholds::default());
        e.evaluate_skipped(0, 1000, None);
        assert!(e.alerts().is_empty());
        e.evaluate_skipped(1, 1000, Some(17));
        assert_eq!(e.alerts()[0].severity, Severity::Info);
        assert_eq!(e.alerts()[0].line, Some(17));
        e.evaluate_skipped(1, 1000, Some(17));
        assert_eq!(e.alerts().len(), 1);
        e.evaluate_skipped(30, 1000, Some(17));
        assert_eq!(e.alerts().len(), 1);
        assert_eq!(e.alerts()[0].severity, Severity::Warning);
    }
}
