//! Bounded memory for a followed run: past `keep_rows` rows the oldest rows are folded by
//! the analyser (statistics, see `analysis::folded`), by the chart history (min, max and
//! mean per bucket, see [`super::History`]) and forgotten from the table and from the
//! arrival times.

use crate::analysis::{Analyzer, RunAnalysis};
use crate::parse::LogParser;

use super::History;

/// Folds and forgets the oldest rows once the last segment holds more than `keep_rows`
/// (rows already seen by the per-row detectors; see [`Analyzer::fold_past`]), with their
/// arrival times (`arrivals` holds one per row of the table, segment by segment). Call it
/// after `Analyzer::update`. Returns whether rows were forgotten.
pub fn bound_memory(
    parser: &mut LogParser,
    analyzer: &mut Analyzer,
    arrivals: &mut Vec<f64>,
    keep_rows: usize,
) -> bool {
    bound_memory_with_history(parser, analyzer, arrivals, keep_rows, None)
}

/// [`bound_memory`], also folding the forgotten rows of the last segment into `history`
/// so that charts of all rows can still be drawn.
pub fn bound_memory_with_history(
    parser: &mut LogParser,
    analyzer: &mut Analyzer,
    arrivals: &mut Vec<f64>,
    keep_rows: usize,
    history: Option<&mut History>,
) -> bool {
    let Some(keep) = analyzer.fold_past(parser.table(), keep_rows) else {
        return false;
    };
    let table = parser.table();
    if let (Some(history), Some(last)) = (history, table.segments.len().checked_sub(1)) {
        if let Some(seg) = table.segments.get(last) {
            let drop = seg.rows().saturating_sub(keep);
            if drop > 0 {
                let columns: Vec<&[f64]> = seg.columns.iter().map(|c| c.values()).collect();
                history.fold(last, &columns, drop);
            }
        }
    }
    let mut kept = Vec::with_capacity(arrivals.len().min(table.rows()));
    let mut start = 0usize;
    for seg in &table.segments {
        let rows = seg.rows();
        let drop = rows.saturating_sub(keep);
        kept.extend_from_slice(arrivals.get(start + drop..start + rows).unwrap_or_default());
        start += rows;
    }
    *arrivals = kept;
    parser.forget_all_but_last(keep);
    true
}

/// The sentence that tells the user a run's older rows are folded, if they are.
pub fn folding_note(analysis: &RunAnalysis) -> Option<String> {
    analysis.folding.as_ref().map(|f| f.describe())
}
