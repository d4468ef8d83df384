//! One followed run: its parser, arrival times, analysis, alerts, bounded memory and what
//! the follower last said about its source.
//!
//! A [`LiveRun`] is plain data driven from outside: [`LiveRun::apply`] hands it one
//! follower event, [`LiveRun::analyse`] brings its analysis up to date (and folds its
//! oldest rows), [`LiveRun::check_stall`] judges stalled output against the wall clock.
//! Tests drive it without any thread or file ([`LiveRun::push_lines`]).

use std::path::PathBuf;

use crate::alert::Alert;
use crate::analysis::{AnalysisOptions, Analyzer, RunAnalysis};
use crate::follow::{FollowEvent, Partial, WatchMode};
use crate::parse::{LogParser, ParseOptions};
use crate::report::{build_report, Report, SourceInfo};
use crate::table::RunTable;

use super::chain::{ChainFollow, Route};
use super::history::SeriesView;
use super::memory::{bound_memory_with_history, folding_note};
use super::stages::{LiveStages, StageHook};
use super::{History, RunId, RunSpec};
use crate::stages::StageOptions;

/// Recent notable follower events kept per run (truncation, rotation, errors...).
const NOTICES_KEPT: usize = 20;

/// Bytes a file may hold beyond what was read and still count as caught up.
pub const LOADING_MARGIN: u64 = 256 * 1024;

/// Whether the source is there and being read.
#[derive(Debug, Clone, Copy, PartialEq, Eq, Default)]
pub enum Presence {
    /// Nothing heard from the follower yet.
    #[default]
    Starting,
    /// The source is read (and followed for more).
    Reading,
    /// The file does not exist yet: waiting for it.
    Waiting,
    /// The file was deleted: waiting for it to come back.
    Deleted,
    /// The input is over (standard input closed).
    Ended,
}

/// Something the follower said, with the wall-clock second (Unix epoch) it was heard.
#[derive(Debug, Clone, PartialEq)]
pub struct Notice {
    pub at: f64,
    pub text: String,
}

/// What the follower last said about a run's source.
#[derive(Debug, Clone, PartialEq, Default)]
pub struct Feed {
    /// How the source is watched (file events or polling), once known.
    pub mode: Option<WatchMode>,
    pub presence: Presence,
    /// Errors reported (permission denied, read errors...); following goes on.
    pub errors: u64,
    /// Bytes read in the current file generation.
    pub bytes_read: u64,
    /// Length of the file when last looked at (progress of a large file's first read).
    pub size: Option<u64>,
    /// Arrival second of the last data.
    pub last_data: Option<f64>,
    /// Times the file started over (truncated, rotated, re-created).
    pub generations: u32,
    /// Recent notable events, oldest first.
    pub notices: Vec<Notice>,
}

impl Feed {
    /// Fraction of the file read so far, while more than [`LOADING_MARGIN`] bytes of it
    /// are still to read (the first read of a large log); `None` once caught up (an
    /// unfinished last line is never read).
    pub fn loading(&self) -> Option<f64> {
        let size = self.size?;
        (size > self.bytes_read + LOADING_MARGIN).then(|| self.bytes_read as f64 / size as f64)
    }

    fn notice(&mut self, at: f64, text: String) {
        if self.notices.len() == NOTICES_KEPT {
            self.notices.remove(0);
        }
        self.notices.push(Notice { at, text });
    }
}

/// What one follower event did to a run (the event without its bytes).
#[derive(Debug, Clone, PartialEq)]
pub enum Happened {
    /// Complete lines arrived (rows may or may not be among them).
    Lines { first_line: u64, lines: u64 },
    /// The file became shorter; it is read again from its start.
    Truncated { dropped: Option<Partial> },
    /// The path names another file now; the new one is read from its start.
    Rotated { dropped: Option<Partial> },
    /// The file was deleted; waiting for it to come back.
    Deleted { dropped: Option<Partial> },
    /// The file does not exist yet.
    Waiting,
    /// The file appeared (again); it is read from its start.
    Appeared,
    /// The input is over.
    Ended { dropped: Option<Partial> },
    /// A problem with the source; following goes on.
    Error { path: PathBuf, message: String },
    /// How the source is watched.
    Mode(WatchMode),
}

/// The first lines of a source whose layout is still to be guessed.
#[derive(Debug, Clone)]
struct PendingLayout {
    bytes: Vec<u8>,
    lines: usize,
    /// Arrival second of the first of them.
    since: f64,
    /// Whether the row tag may be guessed too.
    guess_row_tag: bool,
}

/// Lines of a source without a file that are looked at before its layout is guessed
/// (enough for the separator and the row tag, see `parse::sniff`) ...
const PENDING_LAYOUT_LINES: usize = 200;
/// ... or bytes ...
const PENDING_LAYOUT_BYTES: usize = 64 * 1024;
/// ... or seconds after the first line, whichever comes first (a slow writer's rows are
/// not held back longer).
const PENDING_LAYOUT_SECONDS: f64 = 2.0;

/// The analysing part of a run (absent for runs that are only parsed, as `export` does).
#[derive(Debug, Clone)]
struct Analysing {
    analyzer: Analyzer,
    latest: Option<RunAnalysis>,
    keep_rows: usize,
    fold_told: bool,
}

/// One followed run.
#[derive(Debug, Clone)]
pub struct LiveRun {
    id: RunId,
    spec: RunSpec,
    parse: ParseOptions,
    analysis_options: Option<AnalysisOptions>,
    parser: LogParser,
    analysing: Option<Analysing>,
    /// Arrival second (Unix epoch) of each row of the table.
    arrivals: Vec<f64>,
    history: History,
    feed: Feed,
    /// Rows arrived since the last analysis.
    dirty: bool,
    /// A source with no file to look at first (standard input, a command's output): its
    /// first lines wait here until its layout is guessed from them.
    pending_layout: Option<PendingLayout>,
    /// The run is known to be over (its input ended).
    ended: bool,
    /// Wall-clock second of each alert (the arrival of its row when known, else when it
    /// was raised), parallel to the alerts.
    alert_times: Vec<f64>,
    /// Bumped on every change a viewer may want to redraw for.
    version: u64,
    /// The stage list, judged as the rows come (analysed runs only).
    stage_hook: Option<StageHook>,
    /// Wall-clock second of the last refresh of the statistics of a quiet run.
    refreshed_at: Option<f64>,
    /// Later names of self-named rows already told about, and the sentences not yet taken
    /// (see [`LiveRun::take_later_names`]).
    later_told: usize,
    later_untaken: Vec<String>,
    /// The files of a chain (`--chain`), one live at a time.
    chain: Option<ChainFollow>,
}

/// What an event kept aside for a later file of a chain would do (nothing yet).
fn happened_of(event: &FollowEvent) -> Happened {
    match event {
        FollowEvent::Data {
            first_line, lines, ..
        } => Happened::Lines {
            first_line: *first_line,
            lines: *lines,
        },
        FollowEvent::Truncated { dropped } => Happened::Truncated { dropped: *dropped },
        FollowEvent::Rotated { dropped } => Happened::Rotated { dropped: *dropped },
        FollowEvent::Deleted { dropped } => Happened::Deleted { dropped: *dropped },
        FollowEvent::Waiting => Happened::Waiting,
        FollowEvent::Appeared => Happened::Appeared,
        FollowEvent::EndOfInput { dropped } => Happened::Ended { dropped: *dropped },
        FollowEvent::Error { path, message } => Happened::Error {
            path: path.clone(),
            message: message.clone(),
        },
        FollowEvent::Mode(m) => Happened::Mode(m.clone()),
    }
}

fn describe_dropped(dropped: Option<Partial>) -> String {
    match dropped {
        Some(p) => format!("; unfinished line {} ({} bytes) given up", p.line, p.bytes),
        None => String::new(),
    }
}

/// Gives each alert raised since `times` was last extended the arrival second of its row
/// (while the row is kept), else the last arrival.
fn time_new_alerts(analyzer: &Analyzer, arrivals: &[f64], times: &mut Vec<f64>) {
    let forgotten = analyzer.rows_forgotten();
    let fallback = arrivals.last().copied().unwrap_or(0.0);
    for alert in analyzer.engine().alerts().get(times.len()..).unwrap_or(&[]) {
        let at = alert
            .row
            .and_then(|r| r.checked_sub(forgotten))
            .and_then(|i| usize::try_from(i).ok())
            .and_then(|i| arrivals.get(i).copied())
            .unwrap_or(fallback);
        times.push(at);
    }
}

/// Brings the analysis of `a` up to `table` (`ended`: the input is over: the last rows are
/// judged as a finished file's) and gives its new alerts their arrival times.
fn update_analysis(
    a: &mut Analysing,
    table: &RunTable,
    arrivals: &[f64],
    ended: bool,
    alert_times: &mut Vec<f64>,
) {
    let analysis = a.analyzer.update(table, ended, Some(arrivals), ended);
    a.latest = Some(analysis);
    time_new_alerts(&a.analyzer, arrivals, alert_times);
}

/// Seconds, at least, between two refreshes of a quiet run's statistics (a hundred runs
/// that each write a row every two seconds would otherwise be analysed again at every row).
pub const REFRESH_SECONDS: f64 = 10.0;

/// Rows folded away so far from the front of each segment of `table`.
fn forgotten_by_segment(analysing: Option<&Analysing>, table: &RunTable) -> Vec<usize> {
    (0..table.segments.len())
        .map(|si| analysing.map_or(0, |a| a.analyzer.segment_rows_forgotten(si)))
        .collect()
}

impl LiveRun {
    /// A run read with `parse`, analysed with `analysis` (if given), keeping at most
    /// `keep_rows` rows at full resolution once analysed.
    pub fn new(
        id: RunId,
        spec: RunSpec,
        parse: ParseOptions,
        analysis: Option<AnalysisOptions>,
        keep_rows: usize,
    ) -> LiveRun {
        let stage_hook = analysis
            .is_some()
            .then(|| StageHook::new(StageOptions::default()));
        LiveRun {
            id,
            spec,
            parser: LogParser::new(parse.clone()),
            parse,
            analysing: analysis.clone().map(|opts| Analysing {
                analyzer: Analyzer::new(opts),
                latest: None,
                keep_rows,
                fold_told: false,
            }),
            analysis_options: analysis,
            arrivals: Vec::new(),
            history: History::default(),
            feed: Feed::default(),
            dirty: false,
            pending_layout: None,
            ended: false,
            alert_times: Vec::new(),
            version: 0,
            stage_hook,
            refreshed_at: None,
            later_told: 0,
            later_untaken: Vec::new(),
            chain: None,
        }
    }

    /// Makes this run a chain of `files` (consecutive stages of one system, in order; see
    /// [`super::chain`]); the events of file `i` are handed over with
    /// [`apply_chain`](Self::apply_chain).
    pub fn set_chain(&mut self, files: Vec<PathBuf>) {
        self.chain = Some(ChainFollow::new(files));
    }

    /// The chain this run follows, if it is one.
    pub fn chain(&self) -> Option<&ChainFollow> {
        self.chain.as_ref()
    }

    /// Hands one follower event of file `index` of the chain to the run (a run that is no
    /// chain takes it as [`apply`](Self::apply) does).
    pub fn apply_chain(&mut self, index: usize, event: FollowEvent, now: f64) -> Happened {
        let Some(chain) = &mut self.chain else {
            return self.apply(event, now);
        };
        let happened = happened_of(&event);
        let out = match chain.route(index, event, now) {
            Route::Live(event) => self.apply(event, now),
            Route::KeptAside => happened,
            Route::Late(name) => {
                self.feed.notice(
                    now,
                    format!("{name} grew after following moved past it; its new rows are not read"),
                );
                self.version += 1;
                happened
            }
            Route::Ignored => happened,
        };
        self.advance_chain(now, false);
        out
    }

    /// Moves a chain on to its next files while they are ready (`force`: every file seen
    /// to exist, at the end of following).
    fn advance_chain(&mut self, now: f64, force: bool) {
        loop {
            let Some(chain) = &mut self.chain else {
                return;
            };
            let quiet = self.feed.last_data.map(|t| now - t);
            if !chain.ready_to_move(self.feed.bytes_read, quiet, force) {
                return;
            }
            let kept = chain.move_on(&mut self.parser);
            let name = chain
                .live_file()
                .map(|p| p.display().to_string())
                .unwrap_or_default();
            let (k, n) = (chain.live() + 1, chain.files().len());
            self.feed.bytes_read = 0;
            self.feed.size = None;
            self.feed.presence = Presence::Reading;
            self.feed
                .notice(now, format!("now reading {name} (file {k} of {n})"));
            self.dirty = true;
            self.version += 1;
            for (event, at) in kept {
                self.apply(event, at);
            }
        }
    }

    /// Judges the stages with `options` (minimization tolerances) instead of the defaults.
    pub fn set_stage_options(&mut self, options: StageOptions) {
        if self.stage_hook.is_some() {
            self.stage_hook = Some(StageHook::new(options));
        }
    }

    /// The stage list as last judged (none before the first rows were analysed, and for
    /// runs that are only parsed).
    pub fn stages(&self) -> Option<&LiveStages> {
        self.stage_hook.as_ref()?.latest()
    }

    /// Judges the stages of rows that came since the last judgement once no row came for
    /// [`super::stages::QUIET_SECONDS`] (the list then shows every row read, not the rows
    /// of the last tenth-more judgement). Returns whether it did.
    fn judge_stages_when_quiet(&mut self, now: f64) -> bool {
        let (Some(hook), Some(opts), Some(&last)) = (
            &mut self.stage_hook,
            &self.analysis_options,
            self.arrivals.last(),
        ) else {
            return false;
        };
        if now - last < super::stages::QUIET_SECONDS {
            return false;
        }
        let table = self.parser.table();
        let forgotten = forgotten_by_segment(self.analysing.as_ref(), table);
        let seen = table.rows() as u64 + forgotten.iter().map(|&r| r as u64).sum::<u64>();
        if hook.latest().is_some_and(|l| l.rows_seen == seen) {
            return false;
        }
        let chain = self.chain.as_ref().map(|c| &c.layout);
        hook.judge(table, chain, opts, &forgotten, self.ended);
        self.cut_at_stage_start();
        self.version += 1;
        true
    }

    /// Judges the stages when due (see [`super::stages`]).
    fn judge_stages(&mut self) {
        let (Some(hook), Some(opts)) = (&mut self.stage_hook, &self.analysis_options) else {
            return;
        };
        let table = self.parser.table();
        let forgotten = forgotten_by_segment(self.analysing.as_ref(), table);
        let seen = table.rows() as u64 + forgotten.iter().map(|&r| r as u64).sum::<u64>();
        let keep_rows = self
            .analysing
            .as_ref()
            .map_or(crate::fold::DEFAULT_KEEP_ROWS, |a| a.keep_rows);
        if hook.due(seen, self.ended, keep_rows) {
            let chain = self.chain.as_ref().map(|c| &c.layout);
            hook.judge(table, chain, opts, &forgotten, self.ended);
            self.cut_at_stage_start();
        }
    }

    /// Cuts the run's full statistics at the start of the stage being written, as judged
    /// last; when it moved, the statistics are computed again at once (the production
    /// stage's mean, onset and N_eff leave out the stages before it, as in `report`).
    fn cut_at_stage_start(&mut self) {
        let start = self.stages().and_then(|s| s.current_start);
        let Some(a) = &mut self.analysing else {
            return;
        };
        if !a.analyzer.set_stage_start(start) {
            return;
        }
        let table = self.parser.table();
        update_analysis(a, table, &self.arrivals, self.ended, &mut self.alert_times);
    }

    pub fn id(&self) -> RunId {
        self.id
    }

    pub fn spec(&self) -> &RunSpec {
        &self.spec
    }

    /// The parse options this run is read with.
    pub fn parse_options(&self) -> &ParseOptions {
        &self.parse
    }

    /// The analysis options, when the run is analysed.
    pub fn analysis_options(&self) -> Option<&AnalysisOptions> {
        self.analysis_options.as_ref()
    }

    /// The rows kept (the last ones at full resolution once memory is bounded).
    pub fn table(&self) -> &RunTable {
        self.parser.table()
    }

    /// Arrival second of each row of the table.
    pub fn arrivals(&self) -> &[f64] {
        &self.arrivals
    }

    /// What the follower last said.
    pub fn feed(&self) -> &Feed {
        &self.feed
    }

    /// Whether the run's input is over.
    pub fn ended(&self) -> bool {
        self.ended
    }

    /// Changes so far (compare to see whether anything changed).
    pub fn version(&self) -> u64 {
        self.version
    }

    /// The latest analysis (none before the first rows were analysed).
    pub fn analysis(&self) -> Option<&RunAnalysis> {
        self.analysing.as_ref()?.latest.as_ref()
    }

    /// Alerts raised so far, in the order raised.
    pub fn alerts(&self) -> &[Alert] {
        match &self.analysing {
            Some(a) => a.analyzer.engine().alerts(),
            None => &[],
        }
    }

    /// Every change of every alert (raised, escalated, cleared), in order.
    pub fn notices(&self) -> &[crate::alert::Notice] {
        match &self.analysing {
            Some(a) => a.analyzer.engine().notices(),
            None => &[],
        }
    }

    /// Wall-clock second of each alert in [`alerts`](Self::alerts) (the arrival of its row
    /// when known, else when it was raised); shorter when the last alerts are not timed yet.
    pub fn alert_times(&self) -> &[f64] {
        &self.alert_times
    }

    /// Alerts whose condition still holds.
    pub fn active_alerts(&self) -> Vec<&Alert> {
        match &self.analysing {
            Some(a) => a.analyzer.engine().active(),
            None => Vec::new(),
        }
    }

    /// Rows forgotten (folded) so far.
    pub fn rows_forgotten(&self) -> u64 {
        self.analysing
            .as_ref()
            .map_or(0, |a| a.analyzer.rows_forgotten())
    }

    /// Rows seen through the run (kept and forgotten).
    pub fn rows_seen(&self) -> u64 {
        self.table().rows() as u64 + self.rows_forgotten()
    }

    /// Arrival second of the last row, if any.
    pub fn last_row_arrival(&self) -> Option<f64> {
        self.arrivals.last().copied()
    }

    /// The whole series of column `column` of segment `segment` (folded rows first).
    pub fn series(&self, segment: usize, column: usize) -> Option<SeriesView<'_>> {
        let seg = self.table().segments.get(segment)?;
        let values = seg.columns.get(column)?.values();
        Some(SeriesView {
            folded: self.history.column(segment, column),
            recent: values,
        })
    }

    /// Hands one follower event to the run; `now` is the wall-clock second it was heard.
    pub fn apply(&mut self, event: FollowEvent, now: f64) -> Happened {
        self.version += 1;
        match event {
            FollowEvent::Data {
                bytes,
                first_line,
                lines,
                arrival,
            } => {
                let at = super::seconds(arrival);
                self.feed.presence = Presence::Reading;
                self.feed.bytes_read += bytes.len() as u64;
                let path = match &self.chain {
                    Some(c) => c.live_file().map(|p| p.as_path()),
                    None => self.spec.source.path(),
                };
                if let Some(path) = path {
                    self.feed.size = std::fs::metadata(path).ok().map(|m| m.len());
                }
                self.push_lines(&bytes, at);
                Happened::Lines { first_line, lines }
            }
            FollowEvent::Truncated { dropped } => {
                self.new_generation(now, format!("truncated{}", describe_dropped(dropped)));
                Happened::Truncated { dropped }
            }
            FollowEvent::Rotated { dropped } => {
                self.new_generation(now, format!("replaced{}", describe_dropped(dropped)));
                Happened::Rotated { dropped }
            }
            FollowEvent::Deleted { dropped } => {
                self.feed.presence = Presence::Deleted;
                self.feed
                    .notice(now, format!("deleted{}", describe_dropped(dropped)));
                Happened::Deleted { dropped }
            }
            FollowEvent::Waiting => {
                self.feed.presence = Presence::Waiting;
                Happened::Waiting
            }
            FollowEvent::Appeared => {
                self.new_generation(now, "appeared".to_string());
                Happened::Appeared
            }
            FollowEvent::EndOfInput { dropped } => {
                self.feed.presence = Presence::Ended;
                self.feed
                    .notice(now, format!("input ended{}", describe_dropped(dropped)));
                self.finish();
                Happened::Ended { dropped }
            }
            FollowEvent::Error { path, message } => {
                self.feed.errors += 1;
                self.feed.notice(now, message.clone());
                Happened::Error { path, message }
            }
            FollowEvent::Mode(mode) => {
                if let WatchMode::PollingFallback { reason, .. } = &mode {
                    self.feed.notice(now, format!("polling: {reason}"));
                }
                self.feed.mode = Some(mode.clone());
                Happened::Mode(mode)
            }
        }
    }

    fn new_generation(&mut self, now: f64, text: String) {
        self.feed.presence = Presence::Reading;
        self.feed.bytes_read = 0;
        self.feed.generations += 1;
        self.feed.notice(now, text);
    }

    /// Guesses the layout (separator, row tag, self-named rows) from the first lines that
    /// arrive, as `report` does from the start of a file: for a source with no file to
    /// look at beforehand (standard input, a command's output). The options given
    /// explicitly stay as they are.
    pub fn guess_layout_from_first_lines(&mut self, guess_row_tag: bool) {
        if self.parser.table().rows() == 0 {
            self.pending_layout = Some(PendingLayout {
                bytes: Vec::new(),
                lines: 0,
                since: f64::NAN,
                guess_row_tag,
            });
        }
    }

    /// Lines held back for the layout guess wait at most a couple of seconds: guesses the
    /// layout now if they have waited that long at wall-clock second `now`. Returns whether
    /// rows may have arrived.
    pub fn settle_layout_if_due(&mut self, now: f64) -> bool {
        let due = self
            .pending_layout
            .as_ref()
            .is_some_and(|p| !p.bytes.is_empty() && now - p.since >= PENDING_LAYOUT_SECONDS);
        if due {
            self.settle_layout(now);
        }
        due
    }

    /// Guesses the layout from the lines held back and feeds them.
    fn settle_layout(&mut self, arrival: f64) {
        let Some(pending) = self.pending_layout.take() else {
            return;
        };
        let mut guess = crate::parse::sniff::sniff_layout(&pending.bytes, &self.parse);
        if !pending.guess_row_tag {
            guess.row_tag = None;
        }
        guess.apply(&mut self.parse);
        self.parser = LogParser::new(self.parse.clone());
        self.push_lines(&pending.bytes, arrival);
    }

    /// Feeds complete lines that arrived at wall-clock second `arrival`.
    pub fn push_lines(&mut self, bytes: &[u8], arrival: f64) {
        if let Some(pending) = &mut self.pending_layout {
            if pending.bytes.is_empty() {
                pending.since = arrival;
            }
            pending.bytes.extend_from_slice(bytes);
            pending.lines += bytes.iter().filter(|&&b| b == b'\n').count();
            let waited = arrival - pending.since;
            if pending.lines >= PENDING_LAYOUT_LINES
                || pending.bytes.len() >= PENDING_LAYOUT_BYTES
                || waited >= PENDING_LAYOUT_SECONDS
            {
                self.settle_layout(arrival);
            } else {
                self.feed.last_data = Some(arrival);
                self.version += 1;
            }
            return;
        }
        self.parser.feed(bytes);
        if let Some(chain) = &mut self.chain {
            chain.shift_times(&mut self.parser, false);
        }
        let rows = self.parser.table().rows();
        if self.arrivals.len() > rows {
            // A restart cut rows: their arrivals go too.
            self.arrivals.truncate(rows);
        }
        while self.arrivals.len() < rows {
            self.arrivals.push(arrival);
        }
        self.feed.last_data = Some(arrival);
        self.dirty = true;
        self.version += 1;
    }

    /// The input is over: an unfinished last line is ignored, the run is finished.
    pub fn finish(&mut self) {
        if self.pending_layout.is_some() {
            let at = self.feed.last_data.unwrap_or_else(super::now_seconds);
            self.settle_layout(at);
        }
        self.parser.finish();
        self.ended = true;
        self.dirty = true;
        self.version += 1;
    }

    /// Starts the run over with an empty table (a caller that treats a truncated or
    /// replaced file as a new file, as `export` does).
    pub fn start_over(&mut self) {
        self.parser.reset();
        self.later_told = 0;
        self.arrivals.clear();
        self.history = History::default();
        self.alert_times.clear();
        if let (Some(a), Some(opts)) = (&mut self.analysing, &self.analysis_options) {
            a.analyzer = Analyzer::new(opts.clone());
            a.latest = None;
        }
        if let Some(h) = &mut self.stage_hook {
            *h = StageHook::new(h.options());
        }
        self.version += 1;
    }

    /// Forgets all but the last `keep` rows of every segment (a caller that writes rows
    /// out as they come, as `export` does).
    pub fn forget_all_but_last(&mut self, keep: usize) {
        self.parser.forget_all_but_last(keep);
        let rows = self.parser.table().rows();
        let drop = self.arrivals.len().saturating_sub(rows);
        self.arrivals.drain(..drop);
    }

    /// Brings the analysis up to date if rows arrived since the last one, then folds the
    /// oldest rows past the memory cap. Returns whether an analysis ran.
    pub fn analyse(&mut self) -> bool {
        if self.chain.is_some() {
            self.advance_chain(super::now_seconds(), false);
        }
        self.settle_layout_if_due(super::now_seconds());
        if !self.dirty {
            return false;
        }
        self.dirty = false;
        let Some(a) = &mut self.analysing else {
            return false;
        };
        let table = self.parser.table();
        update_analysis(a, table, &self.arrivals, self.ended, &mut self.alert_times);
        self.judge_stages();
        if self.parser.table().later_names.len() > self.later_told {
            self.tell_later_names();
        }
        let Some(a) = &mut self.analysing else {
            return false;
        };
        bound_memory_with_history(
            &mut self.parser,
            &mut a.analyzer,
            &mut self.arrivals,
            a.keep_rows,
            Some(&mut self.history),
        );
        self.version += 1;
        true
    }

    /// The final analysis once following is over: the remaining rows are judged as a
    /// finished file's would be.
    pub fn conclude(&mut self) -> Option<&RunAnalysis> {
        if self.chain.is_some() {
            self.advance_chain(super::now_seconds(), true);
            if let Some(chain) = &mut self.chain {
                chain.shift_times(&mut self.parser, true);
            }
        }
        self.parser.finish();
        self.ended = true;
        let a = self.analysing.as_mut()?;
        let table = self.parser.table();
        update_analysis(a, table, &self.arrivals, true, &mut self.alert_times);
        self.judge_stages();
        self.version += 1;
        self.analysis()
    }

    /// Judges stalled output at wall-clock second `now` (not once the input is over).
    /// Returns whether the alerts changed.
    pub fn check_stall(&mut self, now: f64) -> bool {
        let restaged = self.judge_stages_when_quiet(now);
        let refreshed = self.refresh_when_quiet(now);
        if self.ended {
            return restaged || refreshed;
        }
        let rows = self.rows_seen();
        let last = self.arrivals.last().copied();
        let Some(a) = &mut self.analysing else {
            return false;
        };
        // Nothing can change before the shortest possible limit while not stalled: skip
        // the median of the gaps (a hundred quiet runs are checked every second).
        let shortest = a.analyzer.engine().thresholds().stall_limit_seconds(None);
        let stalled = a
            .analyzer
            .engine()
            .active()
            .iter()
            .any(|x| x.kind == crate::alert::AlertKind::Stalled);
        if !stalled && last.is_some_and(|t| now - t <= shortest) {
            return false;
        }
        let before = a.analyzer.engine().alerts().len();
        let active_before = a.analyzer.engine().active().len();
        let last_row = usize::try_from(rows).ok().and_then(|r| r.checked_sub(1));
        a.analyzer.check_stall(now, &self.arrivals, last_row);
        let raised = a.analyzer.engine().alerts().len();
        while self.alert_times.len() < raised {
            self.alert_times.push(now);
        }
        let changed = raised != before || a.analyzer.engine().active().len() != active_before;
        if changed {
            // The status follows the alert now, not at the next row (which may never come).
            let analysis = a.analyzer.update(
                self.parser.table(),
                self.ended,
                Some(&self.arrivals),
                self.ended,
            );
            a.latest = Some(analysis);
            self.version += 1;
        }
        changed
    }

    /// Computes the full statistics on every row read once no row came for
    /// [`super::stages::QUIET_SECONDS`], when they were computed before the newest rows
    /// (they are computed again after a tenth more rows, which a run writing a row every
    /// few seconds takes hours to write), at most once every [`REFRESH_SECONDS`]. Returns
    /// whether it did.
    fn refresh_when_quiet(&mut self, now: f64) -> bool {
        let (Some(a), Some(&last)) = (&mut self.analysing, self.arrivals.last()) else {
            return false;
        };
        let table = self.parser.table();
        if self.ended
            || now - last < super::stages::QUIET_SECONDS
            || self.refreshed_at.is_some_and(|t| now - t < REFRESH_SECONDS)
            || !a.analyzer.statistics_behind(table)
        {
            return false;
        }
        a.analyzer.recompute_at_next_update();
        update_analysis(a, table, &self.arrivals, false, &mut self.alert_times);
        self.refreshed_at = Some(now);
        self.version += 1;
        true
    }

    /// The sentences telling, once per name, that a name of self-named rows (JSON objects,
    /// `name=value` pairs) first seen after the layout was set from the first lines is not
    /// read while following (each is also a notice of the run), not taken before.
    pub fn take_later_names(&mut self) -> Vec<String> {
        std::mem::take(&mut self.later_untaken)
    }

    /// Makes a notice of each later name not told yet.
    fn tell_later_names(&mut self) {
        let later = &self.parser.table().later_names;
        let new: Vec<String> = later
            .get(self.later_told..)
            .unwrap_or_default()
            .iter()
            .map(|n| {
                format!(
                    "line {}: `{}` first appears here, after the layout was set from the \
                     first lines; it is not read while following (`plateau report` on the \
                     file reads it)",
                    n.line, n.name
                )
            })
            .collect();
        self.later_told = later.len();
        let now = super::now_seconds();
        for text in &new {
            self.feed.notice(now, text.clone());
        }
        if !new.is_empty() {
            self.version += 1;
        }
        self.later_untaken.extend(new);
    }

    /// The sentence telling that older rows are folded, the first time it applies.
    pub fn take_folding_note(&mut self) -> Option<String> {
        let a = self.analysing.as_mut()?;
        if a.fold_told {
            return None;
        }
        let line = folding_note(a.latest.as_ref()?)?;
        a.fold_told = true;
        Some(line)
    }

    /// The report of the run as it stands (the same model `plateau report` renders).
    pub fn report(&self) -> Option<Report> {
        let analysis = self.analysis()?;
        let opts = self.analysis_options.as_ref()?;
        let alerts = match &self.analysing {
            Some(a) => a.analyzer.engine().alerts_by_row(),
            None => Vec::new(),
        };
        Some(build_report(
            &SourceInfo {
                path: self.spec.label.clone(),
                bytes: self.feed.bytes_read,
            },
            self.table(),
            analysis,
            &alerts,
            opts.target_sem.as_ref().map(|(c, v)| (c.as_str(), *v)),
            opts.until_ps,
        ))
    }
}
