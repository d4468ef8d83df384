//! Alert engine: kinds, severities, sustained windows and hysteresis (pure, no I/O, no
//! clock: wall times are passed in as seconds).
//!
//! The engine does not compute statistics; `analysis` feeds it observations (per row, or
//! per evaluation of a summary such as a drift fit), and the engine decides when an alert
//! is raised and cleared ([`hysteresis`]) and records each raised alert with its row,
//! source line, simulated time, value, unit and a plain message.
//!
//! When each kind applies follows the Contract: non-finite, spike and runaway everywhere;
//! drift on the conserved (or NVE total) energy after the onset; off-target after the onset
//! or along a given schedule; fluctuation size after the onset; stalled when no row arrived
//! for the stall limit; restart and skipped lines from the parsed table.

pub mod detect;
pub mod hysteresis;
pub mod status;
pub mod target;
pub mod thresholds;

use std::collections::BTreeMap;
use std::fmt;
use std::ops::Range;

use serde::{Deserialize, Serialize};

pub use detect::{
    off_target_window_rows, DriftEvidence, FluctuationEvidence, OffTargetInput,
    OFF_TARGET_MARGIN_OF_TOLERANCE, OFF_TARGET_MAX_ROWS, OFF_TARGET_MIN_NEFF, RUN,
};
pub use hysteresis::{Hysteresis, Sustain, Transition};
pub use status::{RunStatus, StatusInputs};
pub use target::Target;
pub use thresholds::{Thresholds, THRESHOLD_KEYS};

/// What an alert is about. Kebab-case names in JSON and text.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum AlertKind {
    /// NaN, ±inf or an overflow field (`****`) in a column.
    Nonfinite,
    /// One value far outside its neighbours (Hampel identifier).
    Spike,
    /// Sustained exponential growth or a far excursion: a blow-up in progress.
    Runaway,
    /// The conserved energy drifts.
    Drift,
    /// The mean temperature is away from its target.
    TemperatureOffTarget,
    /// The mean pressure is away from its target.
    PressureOffTarget,
    /// Kinetic-temperature fluctuations of the wrong size for the ensemble.
    FluctuationSize,
    /// No row arrived for the stall limit.
    Stalled,
    /// The step counter went back: later rows replaced earlier ones.
    Restart,
    /// Data-like lines could not be read.
    SkippedLines,
}

impl AlertKind {
    /// Every kind, in a fixed order.
    pub const ALL: [AlertKind; 10] = [
        AlertKind::Nonfinite,
        AlertKind::Spike,
        AlertKind::Runaway,
        AlertKind::Drift,
        AlertKind::TemperatureOffTarget,
        AlertKind::PressureOffTarget,
        AlertKind::FluctuationSize,
        AlertKind::Stalled,
        AlertKind::Restart,
        AlertKind::SkippedLines,
    ];

    /// The kebab-case name.
    pub fn name(self) -> &'static str {
        match self {
            AlertKind::Nonfinite => "nonfinite",
            AlertKind::Spike => "spike",
            AlertKind::Runaway => "runaway",
            AlertKind::Drift => "drift",
            AlertKind::TemperatureOffTarget => "temperature-off-target",
            AlertKind::PressureOffTarget => "pressure-off-target",
            AlertKind::FluctuationSize => "fluctuation-size",
            AlertKind::Stalled => "stalled",
            AlertKind::Restart => "restart",
            AlertKind::SkippedLines => "skipped-lines",
        }
    }

    /// Looks a kind up by its kebab-case name.
    pub fn from_name(name: &str) -> Option<AlertKind> {
        AlertKind::ALL.into_iter().find(|k| k.name() == name)
    }
}

impl fmt::Display for AlertKind {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// How serious an alert is. Ordered: `Info < Warning < Critical`.
#[derive(Debug, Clone, Copy, PartialEq, Eq, PartialOrd, Ord, Hash, Serialize, Deserialize)]
#[serde(rename_all = "kebab-case")]
pub enum Severity {
    /// Worth knowing; never fails `check`.
    Info,
    /// Look at it; fails `check` by default.
    Warning,
    /// The run is broken or about to break.
    Critical,
}

impl Severity {
    /// The kebab-case name.
    pub fn name(self) -> &'static str {
        match self {
            Severity::Info => "info",
            Severity::Warning => "warning",
            Severity::Critical => "critical",
        }
    }

    /// Looks a severity up by its name.
    pub fn from_name(name: &str) -> Option<Severity> {
        match name {
            "info" => Some(Severity::Info),
            "warning" => Some(Severity::Warning),
            "critical" => Some(Severity::Critical),
            _ => None,
        }
    }
}

impl fmt::Display for Severity {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        f.write_str(self.name())
    }
}

/// One raised alert. Rows are 0-based indices into the run's series, lines 1-based line
/// numbers in the file, times in ps, values in the canonical unit named by `unit`.
#[derive(Debug, Clone, PartialEq)]
pub struct Alert {
    pub kind: AlertKind,
    pub severity: Severity,
    /// Column name as in the log (or its role when the log has no header).
    pub column: Option<String>,
    pub row: Option<u64>,
    pub line: Option<u64>,
    pub time: Option<f64>,
    pub value: Option<f64>,
    pub unit: Option<String>,
    /// Plain text: what happened and what to look at.
    pub message: String,
    /// Row at which the alert was raised (its condition sustained long enough); `row` is
    /// the first row of the episode.
    pub raised_row: Option<u64>,
}

impl Alert {
    /// An alert with no location yet.
    pub fn new(kind: AlertKind, severity: Severity, message: impl Into<String>) -> Alert {
        Alert {
            kind,
            severity,
            column: None,
            row: None,
            line: None,
            time: None,
            value: None,
            unit: None,
            message: message.into(),
            raised_row: None,
        }
    }

    /// Sets the column.
    pub fn column(mut self, column: &str) -> Alert {
        self.column = Some(column.to_string());
        self
    }

    /// Sets the value and its unit.
    pub fn value(mut self, value: f64, unit: &str) -> Alert {
        self.value = Some(value);
        self.unit = (!unit.is_empty()).then(|| unit.to_string());
        self
    }

    /// Sets the row and, when known, its source line and simulated time.
    pub fn at(mut self, row: usize, locator: &dyn RowLocator) -> Alert {
        self.row = Some(row as u64);
        self.line = locator.line(row);
        self.time = locator.time(row).filter(|t| t.is_finite());
        self
    }

    /// One line for people: `severity kind column row line time: message`.
    pub fn one_line(&self) -> String {
        let mut s = format!("{:<8} {}", self.severity.name(), self.kind.name());
        if let Some(c) = &self.column {
            s.push_str(&format!(" [{c}]"));
        }
        if let Some(l) = self.line {
            s.push_str(&format!(" line {l}"));
        }
        if let Some(r) = self.row {
            s.push_str(&format!(" row {r}"));
        }
        if let Some(t) = self.time {
            s.push_str(&format!(" t={}", format_number(t, "ps")));
        }
        s.push_str(": ");
        s.push_str(&self.message);
        s
    }
}

/// Plain number formatting for messages: up to 6 significant digits, unit appended.
pub fn format_number(value: f64, unit: &str) -> String {
    let text = if !value.is_finite() {
        if value.is_nan() {
            "nan".to_string()
        } else if value > 0.0 {
            "inf".to_string()
        } else {
            "-inf".to_string()
        }
    } else if value != 0.0 && (value.abs() >= 1e6 || value.abs() < 1e-3) {
        format!("{value:.3e}")
    } else {
        // Four significant digits, and never fewer than the integer part's.
        let digits_before = value.abs().max(1.0).log10().floor() as usize + 1;
        let keep = if value == 0.0 {
            0
        } else if value.abs() >= 1.0 {
            4usize.saturating_sub(digits_before)
        } else {
            // 0.001 ≤ |v| < 1: leading zeros after the point do not count.
            (3 - value.abs().log10().floor() as i32).clamp(0, 6) as usize
        };
        trim_zeros(&format!("{value:.keep$}"))
    };
    if unit.is_empty() {
        text
    } else {
        format!("{text} {unit}")
    }
}

/// A span of simulated time given in ps, in ps or ns with 3–4 significant digits.
pub fn format_duration_ps(ps: f64) -> String {
    if ps.is_finite() && ps.abs() >= 1000.0 {
        format_number(ps / 1000.0, "ns")
    } else {
        format_number(ps, "ps")
    }
}

fn trim_zeros(s: &str) -> String {
    if s.contains('.') && !s.contains('e') {
        s.trim_end_matches('0').trim_end_matches('.').to_string()
    } else {
        s.to_string()
    }
}

/// Where a row sits in the file and in simulated time.
pub trait RowLocator {
    /// 1-based source line of `row`.
    fn line(&self, row: usize) -> Option<u64>;
    /// Simulated time of `row`, ps.
    fn time(&self, row: usize) -> Option<f64>;
}

/// A locator over plain slices (row `i` is element `i - offset`).
#[derive(Debug, Clone, Copy)]
pub struct SliceLocator<'a> {
    pub lines: &'a [u64],
    pub times: &'a [f64],
    /// Row index of element 0.
    pub offset: usize,
}

impl RowLocator for SliceLocator<'_> {
    fn line(&self, row: usize) -> Option<u64> {
        self.lines.get(row.checked_sub(self.offset)?).copied()
    }
    fn time(&self, row: usize) -> Option<f64> {
        self.times.get(row.checked_sub(self.offset)?).copied()
    }
}

/// A locator that knows nothing (alerts without rows).
#[derive(Debug, Clone, Copy, Default)]
pub struct NoLocator;

impl RowLocator for NoLocator {
    fn line(&self, _row: usize) -> Option<u64> {
        None
    }
    fn time(&self, _row: usize) -> Option<f64> {
        None
    }
}

type Key = (AlertKind, String);

#[derive(Debug, Clone)]
struct State {
    hysteresis: Hysteresis,
    /// Index into `alerts` of the alert raised for the current episode.
    raised: Option<usize>,
}

/// The hysteresis state of `(kind, column)`, new with `sustain` the first time.
fn state_of<'a>(
    states: &'a mut BTreeMap<Key, State>,
    kind: AlertKind,
    column: &str,
    sustain: Sustain,
) -> &'a mut State {
    let state = states
        .entry((kind, column.to_string()))
        .or_insert_with(|| State {
            hysteresis: Hysteresis::new(sustain),
            raised: None,
        });
    state.hysteresis.set_sustain(sustain);
    state
}

/// The alert engine: per (kind, column) hysteresis states and the list of raised alerts.
#[derive(Debug, Clone)]
pub struct AlertEngine {
    thresholds: Thresholds,
    states: BTreeMap<Key, State>,
    alerts: Vec<Alert>,
}

impl AlertEngine {
    /// A new engine with these thresholds.
    pub fn new(thresholds: Thresholds) -> AlertEngine {
        AlertEngine {
            thresholds,
            states: BTreeMap::new(),
            alerts: Vec::new(),
        }
    }

    /// The thresholds in use.
    pub fn thresholds(&self) -> &Thresholds {
        &self.thresholds
    }

    /// Every alert raised so far, in the order raised.
    pub fn alerts(&self) -> &[Alert] {
        &self.alerts
    }

    /// Every alert raised so far, ordered by row (alerts without a row last), then kind;
    /// for reports of a whole file.
    pub fn alerts_by_row(&self) -> Vec<Alert> {
        let mut v = self.alerts.clone();
        v.sort_by_key(|a| (a.row.is_none(), a.row, a.kind));
        v
    }

    /// Alerts raised since the list had `since` entries (for printing as they happen).
    pub fn alerts_since(&self, since: usize) -> &[Alert] {
        self.alerts.get(since..).unwrap_or(&[])
    }

    /// Alerts whose condition still holds (raised and not cleared).
    pub fn active(&self) -> Vec<&Alert> {
        let mut idx: Vec<usize> = self
            .states
            .values()
            .filter(|s| s.hysteresis.is_active())
            .filter_map(|s| s.raised)
            .collect();
        idx.sort_unstable();
        idx.into_iter().filter_map(|i| self.alerts.get(i)).collect()
    }

    /// Whether an alert of `kind` on `column` is active.
    pub fn is_active(&self, kind: AlertKind, column: &str) -> bool {
        self.states
            .get(&(kind, column.to_string()))
            .is_some_and(|s| s.hysteresis.is_active())
    }

    /// Highest severity among all raised alerts.
    pub fn worst(&self) -> Option<Severity> {
        self.alerts.iter().map(|a| a.severity).max()
    }

    /// Feeds the observations of rows `rows` for one (kind, column). `condition(row)` says
    /// whether the condition holds at that row; `make(since, row)` builds the alert when it
    /// is raised (`since` = first row of the sustained episode, `row` = the row at which the
    /// window was complete). Returns how many alerts were raised.
    pub fn scan<C, M>(
        &mut self,
        kind: AlertKind,
        column: &str,
        sustain: Sustain,
        rows: Range<usize>,
        mut condition: C,
        mut make: M,
    ) -> usize
    where
        C: FnMut(usize) -> bool,
        M: FnMut(usize, usize) -> Alert,
    {
        let state = state_of(&mut self.states, kind, column, sustain);
        let mut raised = 0;
        for row in rows {
            match state.hysteresis.observe(row as u64, condition(row)) {
                Transition::Raised { since } => {
                    let since = usize::try_from(since).unwrap_or(row);
                    state.raised = Some(self.alerts.len());
                    let mut a = make(since, row);
                    a.raised_row = Some(row as u64);
                    self.alerts.push(a);
                    raised += 1;
                }
                Transition::Cleared | Transition::None => {}
            }
        }
        raised
    }

    /// As [`AlertEngine::scan`] with the condition true exactly at the rows of `flagged`
    /// (ascending; rows outside `rows` are ignored): the runs of false rows between them
    /// are fed at once, so the cost is O(flagged rows), not O(rows). Same alerts, same state.
    pub fn scan_flagged<M>(
        &mut self,
        kind: AlertKind,
        column: &str,
        sustain: Sustain,
        rows: Range<usize>,
        flagged: impl IntoIterator<Item = usize>,
        mut make: M,
    ) -> usize
    where
        M: FnMut(usize, usize) -> Alert,
    {
        let state = state_of(&mut self.states, kind, column, sustain);
        let mut raised = 0;
        let mut next = rows.start;
        for row in flagged {
            if row < next || row >= rows.end {
                continue;
            }
            state.hysteresis.observe_false_run((row - next) as u64);
            if let Transition::Raised { since } = state.hysteresis.observe(row as u64, true) {
                let since = usize::try_from(since).unwrap_or(row);
                state.raised = Some(self.alerts.len());
                let mut a = make(since, row);
                a.raised_row = Some(row as u64);
                self.alerts.push(a);
                raised += 1;
            }
            next = row + 1;
        }
        state
            .hysteresis
            .observe_false_run(rows.end.saturating_sub(next) as u64);
        raised
    }

    /// One observation of a summary (drift fit, fluctuation verdict, stall check) at
    /// evaluation index `index` (increasing). Returns true when an alert was raised.
    pub fn evaluate<M>(
        &mut self,
        kind: AlertKind,
        column: &str,
        sustain: Sustain,
        index: u64,
        condition: bool,
        make: M,
    ) -> bool
    where
        M: FnOnce() -> Alert,
    {
        let state = state_of(&mut self.states, kind, column, sustain);
        match state.hysteresis.observe(index, condition) {
            Transition::Raised { .. } => {
                state.raised = Some(self.alerts.len());
                self.alerts.push(make());
                true
            }
            Transition::Cleared | Transition::None => false,
        }
    }

    /// Records an event alert (restart, skipped lines) that has no condition to sustain.
    pub fn push_event(&mut self, alert: Alert) {
        self.alerts.push(alert);
    }

    /// Upgrades the severity of the active alert of `kind` on `column` (a drift that grew
    /// from warning to critical is one episode, reported once more at the higher level).
    pub fn escalate<M>(&mut self, kind: AlertKind, column: &str, severity: Severity, make: M)
    where
        M: FnOnce() -> Alert,
    {
        let Some(state) = self.states.get_mut(&(kind, column.to_string())) else {
            return;
        };
        if !state.hysteresis.is_active() {
            return;
        }
        let current = state
            .raised
            .and_then(|i| self.alerts.get(i))
            .map(|a| a.severity);
        if current.is_some_and(|s| s < severity) {
            state.raised = Some(self.alerts.len());
            self.alerts.push(make());
        }
    }

    /// Nonfinite values in rows `rows` (indices into `values`) of a column: raised at the
    /// first non-finite row written in the log (an absent value, a row without this
    /// column, is not one), critical; cleared after `nonfinite_clear_rows` finite rows.
    /// `values[i]` is row `row_offset + i` of the run (alerts carry run rows).
    pub fn scan_nonfinite(
        &mut self,
        column: &str,
        unit: &str,
        values: &[f64],
        rows: Range<usize>,
        row_offset: usize,
        locator: &dyn RowLocator,
    ) -> usize {
        let sustain = Sustain::immediate(self.thresholds.nonfinite_clear_rows);
        let off = row_offset;
        let nonfinite = values
            .get(rows.start..rows.end.min(values.len()))
            .unwrap_or(&[])
            .iter()
            .enumerate()
            .filter(|(_, v)| !v.is_finite() && !crate::table::is_absent(**v))
            .map(|(i, _)| rows.start + i + off);
        self.scan_flagged(
            AlertKind::Nonfinite,
            column,
            sustain,
            rows.start + off..rows.end + off,
            nonfinite,
            |since, _| {
                let v = values.get(since - off).copied().unwrap_or(f64::NAN);
                Alert::new(
                    AlertKind::Nonfinite,
                    Severity::Critical,
                    format!(
                        "{column} is {} at this row: the run has blown up or the field overflowed; \
                         look at the rows just before it and at the simulation's own output",
                        format_number(v, "")
                    ),
                )
                .column(column)
                .value(v, unit)
                .at(since, locator)
            },
        )
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn locator<'a>(lines: &'a [u64], times: &'a [f64]) -> SliceLocator<'a> {
        SliceLocator {
            lines,
            times,
            offset: 0,
        }
    }

    #[test]
    fn names_round_trip() {
        for k in AlertKind::ALL {
            assert_eq!(AlertKind::from_name(k.name()), Some(k));
        }
        assert_eq!(Severity::from_name("warning"), Some(Severity::Warning));
        assert!(Severity::Info < Severity::Warning && Severity::Warning < Severity::Critical);
    }

    #[test]
    fn nonfinite_raised_once_at_first_bad_row() {
        let values = [1.0, 2.0, f64::NAN, f64::INFINITY, 3.0, f64::NAN];
        let lines: Vec<u64> = (10..16).collect();
        let times: Vec<f64> = (0..6).map(|i| i as f64 * 2.0).collect();
        let mut e = AlertEngine::new(Thresholds::default());
        let n = e.scan_nonfinite("temp", "K", &values, 0..6, 0, &locator(&lines, &times));
        assert_eq!(n, 1);
        let a = &e.alerts()[0];
        assert_eq!(a.row, Some(2));
        assert_eq!(a.line, Some(12));
        assert_eq!(a.time, Some(4.0));
        assert_eq!(a.severity, Severity::Critical);
        assert!(a.value.is_some_and(f64::is_nan));
        assert!(e.is_active(AlertKind::Nonfinite, "temp"));
    }

    #[test]
    fn incremental_scan_equals_whole_scan() {
        let values: Vec<f64> = (0..300)
            .map(|i| {
                if i == 40 || i == 250 {
                    f64::NAN
                } else {
                    i as f64
                }
            })
            .collect();
        let lines: Vec<u64> = (1..=300).collect();
        let times: Vec<f64> = (0..300).map(f64::from).collect();
        let loc = locator(&lines, &times);
        let mut whole = AlertEngine::new(Thresholds::default());
        whole.scan_nonfinite("x", "", &values, 0..300, 0, &loc);
        let mut parts = AlertEngine::new(Thresholds::default());
        for chunk in [0..7, 7..41, 41..200, 200..300] {
            parts.scan_nonfinite("x", "", &values, chunk, 0, &loc);
        }
        // Debug text compares NaN values too.
        assert_eq!(
            format!("{:?}", whole.alerts()),
            format!("{:?}", parts.alerts())
        );
        // 40 and 250 are 210 rows apart: cleared after 100 clean rows, raised again.
        assert_eq!(whole.alerts().len(), 2);
    }

    #[test]
    fn escalation_reports_higher_severity_once() {
        let mut e = AlertEngine::new(Thresholds::default());
        let s = Sustain::new(1, 2);
        let mk = |sev| move || Alert::new(AlertKind::Drift, sev, "drift");
        assert!(e.evaluate(AlertKind::Drift, "c", s, 0, true, mk(Severity::Warning)));
        e.escalate(
            AlertKind::Drift,
            "c",
            Severity::Critical,
            mk(Severity::Critical),
        );
        e.escalate(
            AlertKind::Drift,
            "c",
            Severity::Critical,
            mk(Severity::Critical),
        );
        assert_eq!(e.alerts().len(), 2);
        assert_eq!(e.worst(), Some(Severity::Critical));
    }

    #[test]
    fn number_format_is_short_and_plain() {
        assert_eq!(format_number(300.0, "K"), "300 K");
        // 3–4 significant digits (never fewer than the integer part's) and the unit.
        assert_eq!(format_number(-56498.49, "kJ/mol"), "-56498 kJ/mol");
        assert_eq!(format_number(f64::NAN, ""), "nan");
        assert_eq!(format_number(2.5e11, "bar"), "2.500e11 bar");
        assert_eq!(format_number(0.0125, ""), "0.0125");
        assert_eq!(format_number(0.0, "K"), "0 K");
        assert_eq!(format_number(0.012_345_6, "K"), "0.01235 K");
        assert_eq!(format_number(5.23313, "robust SDs"), "5.233 robust SDs");
        assert_eq!(format_number(5.02602, "s"), "5.026 s");
        assert_eq!(format_number(301.234, "K"), "301.2 K");
        assert_eq!(format_duration_ps(12.5), "12.5 ps");
        assert_eq!(format_duration_ps(2500.0), "2.5 ns");
    }
}
