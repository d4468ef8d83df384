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
    OFF_TARGET_CLEAR_WINDOWS, OFF_TARGET_MARGIN_OF_TOLERANCE, OFF_TARGET_MAX_ROWS,
    OFF_TARGET_MIN_NEFF, OFF_TARGET_SHORT_FRACTION, OFF_TARGET_SHORT_SIGMAS, RUN,
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
    /// The episode while it lasts (one alert per episode, updated, never raised again):
    /// the last row at which its condition held.
    pub last_row: Option<u64>,
    /// The value at `last_row` (same unit as `value`).
    pub latest: Option<f64>,
    /// The value furthest from normal seen during the episode (same unit as `value`).
    pub peak: Option<f64>,
    /// Row at which the episode was cleared (its condition off for the clearing time);
    /// `None` while it lasts.
    pub cleared_row: Option<u64>,
    /// Simulated time of `cleared_row`, ps.
    pub cleared_time: Option<f64>,
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
            last_row: None,
            latest: None,
            peak: None,
            cleared_row: None,
            cleared_time: None,
        }
    }

    /// Whether the episode still lasts (raised and not cleared).
    pub fn is_ongoing(&self) -> bool {
        self.cleared_row.is_none()
    }

    /// The episode's course in words, for text output: peak, latest value and whether it
    /// ended (empty when the alert has nothing more to say than its message).
    pub fn episode_words(&self) -> String {
        let unit = self.unit.as_deref().unwrap_or("");
        let mut parts = Vec::new();
        if let Some(p) = self.peak.filter(|p| Some(*p) != self.value) {
            parts.push(format!("peak {}", format_number(p, unit)));
        }
        if let (Some(l), Some(r)) = (self.latest, self.last_row) {
            if Some(r) != self.row && Some(l) != self.peak {
                parts.push(format!("latest {} at row {r}", format_number(l, unit)));
            }
        }
        if let Some(r) = self.cleared_row {
            parts.push(format!("ended, cleared at row {r}"));
        }
        parts.join("; ")
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

    /// [`Alert::one_line`] with the episode's course appended (reports of a whole file:
    /// an episode not cleared is said to be still on at the last row).
    pub fn one_line_with_episode(&self) -> String {
        let mut episode = self.episode_words();
        if self.cleared_row.is_none() && self.raised_row.is_some() {
            if !episode.is_empty() {
                episode.push_str("; ");
            }
            episode.push_str("still on at the last row");
        }
        if episode.is_empty() {
            self.one_line()
        } else {
            format!("{} [{episode}]", self.one_line())
        }
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
    /// Index into `alerts` of the alert raised for the current (or last) episode.
    raised: Option<usize>,
    /// Size of the episode's peak so far (see [`Measure`]).
    peak_size: f64,
}

/// What an observation measured while its condition held: the value shown (in the
/// alert's unit) and how far from normal it is (any scale of the detector's own, larger is
/// further); the largest size gives the episode's peak.
#[derive(Debug, Clone, Copy, PartialEq)]
pub struct Measure {
    pub value: f64,
    pub size: f64,
}

impl Measure {
    /// A value and its distance from normal.
    pub fn new(value: f64, size: f64) -> Measure {
        Measure { value, size }
    }
}

/// One evaluation of a summary (drift fit, fluctuation test, stall check): the row it
/// speaks for (the last row analysed), what it measured, and where rows sit.
#[derive(Clone, Copy)]
pub struct Observed<'a> {
    pub row: Option<usize>,
    pub measure: Option<Measure>,
    pub locator: &'a dyn RowLocator,
}

/// What happened to an alert, in the order it happened (for printing as it happens).
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Change {
    /// The episode started: the alert is new.
    Raised,
    /// The episode grew worse: the alert's severity went up (same alert, updated).
    Escalated,
    /// The episode ended.
    Cleared,
}

/// One change of one alert: `alert` indexes [`AlertEngine::alerts`].
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Notice {
    pub alert: usize,
    pub change: Change,
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
            peak_size: f64::NEG_INFINITY,
        });
    state.hysteresis.set_sustain(sustain);
    state
}

/// First row of the episode of `state` (`row` when it has none).
fn episode_start(alerts: &[Alert], state: &State, row: usize) -> usize {
    state
        .raised
        .and_then(|i| alerts.get(i))
        .and_then(|a| a.row)
        .and_then(|r| usize::try_from(r).ok())
        .unwrap_or(row)
}

/// The episode of `state` goes on at `row`: its latest value and peak.
fn update_episode(alerts: &mut [Alert], state: &mut State, row: usize, measure: Option<Measure>) {
    let Some(alert) = state.raised.and_then(|i| alerts.get_mut(i)) else {
        return;
    };
    alert.last_row = Some(row as u64);
    if let Some(m) = measure {
        alert.latest = Some(m.value);
        if m.size.is_finite() && m.size >= state.peak_size {
            state.peak_size = m.size;
            alert.peak = Some(m.value);
        }
    }
}

/// The episode of `state` goes on at `row`, with what `measure(since, row)` measured
/// there (`since`: the episode's first row).
fn go_on<V>(alerts: &mut [Alert], state: &mut State, row: usize, measure: &mut V)
where
    V: FnMut(usize, usize) -> Option<Measure>,
{
    let m = measure(episode_start(alerts, state, row), row);
    update_episode(alerts, state, row, m);
}

/// Feeds `count` rows without the condition from row `from` on at once; the episode ends
/// at the row whose observation clears it.
fn quiet_rows(
    alerts: &mut [Alert],
    notices: &mut Vec<Notice>,
    state: &mut State,
    from: usize,
    count: usize,
    locator: &dyn RowLocator,
) {
    if let Some(at) = state.hysteresis.observe_false_run(count as u64) {
        let cleared = from + usize::try_from(at).unwrap_or(usize::MAX - from);
        end_episode(alerts, notices, state, Some(cleared), locator);
    }
}

/// The raised alert of a new episode of `state`.
fn start_episode(
    alerts: &mut Vec<Alert>,
    notices: &mut Vec<Notice>,
    state: &mut State,
    mut alert: Alert,
    raised_row: Option<usize>,
) {
    if let Some(r) = raised_row {
        alert.raised_row = Some(r as u64);
    }
    state.raised = Some(alerts.len());
    state.peak_size = f64::NEG_INFINITY;
    notices.push(Notice {
        alert: alerts.len(),
        change: Change::Raised,
    });
    alerts.push(alert);
}

/// The episode of `state` ended at `row`.
fn end_episode(
    alerts: &mut [Alert],
    notices: &mut Vec<Notice>,
    state: &State,
    row: Option<usize>,
    locator: &dyn RowLocator,
) {
    let Some(i) = state.raised else { return };
    if let Some(alert) = alerts.get_mut(i) {
        alert.cleared_row = row.map(|r| r as u64);
        alert.cleared_time = row.and_then(|r| locator.time(r)).filter(|t| t.is_finite());
        notices.push(Notice {
            alert: i,
            change: Change::Cleared,
        });
    }
}

/// The alert engine: per (kind, column) hysteresis states and the list of raised alerts,
/// one per episode: raised once, updated while it lasts, cleared when it ends.
#[derive(Debug, Clone)]
pub struct AlertEngine {
    thresholds: Thresholds,
    states: BTreeMap<Key, State>,
    alerts: Vec<Alert>,
    notices: Vec<Notice>,
}

impl AlertEngine {
    /// A new engine with these thresholds.
    pub fn new(thresholds: Thresholds) -> AlertEngine {
        AlertEngine {
            thresholds,
            states: BTreeMap::new(),
            alerts: Vec::new(),
            notices: Vec::new(),
        }
    }

    /// The thresholds in use.
    pub fn thresholds(&self) -> &Thresholds {
        &self.thresholds
    }

    /// Every alert raised so far, one per episode, in the order raised.
    pub fn alerts(&self) -> &[Alert] {
        &self.alerts
    }

    /// Every change of every alert (raised, escalated, cleared), in order: a live reader
    /// keeps a cursor into it to print each change once.
    pub fn notices(&self) -> &[Notice] {
        &self.notices
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

    /// Feeds the observations of rows `rows` for one (kind, column). `condition(row,
    /// active)` says whether the condition holds at that row (`active`: whether the alert
    /// is raised, for a condition with hysteresis in value); `measure(since, row)` what it measured there
    /// (called only while an episode lasts, `since` its first row); `make(since, row)` builds the alert when it is
    /// raised (`since` = first row of the sustained episode, `row` = the row at which the
    /// window was complete). Returns how many alerts were raised.
    #[allow(clippy::too_many_arguments)]
    pub fn scan<C, V, M>(
        &mut self,
        kind: AlertKind,
        column: &str,
        sustain: Sustain,
        rows: Range<usize>,
        mut condition: C,
        mut measure: V,
        mut make: M,
        locator: &dyn RowLocator,
    ) -> usize
    where
        C: FnMut(usize, bool) -> bool,
        V: FnMut(usize, usize) -> Option<Measure>,
        M: FnMut(usize, usize) -> Alert,
    {
        let state = state_of(&mut self.states, kind, column, sustain);
        let mut raised = 0;
        for row in rows {
            let holds = condition(row, state.hysteresis.is_active());
            match state.hysteresis.observe(row as u64, holds) {
                Transition::Raised { since } => {
                    let since = usize::try_from(since).unwrap_or(row);
                    let a = make(since, row);
                    start_episode(&mut self.alerts, &mut self.notices, state, a, Some(row));
                    go_on(&mut self.alerts, state, row, &mut measure);
                    raised += 1;
                }
                Transition::Cleared => {
                    end_episode(
                        &mut self.alerts,
                        &mut self.notices,
                        state,
                        Some(row),
                        locator,
                    );
                }
                Transition::None if holds && state.hysteresis.is_active() => {
                    go_on(&mut self.alerts, state, row, &mut measure);
                }
                Transition::None => {}
            }
        }
        raised
    }

    /// As [`AlertEngine::scan`] with the condition true exactly at the rows of `flagged`
    /// (ascending; rows outside `rows` are ignored): the runs of false rows between them
    /// are fed at once, so the cost is O(flagged rows), not O(rows). Same alerts, same state.
    #[allow(clippy::too_many_arguments)]
    pub fn scan_flagged<V, M>(
        &mut self,
        kind: AlertKind,
        column: &str,
        sustain: Sustain,
        rows: Range<usize>,
        flagged: impl IntoIterator<Item = usize>,
        mut measure: V,
        mut make: M,
        locator: &dyn RowLocator,
    ) -> usize
    where
        V: FnMut(usize, usize) -> Option<Measure>,
        M: FnMut(usize, usize) -> Alert,
    {
        let state = state_of(&mut self.states, kind, column, sustain);
        let mut raised = 0;
        let mut next = rows.start;
        for row in flagged {
            if row < next || row >= rows.end {
                continue;
            }
            let quiet = row - next;
            quiet_rows(
                &mut self.alerts,
                &mut self.notices,
                state,
                next,
                quiet,
                locator,
            );
            match state.hysteresis.observe(row as u64, true) {
                Transition::Raised { since } => {
                    let since = usize::try_from(since).unwrap_or(row);
                    let a = make(since, row);
                    start_episode(&mut self.alerts, &mut self.notices, state, a, Some(row));
                    go_on(&mut self.alerts, state, row, &mut measure);
                    raised += 1;
                }
                _ if state.hysteresis.is_active() => {
                    go_on(&mut self.alerts, state, row, &mut measure);
                }
                _ => {}
            }
            next = row + 1;
        }
        let quiet = rows.end.saturating_sub(next);
        quiet_rows(
            &mut self.alerts,
            &mut self.notices,
            state,
            next,
            quiet,
            locator,
        );
        raised
    }

    /// One observation of a summary (drift fit, fluctuation verdict, stall check) at
    /// evaluation index `index` (increasing). Returns true when an alert was raised.
    #[allow(clippy::too_many_arguments)]
    pub fn evaluate<M>(
        &mut self,
        kind: AlertKind,
        column: &str,
        sustain: Sustain,
        index: u64,
        condition: bool,
        at: Observed<'_>,
        make: M,
    ) -> bool
    where
        M: FnOnce() -> Alert,
    {
        let state = state_of(&mut self.states, kind, column, sustain);
        match state.hysteresis.observe(index, condition) {
            Transition::Raised { .. } => {
                start_episode(&mut self.alerts, &mut self.notices, state, make(), None);
                if let Some(r) = at.row {
                    update_episode(&mut self.alerts, state, r, at.measure);
                }
                true
            }
            Transition::Cleared => {
                end_episode(
                    &mut self.alerts,
                    &mut self.notices,
                    state,
                    at.row,
                    at.locator,
                );
                false
            }
            Transition::None => {
                if let (true, true, Some(r)) = (condition, state.hysteresis.is_active(), at.row) {
                    update_episode(&mut self.alerts, state, r, at.measure);
                }
                false
            }
        }
    }

    /// Records an event alert (restart, skipped lines) that has no condition to sustain.
    pub fn push_event(&mut self, alert: Alert) {
        self.notices.push(Notice {
            alert: self.alerts.len(),
            change: Change::Raised,
        });
        self.alerts.push(alert);
    }

    /// Raises the severity of the active alert of `kind` on `column` in place: a drift
    /// that grew from warning to critical is one episode, one alert, whose severity and
    /// message are brought up to date (and noticed once more, as [`Change::Escalated`]).
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
        let Some(i) = state.raised else { return };
        let Some(alert) = self.alerts.get_mut(i) else {
            return;
        };
        if alert.severity < severity {
            let newer = make();
            alert.severity = severity;
            alert.message = newer.message;
            self.notices.push(Notice {
                alert: i,
                change: Change::Escalated,
            });
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
            // A non-finite value has no size to compare: the episode keeps its last row.
            |_, _| None,
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
            locator,
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
    fn escalation_updates_the_one_alert_of_the_episode() {
        let mut e = AlertEngine::new(Thresholds::default());
        let s = Sustain::new(1, 2);
        let mk = |sev| move || Alert::new(AlertKind::Drift, sev, format!("drift {sev}"));
        let at = |row| Observed {
            row: Some(row),
            measure: Some(Measure::new(row as f64, row as f64)),
            locator: &NoLocator,
        };
        assert!(e.evaluate(
            AlertKind::Drift,
            "c",
            s,
            0,
            true,
            at(10),
            mk(Severity::Warning)
        ));
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
        assert_eq!(e.alerts().len(), 1);
        assert_eq!(e.worst(), Some(Severity::Critical));
        assert_eq!(e.alerts()[0].message, "drift critical");
        let changes: Vec<Change> = e.notices().iter().map(|n| n.change).collect();
        assert_eq!(changes, [Change::Raised, Change::Escalated]);
        // Still on: updated; then off twice: cleared at the evaluation's row.
        e.evaluate(
            AlertKind::Drift,
            "c",
            s,
            1,
            true,
            at(20),
            mk(Severity::Warning),
        );
        e.evaluate(
            AlertKind::Drift,
            "c",
            s,
            2,
            false,
            at(30),
            mk(Severity::Warning),
        );
        e.evaluate(
            AlertKind::Drift,
            "c",
            s,
            3,
            false,
            at(40),
            mk(Severity::Warning),
        );
        let a = &e.alerts()[0];
        assert_eq!(
            (a.last_row, a.latest, a.peak),
            (Some(20), Some(20.0), Some(20.0))
        );
        assert_eq!(a.cleared_row, Some(40));
        assert_eq!(e.notices().last().map(|n| n.change), Some(Change::Cleared));
    }

    #[test]
    fn an_episode_keeps_its_peak_latest_value_and_end() {
        // A flagged episode at rows 5..=9 with sizes rising then falling; cleared after
        // 3 clean rows: rows 10, 11, 12 -> cleared at row 12.
        let values = [
            0.0, 0.0, 0.0, 0.0, 0.0, 3.0, 7.0, 9.0, 4.0, 2.0, 0.0, 0.0, 0.0, 0.0,
        ];
        let lines: Vec<u64> = (1..=14).collect();
        let times: Vec<f64> = (0..14).map(|i| i as f64 * 0.5).collect();
        let loc = locator(&lines, &times);
        let mut whole = AlertEngine::new(Thresholds::default());
        let measure = |_: usize, r: usize| Some(Measure::new(values[r], values[r]));
        let make = |since: usize, _| {
            Alert::new(AlertKind::Runaway, Severity::Critical, "up").at(since, &loc)
        };
        whole.scan_flagged(
            AlertKind::Runaway,
            "x",
            Sustain::immediate(3),
            0..14,
            5..10,
            measure,
            make,
            &loc,
        );
        assert_eq!(whole.alerts().len(), 1);
        let a = &whole.alerts()[0];
        assert_eq!(a.row, Some(5));
        assert_eq!(a.peak, Some(9.0));
        assert_eq!((a.last_row, a.latest), (Some(9), Some(2.0)));
        assert_eq!((a.cleared_row, a.cleared_time), (Some(12), Some(6.0)));
        // Fed in pieces, or row by row with `scan`: the same episode.
        let mut parts = AlertEngine::new(Thresholds::default());
        for chunk in [0..6, 6..11, 11..14] {
            parts.scan_flagged(
                AlertKind::Runaway,
                "x",
                Sustain::immediate(3),
                chunk,
                5..10,
                measure,
                make,
                &loc,
            );
        }
        let mut rows = AlertEngine::new(Thresholds::default());
        rows.scan(
            AlertKind::Runaway,
            "x",
            Sustain::immediate(3),
            0..14,
            |r, _| (5..10).contains(&r),
            measure,
            make,
            &loc,
        );
        assert_eq!(whole.alerts(), parts.alerts());
        assert_eq!(whole.alerts(), rows.alerts());
        assert_eq!(whole.notices(), rows.notices());
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
