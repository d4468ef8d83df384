//! Per-row alerts: which rows the detectors look at, their flags, and the engine fed in order.

use std::ops::Range;

use super::parallel::{map_in_order, PARALLEL_MIN_VALUES};
use super::present::Present;
use super::{
    analysed_count, beyond_context, observable, runaway_flags, runaway_options, runaway_windows,
    spike_threshold, time_values, Analyzer, BaselineCache, ColumnCursor, ColumnFlags, ScanPlan,
    TableLocator, RUNAWAY_FAR_SIGMAS, RUNAWAY_SCALES,
};
use crate::alert::{AlertKind, Measure, OffTargetInput, Severity, Sustain};
use crate::mapping::Role;
use crate::stats::{self, HampelOptions};
use crate::table::{Column, RunTable, Segment};

/// Rows at the start of the tested part whose robust SD sizes the off-target window.
pub const OFF_TARGET_SD_ROWS: usize = 2000;
/// Rows per block of [`noise_inefficiency`].
const NOISE_BLOCK_ROWS: usize = 250;

/// Statistical inefficiency of the noise of `x` (which may hold a step or a ramp): the
/// median of g over blocks of [`NOISE_BLOCK_ROWS`] rows, each block detrended; g of the
/// whole detrended sample when it holds fewer than three blocks.
fn noise_inefficiency(x: &[f64]) -> Option<f64> {
    if x.len() < 3 * NOISE_BLOCK_ROWS {
        return super::run::detrended_inefficiency(x);
    }
    let mut gs: Vec<f64> = x
        .chunks_exact(NOISE_BLOCK_ROWS)
        .filter_map(super::run::detrended_inefficiency)
        .collect();
    gs.sort_by(f64::total_cmp);
    stats::median(&gs)
}

impl Analyzer {
    /// The rows the per-row detectors of segment `si` look at in this update: from the
    /// first row not yet scanned (or the first row a new restart replaced). Pure; the
    /// restarts are reported and the counters moved by [`Analyzer::scan_segment`].
    pub(super) fn scan_plan(&self, si: usize, seg: &Segment, finished: bool) -> ScanPlan {
        let n = seg.rows();
        let mut start = self.scanned.get(si).copied().unwrap_or(0);
        let mut spike_start = self.spike_scanned.get(si).copied().unwrap_or(0);
        let seen = self.restarts_seen.get(si).copied().unwrap_or(0);
        for r in seg.restarts.iter().skip(seen) {
            let row_in_seg = seg.lines.row_at_or_after(r.line);
            start = start.min(row_in_seg);
            spike_start = spike_start.min(row_in_seg);
        }
        let k = self.opts.thresholds.spike_window.max(1);
        ScanPlan {
            n,
            start: start.min(n),
            spike_start: spike_start.min(n),
            spike_end: if finished { n } else { n.saturating_sub(k) },
            spike_scanned: spike_start,
        }
    }

    /// Spike and runaway rows of every analysed column of segment `si` over `plan`,
    /// columns on all cores (pure but for the runaway baseline caches, which only memoise).
    pub(super) fn detect(
        &mut self,
        si: usize,
        seg: &Segment,
        plan: &ScanPlan,
    ) -> Vec<Option<ColumnFlags>> {
        let t = &self.opts.thresholds;
        let k = t.spike_window.max(1);
        let context_sigmas = spike_threshold(
            t.spike_sigmas,
            (plan.n + self.forgotten_rows(si)).saturating_mul(analysed_count(seg)),
        );
        let ropts = runaway_options(t);
        let hopts = HampelOptions {
            half_window: k,
            threshold: t.spike_sigmas,
            ..HampelOptions::default()
        };
        let directed = self.opts.directed_segments.contains(&si);
        let Some(cursors) = self.cursors.get_mut(si) else {
            return Vec::new();
        };
        cursors.resize_with(seg.columns.len(), ColumnCursor::default);
        let jobs: Vec<(&Column, BaselineCache)> = seg
            .columns
            .iter()
            .zip(cursors.iter())
            .map(|(c, cur)| (c, cur.baseline))
            .collect();
        let new_rows = plan.n - plan.start.min(plan.spike_start);
        let parallel = new_rows.saturating_mul(analysed_count(seg)) >= PARALLEL_MIN_VALUES;
        let done = map_in_order(&jobs, parallel, |&(col, cache)| {
            if !observable(col) {
                return None;
            }
            // Rows without a value in this column are skipped: the detectors run on the
            // present values and their rows are mapped back.
            let present = Present::of(col);
            let values = present.values();
            let at = |row: usize| present.index(row);
            let (spike_start, spike_end) = (at(plan.spike_start), at(plan.spike_end));
            let n = values.len();
            // Spikes (Hampel), rows whose full window is available.
            let spikes = if spike_end > spike_start {
                let lo = spike_start.saturating_sub(k);
                let hi = (spike_end + k).min(n);
                values
                    .get(lo..hi)
                    .map(|w| stats::hampel(w, &hopts))
                    .unwrap_or_default()
                    .into_iter()
                    .map(|i| i + lo)
                    .filter(|i| (spike_start..spike_end).contains(i))
                    .filter(|&i| beyond_context(values, i, k, context_sigmas))
                    .map(|i| present.row(i))
                    .collect()
            } else {
                Vec::new()
            };
            let mut cache = cache;
            let runaway = if directed {
                Vec::new()
            } else {
                runaway_flags(values, at(plan.start)..n, &ropts, &mut cache, false)
                    .into_iter()
                    .map(|(i, rate)| (present.row(i), rate))
                    .collect()
            };
            Some((ColumnFlags { spikes, runaway }, cache))
        });
        done.into_iter()
            .zip(cursors.iter_mut())
            .map(|(d, cur)| {
                d.map(|(flags, cache)| {
                    cur.baseline = cache;
                    flags
                })
            })
            .collect()
    }

    /// Per-row alerts on the new rows of segment `si` (`plan`, with the spike and runaway
    /// rows already found by [`Analyzer::detect`]), fed to the engine column by column.
    pub(super) fn scan_segment(
        &mut self,
        table: &RunTable,
        si: usize,
        seg: &Segment,
        offset: usize,
        plan: &ScanPlan,
        flags: &[Option<ColumnFlags>],
    ) {
        let loc = TableLocator::new(seg, offset);
        // Restarts: rows from the restart on were replaced; report and rescan them.
        let seen = self.restarts_seen.get(si).copied().unwrap_or(0);
        for r in seg.restarts.iter().skip(seen) {
            let row_in_seg = seg.lines.row_at_or_after(r.line);
            self.engine
                .restart(offset + row_in_seg, r.rows_replaced, &loc);
        }
        if let Some(s) = self.restarts_seen.get_mut(si) {
            *s = seg.restarts.len();
        }
        let ScanPlan {
            n,
            start,
            spike_start,
            spike_end,
            ..
        } = *plan;
        if let Some(c) = self.cursors.get_mut(si) {
            c.resize_with(seg.columns.len(), ColumnCursor::default);
        }
        let t = self.opts.thresholds.clone();
        let is_last = si + 1 == table.segments.len();
        let analysis = if is_last { self.cached.clone() } else { None };
        let run_row = analysis
            .as_ref()
            .and_then(|a| a.equilibration.and_then(|e| e.row()));

        let context_sigmas = spike_threshold(
            t.spike_sigmas,
            (n + self.forgotten_rows(si)).saturating_mul(analysed_count(seg)),
        );
        for (ci, col) in seg.columns.iter().enumerate() {
            let name = col.spec.name.as_str();
            let unit = col.spec.unit.map(|u| u.to_string()).unwrap_or_default();
            let values = col.values();
            // Non-finite.
            self.engine
                .scan_nonfinite(name, &unit, values, start..n, offset, &loc);
            if !observable(col) {
                continue;
            }
            let Some(found) = flags.get(ci).and_then(Option::as_ref) else {
                continue;
            };
            // Spikes (Hampel), rows whose full window is available.
            if spike_end > spike_start {
                let flagged = &found.spikes;
                if let Some(cur) = self.cursors.get_mut(si).and_then(|c| c.get_mut(ci)) {
                    cur.spikes += flagged.len() as u64;
                }
                let clear = t.spike_clear_rows;
                let unit_s = unit.clone();
                self.engine.scan_flagged(
                    AlertKind::Spike,
                    name,
                    Sustain::immediate(clear),
                    offset + spike_start..offset + spike_end,
                    flagged.iter().map(|r| r + offset),
                    |since, r| {
                        // A spike's size: how far it is from the row before the episode.
                        let v = values.get(r - offset).copied().filter(|v| v.is_finite())?;
                        let before = since
                            .checked_sub(offset + 1)
                            .and_then(|i| values.get(i).copied());
                        Some(Measure::new(v, before.map_or(0.0, |b| (v - b).abs())))
                    },
                    |since, _| {
                        let v = values.get(since - offset).copied().unwrap_or(f64::NAN);
                        crate::alert::Alert::new(
                            AlertKind::Spike,
                            Severity::Warning,
                            format!(
                                "{name} jumps to {} at this row, far outside its neighbours \
                                 (more than {} robust SDs from the moving median); look at this \
                                 step in the simulation's output",
                                crate::alert::format_number(v, &unit_s),
                                crate::alert::format_number(context_sigmas, "")
                            ),
                        )
                        .column(name)
                        .value(v, &unit_s)
                        .at(since, &loc)
                    },
                    &loc,
                );
            }
            // Runaway growth.
            self.scan_runaway(name, &unit, values, &found.runaway, start..n, offset, &loc);
            // Off-target temperature / pressure.
            let (kind, target, tolerance) = match col.spec.role {
                Some(Role::Temperature) => (
                    AlertKind::TemperatureOffTarget,
                    self.opts.target_temperature.clone(),
                    t.temperature_tolerance,
                ),
                Some(Role::Pressure) => (
                    AlertKind::PressureOffTarget,
                    self.opts.target_pressure.clone(),
                    t.pressure_tolerance,
                ),
                _ => continue,
            };
            let Some(target) = target else { continue };
            let Some(times) = time_values(seg) else {
                continue;
            };
            // Along a schedule: from the first row. A constant target: after the run's
            // onset; while the run has none, after the column's MSER-5 truncation point (the
            // usual warm-up cut), so a thermostat that leaves its target, which itself keeps
            // the run from settling, is still reported.
            let column = analysis
                .as_ref()
                .and_then(|a| a.columns.iter().find(|c| c.name == name));
            let start_row = if target.is_schedule() {
                Some(0)
            } else {
                run_row.or_else(|| column.and_then(|c| c.mser.map(|m| m.row)))
            };
            let Some(start_row) = start_row else { continue };
            let g = column
                .and_then(|c| {
                    c.production
                        .as_ref()
                        .and_then(|p| p.inefficiency)
                        .or(c.inefficiency_all)
                })
                .unwrap_or(1.0);
            // The noise that sizes the window and its margin, from the first rows tested
            // (an excursion later in the run must not lengthen the window that is to find
            // it): a robust (MAD) SD, and g as the median over blocks (a step or ramp
            // inside the sample raises the g of one block, not the median).
            // Along a schedule the noise is the spread around the schedule (a ramp's own
            // rise is not noise).
            let first_tested = start_row.saturating_sub(self.forgotten_rows(si));
            let from = first_tested.min(values.len());
            let sample: Vec<f64> = values
                .get(from..)
                .unwrap_or_default()
                .iter()
                .zip(times.get(from..).unwrap_or_default())
                .map(|(v, t)| {
                    if target.is_schedule() {
                        v - target.value_at(*t)
                    } else {
                        *v
                    }
                })
                .filter(|v| v.is_finite())
                .take(OFF_TARGET_SD_ROWS)
                .collect();
            let sd = stats::robust_sd(&sample).filter(|s| *s > 0.0).or_else(|| {
                column
                    .and_then(|c| c.production.as_ref())
                    .and_then(|p| p.std)
            });
            let g = noise_inefficiency(&sample).unwrap_or(g);
            let input = OffTargetInput {
                kind,
                column: name,
                unit: &unit,
                values,
                times,
                target: &target,
                tolerance,
                inefficiency: g,
                sd,
                start_row: first_tested,
                row_offset: offset,
            };
            self.engine.scan_off_target(&input, start..n, &loc);
        }
        if let Some(s) = self.scanned.get_mut(si) {
            *s = n;
        }
        if let Some(s) = self.spike_scanned.get_mut(si) {
            *s = plan.spike_scanned.max(spike_end);
        }
    }

    #[allow(clippy::too_many_arguments)]
    pub(super) fn scan_runaway(
        &mut self,
        name: &str,
        unit: &str,
        values: &[f64],
        flagged: &[(usize, f64)],
        rows: Range<usize>,
        offset: usize,
        loc: &TableLocator<'_>,
    ) {
        // One episode until no row was flagged for the longest growth window: a slow
        // blow-up whose rows dip back into the noise for a while is still one episode.
        let w0 = runaway_options(&self.opts.thresholds).window;
        let w = runaway_windows(w0)[RUNAWAY_SCALES - 1];
        let unit_s = unit.to_string();
        self.engine.scan_flagged(
            AlertKind::Runaway,
            name,
            Sustain::immediate(u32::try_from(w).unwrap_or(u32::MAX)),
            offset + rows.start..offset + rows.end,
            flagged.iter().map(|p| p.0 + offset),
            |since, r| {
                // A runaway's size: how far it has gone from where the episode began (its
                // non-finite rows are the non-finite alert's).
                let v = values.get(r - offset).copied().filter(|v| v.is_finite())?;
                let start = since
                    .checked_sub(offset)
                    .and_then(|i| values.get(i).copied())
                    .unwrap_or(v);
                Some(Measure::new(v, (v - start).abs()))
            },
            |since, _| {
                let x = values.get(since - offset).copied().unwrap_or(f64::NAN);
                let rate = flagged
                    .iter()
                    .find(|p| p.0 == since - offset)
                    .map_or(f64::NAN, |p| p.1);
                let how = if rate.is_finite() {
                    format!(
                        "grows exponentially (tenfold every {} rows)",
                        crate::alert::format_number(rate, "")
                    )
                } else {
                    format!(
                        "is more than {RUNAWAY_FAR_SIGMAS} robust SDs away from its recent values"
                    )
                };
                crate::alert::Alert::new(
                    AlertKind::Runaway,
                    Severity::Critical,
                    format!(
                        "{name} {how}: the run is blowing up; stop it and check the time step, \
                         bad contacts and the last restart"
                    ),
                )
                .column(name)
                .value(x, &unit_s)
                .at(since, loc)
            },
            loc,
        );
    }
}
