//! `plateau watch`: the live dashboard.
//!
//! Architecture (see DEVELOPERS.md, "The dashboard"):
//! - The **engine thread** owns nothing but a lock on the runs ([`crate::live::Live`]): it
//!   waits for follower events, applies them (and whatever else is already waiting, up
//!   to a few MiB) under the lock, analyses the runs with new rows, and once a second
//!   checks stalled output and glob patterns. When something changed it wakes the UI with
//!   one [`Event::Data`] (a flag keeps a burst to one wake-up until the UI has drawn).
//! - The **input thread** blocks on the terminal's input and forwards keys and resizes; the
//!   **signal thread** forwards SIGTERM, SIGHUP, SIGINT and SIGQUIT.
//! - The **UI thread** (the caller) blocks on one channel. A key changes the [`App`] state
//!   ([`App::on_key`]) and redraws at once; data redraws at most every
//!   [`MIN_DATA_FRAME`]; the only clock is the moment a shown "time since the last row"
//!   text would change. Each frame: a [`Snapshot`] is built under the lock (short), then
//!   drawn without it as a diff against the previous frame (ratatui), inside a
//!   synchronized update so slow links do not tear.
//! - The terminal is restored by [`terminal::TerminalGuard`] on every way out.

pub mod app;
pub mod backend;
pub mod chart;
pub mod format;
pub mod glyphs;
pub mod keys;
pub mod layout;
pub mod model;
pub mod panels;
pub mod terminal;
pub mod theme;
pub mod ui;

use std::io::{self, BufWriter, IsTerminal, Stdout, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{self, Receiver, RecvTimeoutError, Sender, TryRecvError};
use std::sync::{Arc, Mutex, MutexGuard};
use std::thread;
use std::time::{Duration, Instant};

use crossterm::event::{Event as TermEvent, KeyEvent, KeyEventKind};
use ratatui::layout::Rect;
use ratatui::Terminal;

use crate::error::Error;
use crate::follow::{FollowEvent, FollowReceiver};
use crate::live::{self, Live, RunId};
use crate::units::TimeSpec;

pub use app::App;
pub use model::Snapshot;
pub use theme::Theme;

use app::{Effect, Message};
use backend::LeanBackend;
use terminal::TerminalGuard;

/// The shortest time between two frames drawn for new data (a key draws at once). 100 ms
/// keeps an appended row on screen within the 100 ms the product asks for while a run
/// writing many rows a second costs at most ten small diffs a second.
pub const MIN_DATA_FRAME: Duration = Duration::from_millis(100);

/// How often the engine checks stalled output, `--until` and glob patterns.
const ENGINE_TICK: Duration = Duration::from_secs(1);

/// Bytes applied under one hold of the lock before the runs are analysed and the lock is
/// let go (the UI draws between such holds).
const DRAIN_BYTES: usize = 4 << 20;

/// What wakes the UI thread.
#[derive(Debug, Clone, PartialEq, Eq)]
pub enum Event {
    Key(KeyEvent),
    Resize,
    /// Runs changed.
    Data,
    /// A signal asked to end (its number).
    Signal(i32),
    /// The terminal's input is gone (hung up).
    InputGone,
    /// The engine thread ended (its follower stopped, or it panicked).
    EngineStopped,
}

/// Settings of the dashboard besides the runs.
#[derive(Debug, Clone)]
pub struct WatchOptions {
    /// Where the `w` key writes reports.
    pub report_dir: PathBuf,
    /// A run that reached this time or step is finished.
    pub until: Option<TimeSpec>,
    pub timestep_ps: Option<f64>,
}

/// Whether standard output is a terminal the dashboard can draw on.
pub fn stdout_is_terminal() -> bool {
    io::stdout().is_terminal()
}

/// The refusal when standard output is not a terminal.
pub fn not_a_terminal() -> Error {
    Error::Usage(
        "plateau watch draws on a terminal, and standard output is not one; to follow logs \
         from a script or into a file use `plateau check --follow FILE...`"
            .to_string(),
    )
}

/// The runs, shared by the engine thread and the UI thread.
///
/// A mutex is not fair: the engine, taking the lock again right after letting it go while
/// a large file loads, could keep the UI waiting for seconds. So the UI says when it waits
/// ([`Shared::lock_for_ui`]) and the engine steps aside before its next hold
/// ([`Shared::lock_for_engine`]); the UI's holds are short (building one snapshot).
struct Shared {
    live: Mutex<Live>,
    ui_waiting: AtomicBool,
}

/// The longest the engine steps aside for a waiting UI before taking the lock anyway.
const STEP_ASIDE: Duration = Duration::from_millis(200);

impl Shared {
    fn lock_for_ui(&self) -> MutexGuard<'_, Live> {
        self.ui_waiting.store(true, Ordering::SeqCst);
        let guard = lock(&self.live);
        self.ui_waiting.store(false, Ordering::SeqCst);
        guard
    }

    fn lock_for_engine(&self) -> MutexGuard<'_, Live> {
        let start = Instant::now();
        while self.ui_waiting.load(Ordering::SeqCst) && start.elapsed() < STEP_ASIDE {
            thread::sleep(Duration::from_millis(1));
        }
        lock(&self.live)
    }
}

fn lock(live: &Mutex<Live>) -> MutexGuard<'_, Live> {
    live.lock().unwrap_or_else(|poisoned| poisoned.into_inner())
}

/// Sends [`Event::EngineStopped`] when dropped, so the UI hears of the engine's end even
/// when it unwinds from a panic.
struct StopNotice(Sender<Event>);

impl Drop for StopNotice {
    fn drop(&mut self) {
        let _ = self.0.send(Event::EngineStopped);
    }
}

fn event_bytes(event: &FollowEvent) -> usize {
    match event {
        FollowEvent::Data { bytes, .. } => bytes.len(),
        _ => 0,
    }
}

fn engine_loop(
    live: Arc<Shared>,
    rx: FollowReceiver,
    wake: Sender<Event>,
    pending: Arc<AtomicBool>,
    options: WatchOptions,
) {
    let _notice = StopNotice(wake.clone());
    let mut last_tick = Instant::now();
    let mut ticks = 0u64;
    loop {
        let mut changed = false;
        let wait = ENGINE_TICK.saturating_sub(last_tick.elapsed());
        match rx.recv_timeout(wait) {
            Ok((source, event)) => {
                let mut budget = DRAIN_BYTES.saturating_sub(event_bytes(&event));
                let mut l = live.lock_for_engine();
                l.apply(source, event, live::now_seconds());
                // Apply what is already waiting before analysing: one analysis per burst.
                while budget > 0 {
                    match rx.try_recv() {
                        Ok((source, event)) => {
                            budget = budget.saturating_sub(event_bytes(&event));
                            l.apply(source, event, live::now_seconds());
                        }
                        Err(TryRecvError::Empty | TryRecvError::Disconnected) => break,
                    }
                }
                let runs: Vec<RunId> = l.runs().iter().map(|r| r.id()).collect();
                drop(l);
                // One run at a time, letting go of the lock in between, so that the screen
                // shows each run as soon as it is analysed.
                for id in runs {
                    let analysed = live
                        .lock_for_engine()
                        .run_mut(id)
                        .is_some_and(|r| r.analyse());
                    if analysed
                        && !pending.swap(true, Ordering::SeqCst)
                        && wake.send(Event::Data).is_err()
                    {
                        return;
                    }
                }
                changed = true;
            }
            Err(RecvTimeoutError::Timeout) => {}
            Err(RecvTimeoutError::Disconnected) => return,
        }
        if last_tick.elapsed() >= ENGINE_TICK {
            last_tick = Instant::now();
            ticks += 1;
            let now = live::now_seconds();
            let mut l = live.lock_for_engine();
            changed |= l.check_stalls(now);
            if let Some(until) = options.until {
                let ids: Vec<RunId> = l
                    .runs()
                    .iter()
                    .filter(|r| !r.ended() && live::reached(r.table(), until, options.timestep_ps))
                    .map(|r| r.id())
                    .collect();
                for id in ids {
                    if let Some(run) = l.run_mut(id) {
                        run.conclude();
                        changed = true;
                    }
                }
            }
            if ticks.is_multiple_of(2) && !l.patterns().is_empty() {
                changed |= l.discover().is_ok_and(|found| !found.is_empty());
            }
        }
        if changed && !pending.swap(true, Ordering::SeqCst) && wake.send(Event::Data).is_err() {
            return;
        }
    }
}

fn input_loop(tx: Sender<Event>) {
    loop {
        let event = match crossterm::event::read() {
            Ok(TermEvent::Key(k)) if k.kind != KeyEventKind::Release => Event::Key(k),
            Ok(TermEvent::Resize(..)) => Event::Resize,
            Ok(_) => continue,
            Err(_) => {
                let _ = tx.send(Event::InputGone);
                return;
            }
        };
        if tx.send(event).is_err() {
            return;
        }
    }
}

fn signal_loop(tx: Sender<Event>) -> io::Result<()> {
    use signal_hook::consts::{SIGHUP, SIGINT, SIGQUIT, SIGTERM};
    let mut signals = signal_hook::iterator::Signals::new([SIGTERM, SIGHUP, SIGINT, SIGQUIT])?;
    thread::Builder::new()
        .name("plateau-signals".into())
        .spawn(move || {
            for sig in signals.forever() {
                if tx.send(Event::Signal(sig)).is_err() {
                    return;
                }
            }
        })?;
    Ok(())
}

/// A file name for a run's report in `dir`: the label's last part made safe, never an
/// existing file.
fn report_file(dir: &Path, label: &str) -> io::Result<(PathBuf, std::fs::File)> {
    let base: String = Path::new(label)
        .file_name()
        .map(|n| n.to_string_lossy().into_owned())
        .unwrap_or_else(|| "stdin".into())
        .chars()
        .map(|c| {
            if c.is_ascii_alphanumeric() || matches!(c, '.' | '-' | '_') {
                c
            } else {
                '_'
            }
        })
        .collect();
    let base = if base.is_empty() || base == "-" {
        "stdin".to_string()
    } else {
        base
    };
    for n in 1..1000 {
        let name = if n == 1 {
            format!("{base}.report.txt")
        } else {
            format!("{base}.report-{n}.txt")
        };
        let path = dir.join(name);
        match std::fs::OpenOptions::new()
            .write(true)
            .create_new(true)
            .open(&path)
        {
            Ok(f) => return Ok((path, f)),
            Err(e) if e.kind() == io::ErrorKind::AlreadyExists => continue,
            Err(e) => return Err(e),
        }
    }
    Err(io::Error::other(
        "too many reports of this run in the folder",
    ))
}

/// Writes the run's report (the text `plateau report` prints) into `dir`.
pub fn write_report(live: &Live, id: RunId, dir: &Path) -> Message {
    let Some(run) = live.run(id) else {
        return Message {
            text: "no run selected".into(),
            ok: false,
        };
    };
    let Some(report) = run.report() else {
        return Message {
            text: "no report yet: no rows analysed".into(),
            ok: false,
        };
    };
    let text = crate::report::render_text(&report);
    match report_file(dir, &run.spec().label).and_then(|(path, mut f)| {
        f.write_all(text.as_bytes())?;
        Ok(path)
    }) {
        Ok(path) => Message {
            text: format!(
                "report written to {}",
                format::escape(&path.display().to_string())
            ),
            ok: true,
        },
        Err(e) => Message {
            text: format!("cannot write the report into {}: {e}", dir.display()),
            ok: false,
        },
    }
}

type Screen = Terminal<LeanBackend<BufWriter<Stdout>>>;

/// Draws one frame: the cells that changed, inside a synchronized update, in one write
/// (nothing when no cell changed).
fn draw(term: &mut Screen, snapshot: &Snapshot, theme: &Theme) -> io::Result<()> {
    term.draw(|f| f.render_widget(&ui::Dashboard { snapshot, theme }, f.area()))?;
    term.backend_mut().finish_frame()
}

/// Runs the dashboard on the runs of `live` until the user quits or a signal ends it.
/// Returns the exit code: 0 after `q`, 128 + the signal's number after a signal.
pub fn run(live: Live, rx: FollowReceiver, options: WatchOptions) -> Result<u8, Error> {
    if !stdout_is_terminal() {
        return Err(not_a_terminal());
    }
    let runs = live.runs().len();
    let patterns = !live.patterns().is_empty();
    let live = Arc::new(Shared {
        live: Mutex::new(live),
        ui_waiting: AtomicBool::new(false),
    });
    let pending = Arc::new(AtomicBool::new(false));
    let (tx, events) = mpsc::channel();
    signal_loop(tx.clone()).map_err(Error::Output)?;
    {
        let (live, wake, pending, options) =
            (live.clone(), tx.clone(), pending.clone(), options.clone());
        thread::Builder::new()
            .name("plateau-engine".into())
            .spawn(move || engine_loop(live, rx, wake, pending, options))
            .map_err(Error::Output)?;
    }
    let guard = TerminalGuard::enter().map_err(Error::Output)?;
    {
        let tx = tx.clone();
        thread::Builder::new()
            .name("plateau-input".into())
            .spawn(move || input_loop(tx))
            .map_err(Error::Output)?;
    }
    let backend = LeanBackend::new(BufWriter::with_capacity(1 << 16, io::stdout()))
        .with_synchronized_frames()
        .with_ascii(!glyphs::utf8_locale_from_env());
    let mut term = Terminal::new(backend).map_err(Error::Output)?;
    let theme = Theme::from_env();
    let mut app = App::new(runs, patterns);
    let code = ui_loop(
        &mut term, &guard, &live, &pending, &events, &mut app, &theme, &options,
    );
    drop(term);
    drop(guard);
    code
}

#[allow(clippy::too_many_arguments)]
fn ui_loop(
    term: &mut Screen,
    guard: &TerminalGuard,
    live: &Shared,
    pending: &AtomicBool,
    events: &Receiver<Event>,
    app: &mut App,
    theme: &Theme,
    options: &WatchOptions,
) -> Result<u8, Error> {
    let mut redraw = true;
    let mut data_due: Option<Instant> = None;
    let mut clock_due: Option<Instant> = None;
    let mut last_frame = Instant::now();
    loop {
        let now = Instant::now();
        let due = |d: Option<Instant>| d.is_some_and(|d| d <= now);
        if redraw || due(data_due) || due(clock_due) {
            let size = term.size().map_err(Error::Output)?;
            pending.store(false, Ordering::SeqCst);
            let snapshot = {
                let l = live.lock_for_ui();
                model::build(
                    l.runs(),
                    l.patterns(),
                    app,
                    Rect::new(0, 0, size.width, size.height),
                    live::now_seconds(),
                )
            };
            app.sync(snapshot.order(), snapshot.quantity_names());
            draw(term, &snapshot, theme).map_err(Error::Output)?;
            last_frame = Instant::now();
            redraw = false;
            data_due = None;
            clock_due = match (app.paused, snapshot.next_clock_change()) {
                (false, Some(s)) => Some(last_frame + Duration::from_secs_f64(s)),
                _ => None,
            };
        }
        let wait = [data_due, clock_due].into_iter().flatten().min();
        let event = match wait {
            Some(at) => match events.recv_timeout(at.saturating_duration_since(Instant::now())) {
                Ok(e) => e,
                Err(RecvTimeoutError::Timeout) => continue,
                Err(RecvTimeoutError::Disconnected) => return Ok(0),
            },
            None => match events.recv() {
                Ok(e) => e,
                Err(_) => return Ok(0),
            },
        };
        match event {
            Event::Key(key) => {
                for effect in app.on_key(&key) {
                    match effect {
                        Effect::Redraw => redraw = true,
                        Effect::FullRedraw => {
                            term.clear().map_err(Error::Output)?;
                            term.backend_mut().finish_frame().map_err(Error::Output)?;
                            redraw = true;
                        }
                        Effect::WriteReport(id) => {
                            let message =
                                write_report(&live.lock_for_ui(), id, &options.report_dir);
                            app.message = Some(message);
                            redraw = true;
                        }
                        Effect::Suspend => {
                            guard.suspend().map_err(Error::Output)?;
                            term.clear().map_err(Error::Output)?;
                            term.backend_mut().finish_frame().map_err(Error::Output)?;
                            redraw = true;
                        }
                        Effect::Quit => return Ok(0),
                    }
                }
            }
            Event::Resize => redraw = true,
            Event::Data => {
                if app.paused {
                    // The screen holds still; the next wake-up comes with the next change.
                    pending.store(false, Ordering::SeqCst);
                } else {
                    data_due = Some(data_due.unwrap_or(last_frame + MIN_DATA_FRAME));
                }
            }
            Event::Signal(sig) => return Ok(128u8.saturating_add(sig as u8)),
            Event::InputGone => return Ok(0),
            Event::EngineStopped => {
                return Err(Error::Usage(
                    "the dashboard's reader stopped unexpectedly; the terminal was restored"
                        .to_string(),
                ))
            }
        }
    }
}
