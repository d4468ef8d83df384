//! The snapshot a frame is drawn from: built from the runs and the dashboard's state in
//! one short pass (under the engine's lock), then drawn without it. Everything the
//! screen shows is decided here, as data: which runs need attention first, the verdict
//! sentences, each quantity's numbers, the chart resampled to the columns it gets, the
//! alerts newest first. Text from logs is escaped here, once.

use ratatui::layout::Rect;

use crate::alert::{Alert, AlertKind, RunStatus, Severity};
use crate::analysis::{ColumnAnalysis, RunAnalysis};
use crate::follow::WatchMode;
use crate::live::{Bucket, LiveRun, Pattern, Presence, RunId, RunSource, SeriesView};
use crate::mapping::Role;
use crate::stages::{StageKind, StageRecord};
use crate::stats::{Equilibration, FluctuationVerdict};

use super::app::{App, ChartView, Screen};
use super::format::{self, escape};
use super::layout::{self, DetailAreas, OverviewColumns};

/// One word for where a run stands: the analysis's status, or what keeps it from having
/// one yet.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub enum Condition {
    Unstable,
    Stalled,
    Drifting,
    Settling,
    Steady,
    Finished,
    /// The file's first read is in progress.
    Loading,
    /// No data row yet: the file does not exist yet, or holds only its preamble.
    Waiting,
    /// The file was deleted.
    Gone,
    /// Not analysed yet.
    Starting,
}

impl Condition {
    /// A symbol that tells the condition apart without colour.
    pub fn symbol(self) -> &'static str {
        match self {
            Condition::Unstable => "✗",
            Condition::Stalled => "‖",
            Condition::Drifting => "↗",
            Condition::Settling => "~",
            Condition::Steady => "✓",
            Condition::Finished => "■",
            Condition::Loading => "…",
            Condition::Waiting => "○",
            Condition::Gone => "?",
            Condition::Starting => "·",
        }
    }

    /// The word shown.
    pub fn word(self) -> &'static str {
        match self {
            Condition::Unstable => "unstable",
            Condition::Stalled => "stalled",
            Condition::Drifting => "drifting",
            Condition::Settling => "settling",
            Condition::Steady => "steady",
            Condition::Finished => "finished",
            Condition::Loading => "loading",
            Condition::Waiting => "waiting",
            Condition::Gone => "deleted",
            Condition::Starting => "starting",
        }
    }

    /// How urgently it needs a look: lower first.
    fn rank(self) -> u8 {
        match self {
            Condition::Unstable => 0,
            Condition::Stalled => 1,
            Condition::Drifting => 2,
            Condition::Gone => 3,
            Condition::Settling => 4,
            Condition::Waiting => 5,
            Condition::Loading | Condition::Starting => 6,
            Condition::Steady => 7,
            Condition::Finished => 8,
        }
    }
}

fn condition_of(run: &LiveRun) -> Condition {
    let status = run.analysis().map(|a| a.status);
    if status == Some(RunStatus::Unstable) {
        return Condition::Unstable;
    }
    let feed = run.feed();
    match feed.presence {
        Presence::Waiting if run.rows_seen() == 0 => return Condition::Waiting,
        Presence::Deleted => return Condition::Gone,
        _ => {}
    }
    if feed.loading().is_some() {
        return Condition::Loading;
    }
    match status {
        Some(RunStatus::Unstable) => Condition::Unstable,
        Some(RunStatus::Stalled) => Condition::Stalled,
        Some(RunStatus::Drifting) => Condition::Drifting,
        Some(RunStatus::Waiting) => Condition::Waiting,
        Some(RunStatus::Settling) => Condition::Settling,
        Some(RunStatus::Steady) => Condition::Steady,
        Some(RunStatus::Finished) => Condition::Finished,
        None => Condition::Starting,
    }
}

/// An alert as listed.
#[derive(Debug, Clone, PartialEq)]
pub struct AlertLine {
    pub severity: Severity,
    pub kind: &'static str,
    pub column: Option<String>,
    pub row: Option<u64>,
    /// Simulated time, ps.
    pub time: Option<f64>,
    /// Wall-clock second (the row's arrival, or when raised).
    pub wall: Option<f64>,
    pub message: String,
    /// Its condition still holds.
    pub active: bool,
    /// Alerts merged into this line (the same kind, severity and row on other columns).
    pub also: usize,
}

fn alert_line(alert: &Alert, wall: Option<f64>, active: bool) -> AlertLine {
    AlertLine {
        severity: alert.severity,
        kind: alert.kind.name(),
        column: alert.column.as_deref().map(|c| escape(c).into_owned()),
        row: alert.row,
        time: alert.time,
        wall,
        message: {
            let episode = alert.episode_words();
            // The course first: a long message is cut at the panel's edge.
            if episode.is_empty() {
                escape(&alert.message).into_owned()
            } else {
                format!("[{episode}] {}", escape(&alert.message))
            }
        },
        active,
        also: 0,
    }
}

/// Every alert of a run, newest first (by the arrival of its row, then by row), with
/// whether it is still active.
fn alert_lines(run: &LiveRun) -> Vec<AlertLine> {
    let active = run.active_alerts();
    let times = run.alert_times();
    let mut lines: Vec<AlertLine> = run
        .alerts()
        .iter()
        .enumerate()
        .map(|(i, a)| {
            let is_active = active.iter().any(|x| std::ptr::eq(*x, a));
            alert_line(a, times.get(i).copied(), is_active)
        })
        .collect();
    lines.reverse();
    lines.sort_by(|a, b| {
        let key = |l: &AlertLine| (l.wall.unwrap_or(f64::INFINITY), l.row.unwrap_or(u64::MAX));
        let (ka, kb) = (key(a), key(b));
        kb.0.total_cmp(&ka.0).then(kb.1.cmp(&ka.1))
    });
    group_alerts(lines)
}

/// Merges alerts of one kind, severity and row on several columns into one line that
/// names the columns (a blow-up turns every column non-finite at once).
fn group_alerts(lines: Vec<AlertLine>) -> Vec<AlertLine> {
    let mut out: Vec<AlertLine> = Vec::with_capacity(lines.len());
    for line in lines {
        if let Some(last) = out.last_mut() {
            let same = last.kind == line.kind
                && last.severity == line.severity
                && last.row.is_some()
                && last.row == line.row
                && last.active == line.active;
            if same {
                if let (Some(c), Some(new)) = (&mut last.column, &line.column) {
                    c.push_str(", ");
                    c.push_str(new);
                    last.also += 1;
                    continue;
                }
            }
        }
        out.push(line);
    }
    out
}

/// One line of the overview.
#[derive(Debug, Clone, PartialEq)]
pub struct RunLine {
    pub id: RunId,
    pub label: String,
    /// The batch job whose log this is: its id and name, escaped.
    pub job: Option<String>,
    pub condition: Condition,
    /// Fraction of the file read while loading.
    pub loading: Option<f64>,
    /// The sparkline's quantity and its buckets.
    pub spark_name: String,
    pub spark: Vec<Option<f64>>,
    pub rows: u64,
    /// Simulated time of the last row, ps.
    pub sim_time: Option<f64>,
    /// Fraction of `--until` reached.
    pub progress: Option<f64>,
    pub ns_per_day: Option<f64>,
    /// Seconds since the last row arrived.
    pub last_row_age: Option<f64>,
    pub newest_alert: Option<AlertLine>,
    pub active_alerts: usize,
    pub worst_active: Option<Severity>,
    /// The stage being written, for a run cut into stages.
    pub stage: Option<StageCell>,
    rank: (u8, u8),
}

/// The stage a staged run is in, as the overview shows it.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct StageCell {
    pub kind: StageKind,
    /// 1-based position, and how many stages there are so far.
    pub number: usize,
    pub of: usize,
}

/// One stage of the selected run, as listed.
#[derive(Debug, Clone, PartialEq)]
pub struct StageLine {
    pub number: usize,
    pub kind: StageKind,
    /// "constant volume" or "constant pressure", when known.
    pub conditions: Option<&'static str>,
    /// Rows through the run (first, last), 0-based.
    pub rows: (u64, u64),
    /// Simulated time span, ps.
    pub times: Option<(f64, f64)>,
    /// The file of a chain it comes from (escaped; the name only).
    pub file: Option<String>,
    /// The verdict word (converged, followed-ramp, equilibrated...).
    pub verdict: String,
    /// Bad news is flagged with its severity.
    pub flag: Option<Severity>,
    /// The stage being written.
    pub current: bool,
}

/// How bad a stage verdict is (none for good news).
pub fn verdict_flag(verdict: &str) -> Option<Severity> {
    match verdict {
        "unstable" => Some(Severity::Critical),
        "off-ramp" | "energy-rises" | "stalled" | "not-converged" => Some(Severity::Warning),
        "not-yet" | "too-short" => Some(Severity::Info),
        _ => None,
    }
}

fn stage_line(s: &StageRecord, current: bool) -> StageLine {
    StageLine {
        number: s.index as usize + 1,
        kind: s.kind,
        conditions: s.conditions.map(|c| c.words()),
        rows: (s.first_row, (s.first_row + s.rows).saturating_sub(1)),
        times: s.start_time.zip(s.end_time),
        file: s.file.as_deref().map(|f| {
            let name = f.rsplit('/').next().unwrap_or(f);
            escape(name).into_owned()
        }),
        verdict: escape(&s.verdict).into_owned(),
        flag: verdict_flag(&s.verdict),
        current,
    }
}

/// The stages of a run cut into more than one, and the note on rows folded away.
fn stage_lines(run: &LiveRun) -> (Vec<StageLine>, Option<String>) {
    let Some(st) = run.stages().filter(|s| s.staged()) else {
        return (Vec::new(), None);
    };
    let last = st.stages.len().saturating_sub(1);
    let lines = st
        .stages
        .iter()
        .enumerate()
        .map(|(i, s)| stage_line(s, i == last && !run.ended()))
        .collect();
    (lines, st.folding_note())
}

fn stage_cell(run: &LiveRun) -> Option<StageCell> {
    let st = run.stages().filter(|s| s.staged())?;
    let cur = st.current()?;
    Some(StageCell {
        kind: cur.kind,
        number: cur.index as usize + 1,
        of: st.stages.len(),
    })
}

/// How a quantity's equilibration stands.
#[derive(Debug, Clone, Copy, PartialEq)]
pub enum Onset {
    /// Equilibrated from this row of the segment (time in ps when known).
    At {
        row: u64,
        time: Option<f64>,
    },
    NotYet,
    TooShort,
    /// Not analysed (yet).
    Unknown,
}

/// One analysed quantity of the selected run.
#[derive(Debug, Clone, PartialEq)]
pub struct Quantity {
    pub column: usize,
    /// The name as in the log (escaped); `name_raw` keys the selection.
    pub name: String,
    pub name_raw: String,
    pub unit: String,
    pub role: Option<Role>,
    pub current: Option<f64>,
    pub onset: Onset,
    /// Production mean and its standard error.
    pub mean: Option<(f64, Option<f64>)>,
    pub n_eff: Option<f64>,
    pub g: Option<f64>,
    pub still_changing: bool,
    /// Worst active alert on this column.
    pub alert: Option<Severity>,
    pub spark: Vec<Option<f64>>,
}

/// The trend chart of the charted quantity.
#[derive(Debug, Clone, PartialEq)]
pub struct Chart {
    pub name: String,
    pub unit: String,
    pub view: ChartView,
    /// The rows the x axis covers (may extend past the last row, so the chart does not
    /// move with every row).
    pub from_row: u64,
    pub to_row: u64,
    /// One bucket per pixel column of the plot (two per terminal column).
    pub buckets: Vec<Bucket>,
    pub y_low: f64,
    pub y_high: f64,
    pub onset_row: Option<u64>,
    pub mean: Option<f64>,
    pub error: Option<f64>,
    pub current: Option<f64>,
    /// Axis labels: left end, right end, onset.
    pub x_left: String,
    pub x_right: String,
    pub onset_label: Option<String>,
    /// Rows in the series.
    pub rows: u64,
    /// Said when the view cannot be what was asked (no onset yet for "production").
    pub note: Option<String>,
}

/// One item of the summary panel.
#[derive(Debug, Clone, PartialEq)]
pub struct Item {
    pub label: &'static str,
    pub value: String,
    /// Marks the value (a warning or worse is drawn as such).
    pub flag: Option<Severity>,
}

fn item(label: &'static str, value: impl Into<String>) -> Item {
    Item {
        label,
        value: value.into(),
        flag: None,
    }
}

/// Everything about the selected run.
#[derive(Debug, Clone, PartialEq)]
pub struct Detail {
    pub id: RunId,
    pub label: String,
    pub condition: Condition,
    pub loading: Option<f64>,
    /// Position in the overview's order, and how many runs there are.
    pub position: usize,
    pub runs: usize,
    pub mode: String,
    pub last_row_age: Option<f64>,
    /// The answer to "has it equilibrated?", with its severity when it is bad news.
    pub verdict: String,
    pub verdict_flag: Option<Severity>,
    pub quantities: Vec<Quantity>,
    /// Index into `quantities` of the charted one.
    pub charted: usize,
    pub chart: Option<Chart>,
    pub summary: Vec<Item>,
    pub alerts: Vec<AlertLine>,
    /// Alerts still active, and raised in all (lines may merge several).
    pub active_alerts: usize,
    pub total_alerts: usize,
    /// The latest things the follower said (truncated, deleted...), newest last.
    pub notices: Vec<(f64, String)>,
    /// The stages, when the run is cut into more than one.
    pub stages: Vec<StageLine>,
    /// Said when the stages were judged on the rows kept only.
    pub stages_note: Option<String>,
}

/// What one frame shows.
#[derive(Debug, Clone, PartialEq)]
pub struct Snapshot {
    pub now: f64,
    pub size: Rect,
    pub screen: Screen,
    pub runs: Vec<RunLine>,
    /// Patterns that match no file yet.
    pub waiting_patterns: Vec<String>,
    /// What brings more runs besides patterns (batch jobs: how many run), escaped; set by
    /// the caller after [`build`].
    pub feed_summary: Option<String>,
    pub detail: Option<Detail>,
    pub help: bool,
    pub paused: bool,
    pub overview_exists: bool,
    pub message: Option<(String, bool)>,
    pub alert_scroll: usize,
    pub chart_only: bool,
    pub selected: Option<RunId>,
    pub window_rows: u64,
}

impl Snapshot {
    /// The runs in the order shown.
    pub fn order(&self) -> Vec<RunId> {
        self.runs.iter().map(|r| r.id).collect()
    }

    /// The selected run's quantities (keys of the selection).
    pub fn quantity_names(&self) -> Vec<String> {
        self.detail
            .as_ref()
            .map(|d| d.quantities.iter().map(|q| q.name_raw.clone()).collect())
            .unwrap_or_default()
    }

    /// Seconds until a shown "time since" text changes, if any is shown.
    pub fn next_clock_change(&self) -> Option<f64> {
        let ages: Vec<f64> = match (&self.detail, self.screen) {
            (Some(d), Screen::Detail) => d.last_row_age.into_iter().collect(),
            _ => self.runs.iter().filter_map(|r| r.last_row_age).collect(),
        };
        ages.into_iter()
            .map(format::duration_changes_in)
            .min_by(f64::total_cmp)
    }

    /// Runs needing attention (shown first in the overview).
    pub fn needing_attention(&self) -> usize {
        self.runs.iter().filter(|r| r.rank.0 <= 3).count()
    }
}

/// Importance of a role for the default chart and the order of quantities.
fn role_order(role: Option<Role>) -> u8 {
    match role {
        Some(Role::Potential) => 0,
        Some(Role::Temperature) => 1,
        Some(Role::Pressure) => 2,
        Some(Role::Density) => 3,
        Some(Role::Volume) => 4,
        Some(Role::Conserved) => 5,
        Some(Role::Total) => 6,
        Some(Role::Kinetic) => 7,
        None => 8,
        Some(Role::Step) | Some(Role::Time) => 9,
    }
}

/// The analysed segment and its first row through the run.
fn segment_of(run: &LiveRun) -> Option<(usize, &RunAnalysis)> {
    let a = run.analysis()?;
    (a.segment < run.table().segments.len()).then_some((a.segment, a))
}

/// Analysed columns of the run's analysed segment: (column index, analysis), most
/// telling first.
fn analysed_columns(run: &LiveRun) -> Vec<(usize, &ColumnAnalysis)> {
    let Some((_, a)) = segment_of(run) else {
        return Vec::new();
    };
    let mut cols: Vec<(usize, &ColumnAnalysis)> = a
        .columns
        .iter()
        .enumerate()
        .filter(|(_, c)| !matches!(c.role, Some(Role::Step) | Some(Role::Time)))
        .collect();
    cols.sort_by_key(|(i, c)| (role_order(c.role), *i));
    cols
}

/// Means of `n` buckets over the whole series (a sparkline).
fn spark_of(series: Option<SeriesView<'_>>, n: usize) -> Vec<Option<f64>> {
    let Some(s) = series else {
        return vec![None; n];
    };
    let rows = s.rows();
    if rows == 0 || n == 0 {
        return vec![None; n];
    }
    // The buckets' rows only change when the series passes a "nice" length (as the
    // chart's), so a new row redraws one cell; fewer rows than cells give one row a cell.
    let to = nice_ceiling(rows).max(n as u64);
    s.resample(0, to, n).iter().map(Bucket::mean).collect()
}

fn onset_of(c: &ColumnAnalysis, time: Option<SeriesView<'_>>) -> Onset {
    match c.equilibration {
        Some(Equilibration::Onset { row, .. }) => Onset::At {
            row: row as u64,
            time: time.and_then(|t| t.value_at(row as u64)),
        },
        Some(Equilibration::NotYet) => Onset::NotYet,
        Some(Equilibration::TooShort) => Onset::TooShort,
        None => Onset::Unknown,
    }
}

fn time_series(run: &LiveRun, segment: usize) -> Option<SeriesView<'_>> {
    let seg = run.table().segments.get(segment)?;
    let i = seg
        .columns
        .iter()
        .position(|c| c.spec.role == Some(Role::Time))?;
    run.series(segment, i)
}

fn worst_active_on(run: &LiveRun, column: &str) -> Option<Severity> {
    run.active_alerts()
        .iter()
        .filter(|a| a.column.as_deref() == Some(column))
        .map(|a| a.severity)
        .max()
}

fn quantities(run: &LiveRun, spark_cells: usize) -> Vec<Quantity> {
    let Some((segment, _)) = segment_of(run) else {
        return Vec::new();
    };
    let time = time_series(run, segment);
    analysed_columns(run)
        .into_iter()
        .map(|(i, c)| {
            let series = run.series(segment, i);
            let p = c.production.as_ref();
            Quantity {
                column: i,
                name: escape(&c.name).into_owned(),
                name_raw: c.name.clone(),
                unit: escape(&c.unit).into_owned(),
                role: c.role,
                current: series.and_then(|s| s.last()),
                onset: onset_of(c, time),
                mean: p.map(|p| (p.mean, p.sem_block.or(p.sem_from_g))),
                n_eff: p.and_then(|p| p.effective_samples),
                g: p.and_then(|p| p.inefficiency),
                still_changing: c.trend.as_ref().is_some_and(|t| t.still_changing),
                alert: worst_active_on(run, &c.name),
                spark: spark_of(series, spark_cells),
            }
        })
        .collect()
}

/// The smallest "nice" number (1, 1.25, 1.5, 2, 2.5, 3, 4, 5, 6, 8 × 10^k) at or above `n`:
/// a chart's x range grows in these steps, so it is redrawn whole only now and then.
pub fn nice_ceiling(n: u64) -> u64 {
    const STEPS: [u64; 10] = [100, 125, 150, 200, 250, 300, 400, 500, 600, 800];
    let n = n.max(10);
    let mut scale = 1u64;
    loop {
        for s in STEPS {
            let v = s.saturating_mul(scale) / 100;
            if v >= n {
                return v;
            }
        }
        if scale > u64::MAX / 100 {
            return n;
        }
        scale *= 10;
    }
}

/// The x range of a chart view over `rows` rows.
pub fn x_range(view: ChartView, rows: u64, onset: Option<u64>, window: u64) -> (u64, u64) {
    match (view, onset) {
        (ChartView::Production, Some(o)) if o < rows => (o, o + nice_ceiling(rows - o)),
        (ChartView::Window, _) => {
            let w = window.max(4);
            let step = (w / 4).max(1);
            let start = if rows <= w {
                0
            } else {
                (rows - w).div_ceil(step) * step
            };
            (start, start + w)
        }
        _ => (0, nice_ceiling(rows)),
    }
}

/// A value range rounded out to a step of about a quarter of its span (so small changes
/// do not rescale the chart).
pub fn y_range(low: f64, high: f64) -> (f64, f64) {
    if !(low.is_finite() && high.is_finite()) {
        return (0.0, 1.0);
    }
    let (low, high) = if high > low {
        (low, high)
    } else {
        let pad = if low == 0.0 { 1.0 } else { low.abs() * 1e-3 };
        (low - pad, high + pad)
    };
    let raw = (high - low) / 4.0;
    let magnitude = 10f64.powf(raw.log10().floor());
    let step = [1.0, 2.0, 2.5, 5.0, 10.0]
        .iter()
        .map(|m| m * magnitude)
        .find(|s| *s >= raw)
        .unwrap_or(raw);
    let lo = (low / step).floor() * step;
    let hi = (high / step).ceil() * step;
    if hi > lo {
        (lo, hi)
    } else {
        (low, high)
    }
}

/// The simulated time at `row` of the segment, extrapolated past the last row.
fn time_at(time: Option<SeriesView<'_>>, row: u64) -> Option<f64> {
    let t = time?;
    let rows = t.rows();
    if row < rows {
        return t.value_at(row);
    }
    let last = rows.checked_sub(1)?;
    let t_last = t.value_at(last)?;
    let t0 = t.value_at(0)?;
    if last == 0 {
        return Some(t_last);
    }
    Some(t_last + (t_last - t0) / last as f64 * (row - last) as f64)
}

fn x_label(time: Option<SeriesView<'_>>, row: u64, first_row: u64) -> String {
    match time_at(time, row) {
        Some(t) => format::sim_time(t),
        None => format!("row {}", row + first_row),
    }
}

fn chart_of(run: &LiveRun, q: &Quantity, app: &App, plot: Rect) -> Option<Chart> {
    let (segment, analysis) = segment_of(run)?;
    let series = run.series(segment, q.column)?;
    let time = time_series(run, segment);
    let rows = series.rows();
    let onset_row = match q.onset {
        Onset::At { row, .. } => Some(row),
        _ => match analysis.equilibration {
            Some(Equilibration::Onset { row, .. }) => Some(row as u64),
            _ => None,
        },
    };
    let (from, to) = x_range(app.view, rows, onset_row, app.window_rows);
    // After a blow-up the scale comes from the rows before it; later rows are drawn off
    // the scale (marked), so the run's history stays readable.
    let first_row = analysis.first_row as u64;
    let blow_up = run
        .alerts()
        .iter()
        .filter(|a| a.column.as_deref() == Some(q.name_raw.as_str()))
        .filter(|a| matches!(a.kind, AlertKind::Runaway | AlertKind::Nonfinite))
        .filter(|a| a.severity == Severity::Critical)
        .filter_map(|a| a.row?.checked_sub(first_row))
        .min();
    // One bucket per pixel column, or per row when the range has fewer rows.
    let pixels = usize::from(plot.width) * 2;
    let n = pixels.min(usize::try_from(to - from).unwrap_or(usize::MAX));
    let buckets = series.resample(from, to, n);
    let n = buckets.len().max(1) as u64;
    let bucket_first_row = |i: usize| from + (to - from) * i as u64 / n;
    let scaled = buckets
        .iter()
        .enumerate()
        .filter(|(i, _)| blow_up.is_none_or(|b| bucket_first_row(*i + 1) <= b))
        .filter_map(|(_, b)| b.range());
    let (mut lo, mut hi) = scaled.fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), (a, b)| {
        (lo.min(a), hi.max(b))
    });
    if !lo.is_finite() {
        // Nothing before the blow-up in view: scale on everything.
        (lo, hi) = buckets
            .iter()
            .filter_map(Bucket::range)
            .fold((f64::INFINITY, f64::NEG_INFINITY), |(lo, hi), (a, b)| {
                (lo.min(a), hi.max(b))
            });
    }
    let (mean, error) = match q.mean {
        Some((m, e)) => (Some(m), e),
        None => (None, None),
    };
    if let Some(m) = mean.filter(|m| m.is_finite()) {
        let e = error.unwrap_or(0.0);
        lo = lo.min(m - e);
        hi = hi.max(m + e);
    }
    let (y_low, y_high) = y_range(lo, hi);
    let note = match (app.view, onset_row) {
        (ChartView::Production, None) => Some("no onset yet: all rows".to_string()),
        _ => None,
    };
    Some(Chart {
        name: q.name.clone(),
        unit: q.unit.clone(),
        view: app.view,
        from_row: from,
        to_row: to,
        buckets,
        y_low,
        y_high,
        onset_row,
        mean,
        error,
        current: q.current,
        x_left: x_label(time, from, first_row),
        x_right: x_label(time, to, first_row),
        onset_label: onset_row.map(|r| format!("onset {}", x_label(time, r, first_row))),
        rows,
        note,
    })
}

fn mode_text(run: &LiveRun) -> String {
    if run.spec().source == RunSource::Stdin {
        return if run.ended() {
            "stdin, ended".into()
        } else {
            "stdin".into()
        };
    }
    match &run.feed().mode {
        Some(WatchMode::Events { .. }) => "file events".into(),
        Some(WatchMode::Polling { interval }) => {
            format!("polling {}", format::duration(interval.as_secs_f64()))
        }
        Some(WatchMode::PollingFallback { interval, .. }) => {
            format!(
                "polling {} (no events)",
                format::duration(interval.as_secs_f64())
            )
        }
        Some(mode @ WatchMode::Command { .. }) => mode.describe(),
        None => "starting".into(),
    }
}

fn last_time(run: &LiveRun) -> Option<f64> {
    let (segment, _) = segment_of(run)?;
    time_series(run, segment)?.last()
}

/// The answer to "has it equilibrated?" in one sentence.
fn verdict(run: &LiveRun) -> (String, Option<Severity>) {
    // A run cut into stages: the verdict of the stage being written (the run's own
    // statistics mix the stages of its last segment).
    if let Some(st) = run.stages().filter(|s| s.staged()) {
        if let Some(cur) = st.current() {
            let text = format!(
                "{} (stage {}/{}): {}",
                cur.kind.name(),
                cur.index + 1,
                st.stages.len(),
                escape(&cur.detail)
            );
            return (text, verdict_flag(&cur.verdict));
        }
    }
    let Some((segment, a)) = segment_of(run) else {
        return match run.feed().presence {
            Presence::Waiting => ("waiting for the file to appear".into(), None),
            _ => ("no rows yet".into(), None),
        };
    };
    let time = time_series(run, segment);
    let from = match a.equilibration_from.as_slice() {
        [] => String::new(),
        [one] => format!(" (by {})", escape(one)),
        [one, two] => format!(" (by {}, {})", escape(one), escape(two)),
        many => format!(" ({} quantities)", many.len()),
    };
    let changing: Vec<String> = a
        .columns
        .iter()
        .filter(|c| a.equilibration_from.contains(&c.name))
        .filter(|c| c.trend.as_ref().is_some_and(|t| t.still_changing))
        .map(|c| escape(&c.name).into_owned())
        .collect();
    match a.equilibration {
        Some(Equilibration::Onset { row, n_eff, .. }) => {
            let at = match time.and_then(|t| t.value_at(row as u64)) {
                Some(t) => format::sim_time(t),
                None => format!("row {}", row + a.first_row),
            };
            let mut text = format!(
                "equilibrated from {at}{from}; production N_eff {}",
                format::number(n_eff.round())
            );
            if changing.is_empty() {
                (text, None)
            } else {
                text.push_str(&format!("; still changing: {}", changing.join(", ")));
                (text, Some(Severity::Warning))
            }
        }
        Some(Equilibration::NotYet) => (
            format!("not equilibrated yet{from}: still relaxing"),
            Some(Severity::Info),
        ),
        Some(Equilibration::TooShort) | None => {
            ("too few rows yet to judge equilibration".into(), None)
        }
    }
}

fn summary(run: &LiveRun, charted: Option<&Quantity>, now: f64) -> Vec<Item> {
    let mut items = Vec::new();
    let a = run.analysis();
    let mut rows = item("rows", format::count(run.rows_seen()));
    let segments = run.table().segments.len();
    if segments > 1 {
        rows.value.push_str(&format!(" (segment {segments})"));
    }
    items.push(rows);
    items.push(item(
        "sim time",
        last_time(run).map_or("-".into(), format::sim_time),
    ));
    let progress = a.map(|a| &a.progress);
    items.push(item(
        "speed",
        progress
            .and_then(|p| p.ns_per_day)
            .map_or("-".into(), |v| format!("{} ns/day", format::sig3(v))),
    ));
    let opts = run.analysis_options();
    let until = opts.and_then(|o| o.until_ps);
    items.push(item(
        "ETA",
        match (until, progress.and_then(|p| p.eta_seconds)) {
            (Some(u), Some(s)) => {
                format!("{} (to {})", format::duration(s), format::sim_time(u))
            }
            (Some(u), None) => format!("- (to {})", format::sim_time(u)),
            (None, _) => "set --until".into(),
        },
    ));
    if let Some(q) = charted {
        let value = match (q.n_eff, q.g) {
            (Some(n), Some(g)) => {
                format!("{} (g {})", format::number(n.round()), format::number(g))
            }
            (Some(n), None) => format::number(n.round()),
            _ => "-".into(),
        };
        items.push(item("N_eff", value));
    }
    if let Some((column, sem)) = opts.and_then(|o| o.target_sem.as_ref()) {
        let eta = progress.and_then(|p| p.precision_eta_seconds);
        items.push(item(
            "precision",
            match eta {
                Some(s) => format!(
                    "{} to ±{} ({})",
                    format::duration(s),
                    format::number(*sem),
                    escape(column)
                ),
                None => format!("- (±{} {})", format::number(*sem), escape(column)),
            },
        ));
    }
    let drift = a.and_then(|a| {
        a.columns
            .iter()
            .find_map(|c| c.drift.as_ref().map(|d| (c, d)))
    });
    items.push(match drift {
        Some((c, d)) => {
            let half = (d.ci_high_per_ns - d.ci_low_per_ns) / 2.0;
            let mut it = item(
                "drift",
                format!(
                    "{}{} {}/ns",
                    if d.slope_per_ns >= 0.0 { "+" } else { "" },
                    format::compact_mean_error(d.slope_per_ns, Some(half)),
                    escape(&c.unit)
                ),
            );
            if run
                .active_alerts()
                .iter()
                .any(|x| x.kind == AlertKind::Drift)
            {
                it.flag = Some(Severity::Warning);
            }
            it
        }
        None => item("drift", "-"),
    });
    let fluct = a.and_then(|a| a.columns.iter().find_map(|c| c.fluctuation.as_ref()));
    items.push(match fluct {
        Some(f) => {
            let (word, flag) = match f.verdict {
                FluctuationVerdict::Consistent => ("canonical size", None),
                FluctuationVerdict::TooSmall => ("too small", Some(Severity::Warning)),
                FluctuationVerdict::TooLarge => ("too large", Some(Severity::Warning)),
            };
            Item {
                label: "fluct.",
                value: format!("{word} (N_df {})", format::number(f.n_df)),
                flag,
            }
        }
        None => item(
            "fluct.",
            match (
                a.and_then(|a| a.ensemble.as_ref())
                    .map(|e| e.ensemble.to_string()),
                a.and_then(|a| a.degrees_of_freedom),
            ) {
                (Some(e), _) if e == "nve" => "not tested (NVE)".to_string(),
                (_, None) => "needs --dof/--atoms".to_string(),
                _ => "not yet".to_string(),
            },
        ),
    });
    if let Some(e) = a.and_then(|a| a.ensemble.as_ref()) {
        items.push(item(
            "ensemble",
            format!(
                "{} ({})",
                e.ensemble.to_string().to_uppercase(),
                if e.given { "given" } else { "inferred" }
            ),
        ));
    }
    if let Some(c) = run.chain() {
        let name = c
            .live_file()
            .and_then(|p| p.file_name())
            .map(|n| n.to_string_lossy().into_owned())
            .unwrap_or_default();
        items.push(item(
            "file",
            format!("{}/{} {}", c.live() + 1, c.files().len(), escape(&name)),
        ));
        if let Some(next) = c.awaited().and_then(|p| p.file_name()) {
            items.push(item(
                "next",
                format!("{} (awaited)", escape(&next.to_string_lossy())),
            ));
        }
    }
    items.push(item("follow", mode_text(run)));
    let age = run.last_row_arrival().map(|t| (now - t).max(0.0));
    let mut last = item(
        "last row",
        age.map_or("-".into(), |s| format!("{} ago", format::duration(s))),
    );
    if run
        .active_alerts()
        .iter()
        .any(|x| x.kind == AlertKind::Stalled)
    {
        last.flag = Some(Severity::Warning);
    }
    items.push(last);
    let skipped = run.table().skipped_count;
    if skipped > 0 {
        items.push(Item {
            label: "skipped",
            value: format!("{} lines", format::count(skipped)),
            flag: Some(Severity::Info),
        });
    }
    items
}

fn primary_series(run: &LiveRun) -> (String, Option<SeriesView<'_>>) {
    match (segment_of(run), analysed_columns(run).first()) {
        (Some((segment, _)), Some((i, c))) => {
            (escape(&c.name).into_owned(), run.series(segment, *i))
        }
        _ => (String::new(), None),
    }
}

fn run_line(run: &LiveRun, now: f64, spark_cells: usize) -> RunLine {
    let condition = condition_of(run);
    let alerts = run.alerts();
    let active = run.active_alerts();
    let worst_active = active.iter().map(|a| a.severity).max();
    let newest = if alerts.is_empty() {
        None
    } else {
        alert_lines(run).into_iter().next()
    };
    let (spark_name, series) = primary_series(run);
    let a = run.analysis();
    let sim_time = last_time(run);
    let until = run.analysis_options().and_then(|o| o.until_ps);
    let alert_rank = match worst_active {
        Some(Severity::Critical) => 1,
        Some(Severity::Warning) => 3,
        _ => 9,
    };
    RunLine {
        id: run.id(),
        label: escape(&run.spec().label).into_owned(),
        job: run
            .spec()
            .job
            .as_ref()
            .map(|j| escape(&j.to_string()).into_owned()),
        condition,
        loading: run.feed().loading(),
        spark_name,
        spark: spark_of(series, spark_cells),
        rows: run.rows_seen(),
        sim_time,
        progress: match (sim_time, until) {
            (Some(t), Some(u)) if u > 0.0 => Some((t / u).clamp(0.0, 1.0)),
            _ => None,
        },
        ns_per_day: a.and_then(|a| a.progress.ns_per_day),
        last_row_age: run.last_row_arrival().map(|t| (now - t).max(0.0)),
        newest_alert: newest,
        active_alerts: active.len(),
        worst_active,
        stage: stage_cell(run),
        rank: (
            condition.rank().min(alert_rank),
            worst_active.map_or(3, |s| 2 - s as u8),
        ),
    }
}

fn detail(run: &LiveRun, app: &App, order: &[RunId], size: Rect, now: f64) -> Detail {
    let all_alerts = alert_lines(run);
    let (stages, stages_note) = stage_lines(run);
    let areas = DetailAreas::compute_with_stages(
        size,
        analysed_columns(run).len().saturating_sub(1),
        all_alerts.len(),
        stages.len(),
        app.chart_only,
    );
    let mut qs = quantities(run, usize::from(layout::spark_width(areas.sparks.width)));
    let chosen = app.quantity.get(&run.id());
    let charted = chosen
        .and_then(|name| qs.iter().position(|q| &q.name_raw == name))
        .unwrap_or(0);
    let chart = qs
        .get(charted)
        .and_then(|q| chart_of(run, q, app, layout::plot_area(areas.chart)));
    let summary = summary(run, qs.get(charted), now);
    let (verdict, verdict_flag) = verdict(run);
    // Sparklines only for the quantities shown beside the chart.
    for (i, q) in qs.iter_mut().enumerate() {
        if i == charted {
            q.spark.clear();
        }
    }
    Detail {
        id: run.id(),
        label: match &run.spec().job {
            Some(job) => escape(&format!("job {job} · {}", run.spec().label)).into_owned(),
            None => escape(&run.spec().label).into_owned(),
        },
        condition: condition_of(run),
        loading: run.feed().loading(),
        position: order.iter().position(|&r| r == run.id()).unwrap_or(0),
        runs: order.len(),
        mode: mode_text(run),
        last_row_age: run.last_row_arrival().map(|t| (now - t).max(0.0)),
        verdict,
        verdict_flag,
        active_alerts: run.active_alerts().len(),
        total_alerts: run.alerts().len(),
        alerts: all_alerts,
        quantities: qs,
        charted,
        chart,
        summary,
        notices: run
            .feed()
            .notices
            .iter()
            .map(|n| (n.at, escape(&n.text).into_owned()))
            .collect(),
        stages,
        stages_note,
    }
}

/// Builds the snapshot of a frame of `size` at wall-clock second `now`.
pub fn build(runs: &[LiveRun], patterns: &[Pattern], app: &App, size: Rect, now: f64) -> Snapshot {
    let columns = OverviewColumns::for_width(size.width);
    let mut lines: Vec<RunLine> = runs
        .iter()
        .map(|r| run_line(r, now, usize::from(columns.spark.saturating_sub(1))))
        .collect();
    lines.sort_by(|a, b| {
        a.rank
            .cmp(&b.rank)
            .then_with(|| {
                let at = |l: &RunLine| l.newest_alert.as_ref().and_then(|x| x.wall);
                at(b)
                    .partial_cmp(&at(a))
                    .unwrap_or(std::cmp::Ordering::Equal)
            })
            .then_with(|| a.label.cmp(&b.label))
    });
    let order: Vec<RunId> = lines.iter().map(|l| l.id).collect();
    let selected = app
        .selected
        .filter(|s| order.contains(s))
        .or_else(|| order.first().copied());
    let detail = match (app.screen, selected) {
        (Screen::Detail, Some(id)) => runs
            .get(id.0)
            .map(|run| detail(run, app, &order, size, now)),
        _ => None,
    };
    Snapshot {
        now,
        size,
        screen: app.screen,
        runs: lines,
        waiting_patterns: patterns
            .iter()
            .filter(|p| p.matched == 0)
            .map(|p| escape(&p.text).into_owned())
            .collect(),
        feed_summary: None,
        detail,
        help: app.help,
        paused: app.paused,
        overview_exists: app.overview,
        message: app.message.as_ref().map(|m| (m.text.clone(), m.ok)),
        alert_scroll: app.alert_scroll,
        chart_only: app.chart_only,
        selected,
        window_rows: app.window_rows,
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn nice_ceilings_grow_in_steps() {
        assert_eq!(nice_ceiling(0), 10);
        assert_eq!(nice_ceiling(11), 12);
        assert_eq!(nice_ceiling(101), 125);
        assert_eq!(nice_ceiling(1999), 2000);
        assert_eq!(nice_ceiling(2001), 2500);
        assert_eq!(nice_ceiling(7_000_001), 8_000_000);
    }

    #[test]
    fn the_latest_window_moves_by_quarters() {
        assert_eq!(x_range(ChartView::Window, 100, None, 400), (0, 400));
        assert_eq!(x_range(ChartView::Window, 401, None, 400), (100, 500));
        assert_eq!(x_range(ChartView::Window, 500, None, 400), (100, 500));
        assert_eq!(x_range(ChartView::Window, 501, None, 400), (200, 600));
        assert_eq!(x_range(ChartView::All, 1234, None, 400), (0, 1250));
        assert_eq!(
            x_range(ChartView::Production, 1234, Some(200), 400),
            (200, 1450)
        );
        // No onset: production falls back to all rows.
        assert_eq!(x_range(ChartView::Production, 1234, None, 400), (0, 1250));
    }

    #[test]
    fn value_ranges_round_out() {
        assert_eq!(y_range(291.3, 308.9), (290.0, 310.0));
        let (lo, hi) = y_range(5.0, 5.0);
        assert!(lo < 5.0 && hi > 5.0);
        assert_eq!(y_range(f64::INFINITY, f64::NEG_INFINITY), (0.0, 1.0));
    }
}
