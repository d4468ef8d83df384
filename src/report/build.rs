//! Builds the [`Report`] model from a table, its analysis and the alerts.

use crate::alert::Alert;
use crate::analysis::{ColumnAnalysis, RunAnalysis, TableLocator};
use crate::stats::Equilibration;
use crate::table::RunTable;

use super::model::*;

/// What the report says about the file itself.
#[derive(Debug, Clone, PartialEq, Eq)]
pub struct SourceInfo {
    pub path: String,
    pub bytes: u64,
}

fn state_of(e: Option<&Equilibration>) -> (Option<usize>, EquilibrationState) {
    match e {
        Some(Equilibration::Onset { row, .. }) => (Some(*row), EquilibrationState::Equilibrated),
        Some(Equilibration::NotYet) => (None, EquilibrationState::NotYet),
        Some(Equilibration::TooShort) | None => (None, EquilibrationState::TooShort),
    }
}

fn onset(row: Option<usize>, first_row: usize, loc: &TableLocator<'_>) -> Option<Onset> {
    use crate::alert::RowLocator;
    row.map(|r| Onset {
        row: (first_row + r) as u64,
        time: loc.time(first_row + r).filter(|t| t.is_finite()),
    })
}

fn column_report(c: &ColumnAnalysis, first_row: usize, loc: &TableLocator<'_>) -> ColumnReport {
    let (row, state) = match c.equilibration {
        Some(_) => state_of(c.equilibration.as_ref()),
        None => (None, EquilibrationState::NotAnalysed),
    };
    ColumnReport {
        name: c.name.clone(),
        role: c.role.map(|r| r.name().to_string()),
        unit: c.unit.clone(),
        source_unit: c.source_unit.clone(),
        unit_assumed: c.unit_assumed,
        count: c.count as u64,
        nonfinite: c.nonfinite,
        equilibration: onset(row, first_row, loc),
        equilibration_state: state,
        mser_row: c.mser.map(|m| (first_row + m.row) as u64),
        production: c.production.as_ref().map(|p| Production {
            first_row: (first_row + p.first_row) as u64,
            count: p.count as u64,
            mean: p.mean,
            std: p.std,
            sem: p.sem_block,
            sem_from_g: p.sem_from_g,
            inefficiency: p.inefficiency,
            inefficiency_estimator: p.estimator.name().to_string(),
            effective_samples: p.effective_samples,
            min: Some(p.min),
            max: Some(p.max),
        }),
        trend: c.trend.as_ref().map(|t| Trend {
            test: "block-means-slope-holm".to_string(),
            slope_per_ns: t.slope_per_ns,
            p_value: Some(t.p_value),
            change: Some(t.change),
            sem: t.sem,
            still_changing: t.still_changing,
        }),
        drift: c.drift.as_ref().map(|d| DriftReport {
            per: d.per.name().to_string(),
            conservation: d.conservation,
            from_row: (first_row + d.from_row) as u64,
            slope_per_ns: d.slope_per_ns,
            stderr_per_ns: d.stderr_per_ns,
            stderr_method: match d.method {
                crate::stats::SlopeSeMethod::SqrtG => "ols-times-sqrt-g",
                crate::stats::SlopeSeMethod::Ar1 => "ar1-effective-n",
                crate::stats::SlopeSeMethod::NeweyWest => "newey-west",
            }
            .to_string(),
            confidence: crate::analysis::DRIFT_CONFIDENCE,
            ci_low_per_ns: d.ci_low_per_ns,
            ci_high_per_ns: d.ci_high_per_ns,
            per_atom_per_ns: d.per_atom_per_ns,
            kt_per_ns_per_dof: d.kt_per_ns_per_dof,
            normalisation: d.normalisation.map(str::to_string),
            significant: d.significant,
        }),
        fluctuation: c.fluctuation.as_ref().map(|f| FluctuationReport {
            observed: f.observed,
            expected: f.expected,
            low: f.low,
            high: f.high,
            coverage: f.coverage,
            degrees_of_freedom: f.n_df,
            verdict: match f.verdict {
                crate::stats::FluctuationVerdict::TooSmall => "too-small",
                crate::stats::FluctuationVerdict::Consistent => "consistent",
                crate::stats::FluctuationVerdict::TooLarge => "too-large",
            }
            .to_string(),
        }),
        spikes: c.spikes,
        last: c.last,
    }
}

/// The report of one log.
pub fn build_report(
    source: &SourceInfo,
    table: &RunTable,
    analysis: &RunAnalysis,
    alerts: &[Alert],
    precision: Option<(&str, f64)>,
    until_ps: Option<f64>,
) -> Report {
    let empty = crate::table::Segment {
        header_line: None,
        names: Vec::new(),
        header_commented: false,
        delimiter: crate::parse::layout::Delimiter::Whitespace,
        fields: 0,
        columns: Vec::new(),
        lines: Default::default(),
        restarts: Vec::new(),
        header_repeats: 0,
        order_column: None,
        derived_time: None,
    };
    let seg = table.segments.get(analysis.segment).unwrap_or(&empty);
    let loc = TableLocator::new(seg, analysis.first_row);
    let mut first_row = 0u64;
    let mut segments = Vec::new();
    let mut restarts = Vec::new();
    for (i, s) in table.segments.iter().enumerate() {
        let sloc = TableLocator::new(s, first_row as usize);
        segments.push(Segment {
            index: i as u64,
            first_row,
            rows: s.rows() as u64,
            first_line: s.header_line.or_else(|| s.lines.first()),
            columns: s.columns.iter().map(|c| c.spec.name.clone()).collect(),
        });
        for r in &s.restarts {
            use crate::alert::RowLocator;
            let row = first_row as usize + s.lines.row_at_or_after(r.line);
            restarts.push(Restart {
                row: row as u64,
                line: Some(r.line),
                time: sloc.time(row),
                replaced: r.rows_replaced,
            });
        }
        first_row += s.rows() as u64;
    }
    let (run_row, run_state) = state_of(analysis.equilibration.as_ref());
    let p = &analysis.progress;
    Report {
        schema_version: SCHEMA_VERSION,
        plateau_version: env!("CARGO_PKG_VERSION").to_string(),
        source: Source {
            path: source.path.clone(),
            bytes: source.bytes,
            lines: table.lines,
            last_line_ignored: table.partial_line.is_some(),
        },
        rows: table.rows() as u64 + analysis.folding.as_ref().map_or(0, |f| f.rows_forgotten),
        skipped_lines: table.skipped_count,
        skipped: table
            .skipped
            .iter()
            .take(SKIPPED_DETAIL_LIMIT)
            .map(|s| SkippedLine {
                line: s.line,
                reason: s.reason.to_string(),
            })
            .collect(),
        free_text_lines: table.text_lines,
        segments,
        restarts,
        status: analysis.status,
        status_reason: analysis.status_reason.clone(),
        ensemble: analysis.ensemble.as_ref().map(|e| EnsembleInfo {
            name: e.ensemble.to_string(),
            how: if e.given { "given" } else { "inferred" }.to_string(),
            reason: e.reason.clone(),
        }),
        degrees_of_freedom: analysis.degrees_of_freedom,
        equilibration: onset(run_row, analysis.first_row, &loc),
        equilibration_state: run_state,
        equilibration_from: analysis.equilibration_from.clone(),
        columns: analysis
            .columns
            .iter()
            .map(|c| column_report(c, analysis.first_row, &loc))
            .collect(),
        throughput: match (p.ns_per_day, p.ps_per_second) {
            (Some(ns_per_day), Some(ps_per_second)) => Some(Throughput {
                ns_per_day,
                ps_per_second,
            }),
            _ => None,
        },
        eta: match (until_ps, p.eta_seconds) {
            (Some(until_ps), Some(seconds)) => Some(Eta { until_ps, seconds }),
            _ => None,
        },
        precision_eta: match (precision, p.ps_per_second) {
            (Some((column, target_sem)), Some(_)) => Some(PrecisionEta {
                column: column.to_string(),
                target_sem,
                seconds: p.precision_eta_seconds,
            }),
            _ => None,
        },
        alerts: alerts.iter().map(AlertRecord::from).collect(),
        folding: analysis.folding.as_ref().map(|f| Folding {
            keep_rows: f.keep_rows as u64,
            rows_folded: f.rows_folded,
            block_rows: f.block_rows as u64,
            full_resolution_from_row: f.full_resolution_from_row,
            approximate: f.approximate.iter().map(|s| s.to_string()).collect(),
        }),
        stages: Vec::new(),
    }
}
