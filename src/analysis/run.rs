//! The run's full statistics: columns, the run's onset, ensemble, drift and fluctuation size.

use super::parallel::{map_in_order, PARALLEL_MIN_VALUES};
use super::present::{rows_all_present, Present};
use super::results::DriftPer;
use super::{
    blockwise_inefficiency, empty_analysis, finite_part_mean, first_nonfinite, judge_trends,
    observable, production, runaway_flags, runaway_options, stable_part, time_values, trend,
    AnalysisOptions, Analyzer, ColumnAnalysis, ColumnFlags, DriftSummary, EnsembleChoice, Progress,
    RunAnalysis,
};
use crate::alert::RunStatus;
use crate::mapping::Role;
use crate::stats::{self, Ensemble, Equilibration, FluctuationCheck, SlopeSeMethod};
use crate::table::{Column, RunTable, Segment};

/// Confidence of the drift interval.
pub const DRIFT_CONFIDENCE: f64 = 0.95;

impl Analyzer {
    /// The full statistics of segment `si`. `known`: per-row detector results of this
    /// update covering the whole segment (their runaway rows give the stable end without a
    /// second pass). Columns are computed on all cores.
    pub(super) fn full(
        &self,
        table: &RunTable,
        si: usize,
        known: Option<&[Option<ColumnFlags>]>,
    ) -> RunAnalysis {
        let Some(seg) = table.segments.get(si) else {
            return empty_analysis(si + 1);
        };
        let first_row: usize = table.segments.iter().take(si).map(Segment::rows).sum();
        self.full_segment(seg, si, first_row, known)
    }

    /// [`Analyzer::full`] on `seg`, segment `si` of its table, whose first row is row
    /// `first_row` through the run (a stage cut from a segment is analysed as one).
    pub(super) fn full_segment(
        &self,
        seg: &Segment,
        si: usize,
        first_row: usize,
        known: Option<&[Option<ColumnFlags>]>,
    ) -> RunAnalysis {
        let parallel = seg.rows() >= PARALLEL_MIN_VALUES / 4;
        // The statistics describe the run before it blew up: rows from the first non-finite
        // value or runaway growth in any analysed column on are left out.
        let ropts = runaway_options(&self.opts.thresholds);
        let analysed: Vec<(usize, &Column)> = seg
            .columns
            .iter()
            .enumerate()
            .filter(|(_, c)| observable(c))
            .collect();
        let stable_end = map_in_order(&analysed, parallel, |&(ci, c)| {
            let v = c.values();
            let end = first_nonfinite(v);
            let first_runaway = match known.and_then(|k| k.get(ci)).and_then(Option::as_ref) {
                Some(flags) => flags.runaway.first().map(|f| f.0),
                None => {
                    let p = Present::of(c);
                    let mut state = Default::default();
                    runaway_flags(p.values(), 0..p.index(end), &ropts, &mut state, true)
                        .first()
                        .map(|f| p.row(f.0))
                }
            };
            first_runaway.map_or(end, |r| r.min(end))
        })
        .into_iter()
        .min()
        .unwrap_or(seg.rows());
        let opts = &self.opts;
        let mut columns: Vec<ColumnAnalysis> = map_in_order(&seg.columns, parallel, |c| {
            let values = c.values();
            let finite_end = first_nonfinite(values).min(stable_end);
            // Rows without a value in this column are skipped; rows found on the present
            // values are mapped back to the segment's rows.
            let present = Present::of(c);
            let x = present
                .values()
                .get(..present.index(finite_end))
                .unwrap_or(&[]);
            let is_observable = observable(c);
            // A column with no value in these rows (written only in other stages) says
            // nothing about them.
            let (equilibration, mser, production) = if is_observable && !x.is_empty() {
                let eq = stats::detect_equilibration(x);
                let mser = stats::mser5(x).map(|mut m| {
                    m.row = present.row(m.row);
                    m
                });
                let production = match eq {
                    Equilibration::Onset { row, g, n_eff } => {
                        production(x, row, g, n_eff).map(|mut p| {
                            p.first_row = present.row(row);
                            p
                        })
                    }
                    _ => None,
                };
                let eq = match eq {
                    Equilibration::Onset { row, g, n_eff } => Equilibration::Onset {
                        row: present.row(row),
                        g,
                        n_eff,
                    },
                    other => other,
                };
                (Some(eq), mser, production)
            } else {
                (None, None, None)
            };
            // Only the off-target check reads it, and only without a production g.
            let needs_inefficiency_all = is_observable
                && production.as_ref().and_then(|p| p.inefficiency).is_none()
                && match c.spec.role {
                    Some(Role::Temperature) => opts.target_temperature.is_some(),
                    Some(Role::Pressure) => opts.target_pressure.is_some(),
                    _ => false,
                };
            ColumnAnalysis {
                count: values.len(),
                equilibration,
                mser,
                production,
                last: present.values().last().copied(),
                inefficiency_all: if needs_inefficiency_all {
                    blockwise_inefficiency(x)
                } else {
                    None
                },
                ..ColumnAnalysis::described(c)
            }
        });

        // The run's onset.
        let matters = [
            Role::Potential,
            Role::Volume,
            Role::Density,
            Role::Temperature,
            Role::Pressure,
        ];
        let mut from: Vec<String> = Vec::new();
        let mut onsets = Vec::new();
        for c in &columns {
            if c.role.is_some_and(|r| matters.contains(&r)) {
                if let Some(e) = c.equilibration {
                    onsets.push(e);
                    from.push(c.name.clone());
                }
            }
        }
        if onsets.is_empty() {
            for c in &columns {
                if let Some(e) = c.equilibration {
                    onsets.push(e);
                    from.push(c.name.clone());
                }
            }
        }
        let run_eq = stats::combine_onsets(&onsets);
        let run_row = run_eq.and_then(|e| e.row());

        // Trends from the run's onset (a column's own "not yet" does not hide them).
        if let Some(row) = run_row {
            let trends = map_in_order(&seg.columns, parallel, |c| {
                if !observable(c) {
                    return None;
                }
                let v = c.values();
                let end = first_nonfinite(v).min(stable_end);
                let present = Present::of(c);
                let (lo, hi) = (present.index(row.min(end)), present.index(end));
                let tail = present.values().get(lo..hi)?;
                let own = columns
                    .iter()
                    .find(|a| a.name == c.spec.name)
                    .and_then(|a| a.production.as_ref());
                // g of the detrended tail: a trend inflates g, and with it the blocks,
                // and would hide itself.
                let g = detrended_inefficiency(tail)
                    .or_else(|| own.and_then(|p| p.inefficiency))
                    .unwrap_or(1.0);
                let sem = own.and_then(|p| p.sem_block.or(p.sem_from_g)).or_else(|| {
                    stats::variance_population(tail)
                        .and_then(|v| stats::sem_from_g(v, g, tail.len()))
                });
                let mut t = trend(tail, seg, g, sem)?;
                if present.has_absent() && hi > lo + 1 {
                    // Slopes per present value, back to per row.
                    let span = present.row(hi - 1).saturating_sub(present.row(lo)) as f64;
                    let per_row = (hi - lo - 1) as f64 / span.max(1.0);
                    t.slope_per_row *= per_row;
                    t.slope_per_ns = t.slope_per_ns.map(|s| s * per_row);
                }
                Some(t)
            });
            for (c, t) in columns.iter_mut().zip(trends) {
                c.trend = t;
            }
        }

        // Ensemble.
        let ensemble = match self.opts.ensemble {
            Some(e) => Some(EnsembleChoice {
                ensemble: e,
                given: true,
                reason: "given with --ensemble".to_string(),
            }),
            None => {
                let part = |role: Role| -> Option<&[f64]> {
                    let v = seg.column(role)?.values();
                    let end = first_nonfinite(v).min(stable_end);
                    v.get(run_row.unwrap_or(0).min(end)..end)
                };
                // Without a kinetic column the potential energy stands in for it (in NVE
                // ΔU = −ΔK row to row), or the temperature as N_df·k_B·T/2 when N_df is known
                // (equipartition).
                let n_df = self.opts.degrees_of_freedom();
                let scaled_temperature: Option<Vec<f64>> = match (n_df, part(Role::Temperature)) {
                    (Some(n), Some(t)) => Some(
                        t.iter()
                            .map(|x| 0.5 * n * stats::BOLTZMANN_KJ_PER_MOL_K * x)
                            .collect(),
                    ),
                    _ => None,
                };
                let (kinetic, stand_in) = match (part(Role::Kinetic), part(Role::Potential)) {
                    (Some(k), _) => (Some(k), ""),
                    (None, Some(u)) => (Some(u), "potential energy in place of the kinetic: "),
                    (None, None) => (
                        scaled_temperature.as_deref(),
                        "N_df·k_B·T/2 in place of the kinetic energy: ",
                    ),
                };
                // Rows where every column it compares has a value.
                let (total, volume) = (part(Role::Total), part(Role::Volume));
                let given: Vec<&[f64]> = [total, kinetic, volume].into_iter().flatten().collect();
                let mut aligned = rows_all_present(&given).into_iter();
                let mut next = |c: Option<&[f64]>| c.and_then(|_| aligned.next());
                let (total, kinetic, volume) = (next(total), next(kinetic), next(volume));
                stats::infer_ensemble(total.as_deref(), kinetic.as_deref(), volume.as_deref()).map(
                    |g| EnsembleChoice {
                        ensemble: g.ensemble,
                        given: false,
                        reason: if g.ensemble == Ensemble::Npt {
                            g.reason
                        } else {
                            format!("{stand_in}{}", g.reason)
                        },
                    },
                )
            }
        };
        let n_df = self.opts.degrees_of_freedom();

        // Drift whenever an energy is logged: the conserved column, else the total energy
        // (a conservation test only in NVE; shown otherwise, labelled, with no alert).
        let nve = ensemble
            .as_ref()
            .is_some_and(|e| e.ensemble == Ensemble::Nve);
        let (drift_role, conservation) = if seg.column(Role::Conserved).is_some() {
            (Some(Role::Conserved), true)
        } else if seg.column(Role::Total).is_some() {
            (Some(Role::Total), nve)
        } else {
            (None, false)
        };
        // Per ns with a time column, else per step (step column) or per row.
        let rows_axis: Vec<f64>;
        let (axis, per) = match (time_values(seg), seg.column(Role::Step)) {
            (Some(t), _) => (t, DriftPer::Ns),
            (None, Some(s)) => (s.values(), DriftPer::Step),
            (None, None) => {
                rows_axis = (0..seg.rows()).map(|i| i as f64).collect();
                (rows_axis.as_slice(), DriftPer::Row)
            }
        };
        // After the run's onset; from the segment's start while the run has none (a drift
        // strong enough to keep the run from settling is still a drift).
        let drift_from = run_row.or_else(|| {
            matches!(
                run_eq,
                Some(Equilibration::NotYet) | Some(Equilibration::TooShort)
            )
            .then_some(0)
        });
        let drift_task = || -> Option<(Role, DriftSummary)> {
            let (role, row, times) = (drift_role?, drift_from?, axis);
            let temperature_mean = seg
                .column(Role::Temperature)
                .and_then(|c| finite_part_mean(stable_part(c.values(), stable_end), row));
            let kinetic_mean = seg
                .column(Role::Kinetic)
                .and_then(|c| finite_part_mean(stable_part(c.values(), stable_end), row));
            let c = columns.iter().find(|c| c.role == Some(role))?;
            let col = seg.column(role)?;
            let d = drift_summary(
                stable_part(col.values(), stable_end),
                times,
                row,
                &self.opts,
                n_df,
                temperature_mean,
                kinetic_mean,
                c.unit == "kJ/mol",
                per,
                conservation,
            )?;
            Some((role, d))
        };
        // Fluctuation size: NVT/NPT with N_df known, after the run's onset.
        let canonical = ensemble
            .as_ref()
            .is_some_and(|e| matches!(e.ensemble, Ensemble::Nvt | Ensemble::Npt));
        let fluctuation_task = || -> Option<FluctuationCheck> {
            let (true, Some(n_df), Some(row)) = (canonical, n_df, run_row) else {
                return None;
            };
            columns.iter().find(|c| c.role == Some(Role::Temperature))?;
            let v = seg.column(Role::Temperature)?.values();
            let end = first_nonfinite(v).min(stable_end);
            let part = Present::of_values(v.get(row.min(end)..end)?);
            stats::temperature_fluctuation(
                part.values(),
                n_df,
                None,
                self.opts.thresholds.fluctuation_band,
            )
        };
        // One after the other: each needs a whole-column working copy (residuals, squared
        // deviations), and run side by side the two copies would raise the peak memory.
        let drift = drift_task();
        let fluctuation = fluctuation_task();
        let mut conserved_name = None;
        if let Some((role, d)) = drift {
            if let Some(c) = columns.iter_mut().find(|c| c.role == Some(role)) {
                if d.conservation {
                    conserved_name = Some(c.name.clone());
                }
                c.drift = Some(d);
            }
        }
        judge_trends(&mut columns, conserved_name.as_deref());
        if let Some(f) = fluctuation {
            if let Some(c) = columns
                .iter_mut()
                .find(|c| c.role == Some(Role::Temperature))
            {
                c.fluctuation = Some(f);
            }
        }

        RunAnalysis {
            segment: si,
            first_row,
            columns,
            equilibration: run_eq,
            equilibration_from: from,
            ensemble,
            degrees_of_freedom: n_df,
            progress: Progress::default(),
            status: RunStatus::Settling,
            status_reason: String::new(),
            folding: None,
        }
    }
}

#[allow(clippy::too_many_arguments)]
pub(super) fn drift_summary(
    values: &[f64],
    times: &[f64],
    row: usize,
    opts: &AnalysisOptions,
    n_df: Option<f64>,
    temperature_mean: Option<f64>,
    kinetic_mean: Option<f64>,
    is_energy: bool,
    per: DriftPer,
    conservation: bool,
) -> Option<DriftSummary> {
    let end = first_nonfinite(values).min(first_nonfinite(times));
    // Rows without an energy value are left out of the fit.
    let present = Present::of_values(values.get(row..end)?);
    let t = present.gather(times.get(row..end)?);
    let d = stats::drift(&t, present.values(), SlopeSeMethod::SqrtG, DRIFT_CONFIDENCE)?;
    let scale = |v: f64| {
        if per == DriftPer::Ns {
            stats::per_ns(v)
        } else {
            v
        }
    };
    let slope = scale(d.fit.slope);
    let se = scale(d.se);
    let (kt, how) = if !is_energy || per != DriftPer::Ns {
        (None, None)
    } else if let (Some(n), Some(temp)) = (n_df, temperature_mean) {
        (
            stats::kt_per_ns_per_dof(slope, n, temp),
            Some("dof-and-temperature"),
        )
    } else if let Some(k) = kinetic_mean.filter(|k| *k > 0.0) {
        // <K> = N_df k_B T / 2 (equipartition), so N_df k_B T = 2<K>.
        (Some(slope / (2.0 * k)), Some("kinetic-energy"))
    } else {
        (None, None)
    };
    Some(DriftSummary {
        from_row: row,
        slope_per_ns: slope,
        stderr_per_ns: se,
        method: d.method,
        ci_low_per_ns: scale(d.ci_low),
        ci_high_per_ns: scale(d.ci_high),
        per_atom_per_ns: opts.atoms.and_then(|a| stats::per_atom(slope, a)),
        per,
        conservation,
        kt_per_ns_per_dof: kt,
        normalisation: how.filter(|_| kt.is_some()),
        significant: se > 0.0 && (slope / se).abs() > opts.thresholds.drift_sigmas,
    })
}

/// Statistical inefficiency of the residuals of a least-squares line through `x` (rows as
/// abscissa): the autocorrelation of the noise without that of a trend (METHODS §4.2).
pub(super) fn detrended_inefficiency(x: &[f64]) -> Option<f64> {
    let fit = stats::ols_on_rows(x)?;
    let residuals = fit.residuals_on_rows(x);
    stats::inefficiency(&residuals).map(|i| i.g)
}
