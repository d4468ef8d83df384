//! Following many sources at once, delivering `(SourceId, FollowEvent)` on one channel.
//!
//! File sources share one thread and one file-event watcher: the watcher (inotify through
//! `notify`) watches each file's parent folder without recursion and only hints which file
//! to look at; a stat check of every file each `heartbeat` (events) or `poll_interval`
//! (polling) is the source of truth. When the watcher cannot be created, a folder cannot be
//! watched (inotify limit), or events were lost (queue overflow), the set falls back to its
//! own polling and says so with a [`FollowEvent::Mode`] event. notify's own polling watcher
//! is not used: it compares modification times in whole seconds and misses appends.
//!
//! Blocking sources (standard input, pipes, commands) get a thread each.

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicBool, Ordering};
use std::sync::mpsc::{self, Receiver, RecvTimeoutError, Sender, SyncSender, TrySendError};
use std::sync::Arc;
use std::thread::{self, JoinHandle};
use std::time::{Duration, Instant};

use notify::{EventKind, RecommendedWatcher, RecursiveMode, Watcher};

use super::{
    Backoff, Clock, CommandControl, CommandSource, CommandSpec, FileFollower, FollowEvent,
    FollowOptions, ReaderSource, RestartPolicy, Source, SourceId, Step, WatchMode,
};

/// At most this many steps (each at most one read buffer) per source before the others get
/// their turn.
const STEPS_PER_TURN: usize = 4;

/// The shortest stat-check period accepted.
const MIN_PERIOD: Duration = Duration::from_millis(10);

/// Why a follower could not be started or given a source.
#[derive(Debug, thiserror::Error)]
pub enum FollowError {
    /// A thread could not be started.
    #[error("cannot start a follower thread: {0}")]
    Spawn(#[source] std::io::Error),
    /// The follower's thread has ended (its receiver was dropped).
    #[error("the follower has stopped")]
    Stopped,
}

/// The channel end a [`FollowSet`] delivers on.
pub type FollowReceiver = Receiver<(SourceId, FollowEvent)>;

enum Control {
    Add(SourceId, Box<dyn Source>),
    PollNow,
    Stop,
    Fs(notify::Result<notify::Event>),
}

/// Follows many sources; everything arrives on one channel as `(SourceId, FollowEvent)`.
///
/// Dropping the set stops the file thread. The channel disconnects once the set is dropped
/// and every blocking source has finished.
pub struct FollowSet {
    control: Sender<Control>,
    events: SyncSender<(SourceId, FollowEvent)>,
    driver: Option<JoinHandle<()>>,
    /// Set when the set is stopped: the file thread gives up a send to a full channel.
    stopping: Arc<AtomicBool>,
    next: u32,
    options: FollowOptions,
    clock: Arc<dyn Clock>,
}

impl std::fmt::Debug for FollowSet {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.debug_struct("FollowSet")
            .field("sources", &self.next)
            .field("options", &self.options)
            .finish_non_exhaustive()
    }
}

impl FollowSet {
    /// Starts the file thread (and its watcher, unless polling is forced).
    pub fn start(
        options: FollowOptions,
        clock: Arc<dyn Clock>,
    ) -> Result<(Self, FollowReceiver), FollowError> {
        let (control, control_rx) = mpsc::channel();
        let (events, events_rx) = mpsc::sync_channel(options.channel_capacity.max(1));
        let stopping = Arc::new(AtomicBool::new(false));
        let mut driver = Driver::new(options.clone(), control.clone(), control_rx, events.clone());
        driver.stopping = Arc::clone(&stopping);
        let handle = thread::Builder::new()
            .name("plateau-follow".into())
            .spawn(move || driver.run())
            .map_err(FollowError::Spawn)?;
        Ok((
            Self {
                control,
                events,
                driver: Some(handle),
                stopping,
                next: 0,
                options,
                clock,
            },
            events_rx,
        ))
    }

    /// Follows the file at `path` by name.
    pub fn add_path(&mut self, path: impl Into<PathBuf>) -> Result<SourceId, FollowError> {
        let follower = FileFollower::new(path, self.clock.clone(), &self.options);
        self.add_source(Box::new(follower))
    }

    /// Follows standard input until it ends.
    pub fn add_stdin(&mut self) -> Result<SourceId, FollowError> {
        let source = ReaderSource::stdin(self.clock.clone(), &self.options);
        self.add_source(Box::new(source))
    }

    /// Follows the standard output of `command` (see [`CommandSource`]), shown as `label`;
    /// `policy` decides whether it is started again when it exits. The control ends it.
    pub fn add_command(
        &mut self,
        label: impl Into<String>,
        command: CommandSpec,
        policy: Box<dyn RestartPolicy>,
        backoff: Backoff,
    ) -> Result<(SourceId, CommandControl), FollowError> {
        let (source, control) = CommandSource::new(
            label,
            command,
            policy,
            backoff,
            self.clock.clone(),
            &self.options,
        );
        let id = self.add_source(Box::new(source))?;
        Ok((id, control))
    }

    /// Follows any source. Blocking sources get their own thread.
    pub fn add_source(&mut self, source: Box<dyn Source>) -> Result<SourceId, FollowError> {
        let id = SourceId(self.next);
        if source.blocks() {
            let out = self.events.clone();
            let idle = self.options.poll_interval;
            thread::Builder::new()
                .name(format!("plateau-follow-{}", id.0))
                .spawn(move || run_blocking(id, source, &out, idle))
                .map_err(FollowError::Spawn)?;
        } else {
            self.control
                .send(Control::Add(id, source))
                .map_err(|_| FollowError::Stopped)?;
        }
        self.next += 1;
        Ok(id)
    }

    /// Checks every file source now, as a stat-check tick would (tests, "refresh" keys).
    pub fn poll_now(&self) {
        // If the thread has ended there is nothing to poll.
        let _ = self.control.send(Control::PollNow);
    }

    /// Stops the file thread and waits for it. Blocking sources end by themselves when
    /// their input ends or the receiver is dropped.
    pub fn stop(mut self) {
        // The reader may have stopped reading with the channel full: the flag lets the
        // thread give up its send, or the join below would wait for ever.
        self.stopping.store(true, Ordering::Release);
        let _ = self.control.send(Control::Stop);
        if let Some(handle) = self.driver.take() {
            let _ = handle.join();
        }
    }
}

impl Drop for FollowSet {
    fn drop(&mut self) {
        // Not joined: the thread may be waiting for a full channel to be read.
        self.stopping.store(true, Ordering::Release);
        let _ = self.control.send(Control::Stop);
    }
}

/// Sends `item`, waiting while the channel is full, unless `stopping` is set: a reader
/// that stops reading before it stops the set never leaves the file thread blocked on a
/// full channel. `false` when the item was not sent (receiver gone, or stopping).
fn send_unless_stopped<T>(out: &SyncSender<T>, item: T, stopping: &AtomicBool) -> bool {
    let mut item = item;
    let mut wait = Duration::from_micros(100);
    loop {
        match out.try_send(item) {
            Ok(()) => return true,
            Err(TrySendError::Disconnected(_)) => return false,
            Err(TrySendError::Full(back)) => {
                if stopping.load(Ordering::Acquire) {
                    return false;
                }
                item = back;
                thread::sleep(wait);
                wait = (wait * 2).min(Duration::from_millis(5));
            }
        }
    }
}

fn run_blocking(
    id: SourceId,
    mut source: Box<dyn Source>,
    out: &SyncSender<(SourceId, FollowEvent)>,
    idle: Duration,
) {
    let mut events = Vec::new();
    loop {
        let step = source.step(&mut events);
        for event in events.drain(..) {
            if out.send((id, event)).is_err() {
                return;
            }
        }
        match step {
            Step::Finished => return,
            Step::More => {}
            Step::Idle => thread::park_timeout(idle),
        }
    }
}

struct Entry {
    id: SourceId,
    source: Box<dyn Source>,
    /// Absolute path of the followed file, if any.
    dir: Option<PathBuf>,
    mode: Option<WatchMode>,
    /// Has more data ready: step again without waiting.
    pending: bool,
    /// A file event named this source.
    hinted: bool,
    finished: bool,
}

enum DirWatch {
    Watched,
    Unwatched { reason: String, retry: bool },
}

struct Driver {
    options: FollowOptions,
    control: Sender<Control>,
    rx: Receiver<Control>,
    out: SyncSender<(SourceId, FollowEvent)>,
    watcher: Option<RecommendedWatcher>,
    /// Why file events are not used at all (set when the watcher failed).
    fallback: Option<String>,
    dirs: HashMap<PathBuf, DirWatch>,
    entries: Vec<Entry>,
    by_path: HashMap<PathBuf, Vec<usize>>,
    by_dir: HashMap<PathBuf, Vec<usize>>,
    outbox: Vec<(SourceId, FollowEvent)>,
    events: Vec<FollowEvent>,
    /// Shared with the set: set when it is stopped.
    stopping: Arc<AtomicBool>,
}

impl Driver {
    fn new(
        options: FollowOptions,
        control: Sender<Control>,
        rx: Receiver<Control>,
        out: SyncSender<(SourceId, FollowEvent)>,
    ) -> Self {
        // A zero period would make the thread spin.
        let options = FollowOptions {
            poll_interval: options.poll_interval.max(MIN_PERIOD),
            heartbeat: options.heartbeat.max(MIN_PERIOD),
            ..options
        };
        Self {
            options,
            control,
            rx,
            out,
            watcher: None,
            fallback: None,
            dirs: HashMap::new(),
            entries: Vec::new(),
            by_path: HashMap::new(),
            by_dir: HashMap::new(),
            outbox: Vec::new(),
            events: Vec::new(),
            stopping: Arc::new(AtomicBool::new(false)),
        }
    }

    fn run(mut self) {
        if !self.options.force_poll {
            let tx = self.control.clone();
            let handler = move |event: notify::Result<notify::Event>| {
                let _ = tx.send(Control::Fs(event));
            };
            match RecommendedWatcher::new(handler, notify::Config::default()) {
                Ok(w) => self.watcher = Some(w),
                Err(e) => self.fallback = Some(format!("cannot create a file watcher: {e}")),
            }
        }
        let mut next_tick = Instant::now() + self.period();
        loop {
            let mut all = false;
            let pending = self.entries.iter().any(|e| e.pending);
            let timeout = if pending {
                Duration::ZERO
            } else {
                next_tick.saturating_duration_since(Instant::now())
            };
            match self.rx.recv_timeout(timeout) {
                Ok(msg) => {
                    if !self.handle(msg, &mut all) {
                        return;
                    }
                }
                Err(RecvTimeoutError::Timeout) => {}
                Err(RecvTimeoutError::Disconnected) => return,
            }
            // Coalesce whatever else is queued (event storms) before looking at files.
            while let Ok(msg) = self.rx.try_recv() {
                if !self.handle(msg, &mut all) {
                    return;
                }
            }
            let now = Instant::now();
            // A fallback to polling may have shortened the period.
            next_tick = next_tick.min(now + self.period());
            if now >= next_tick {
                all = true;
                self.retry_dirs();
                next_tick = now + self.period();
            }
            if !self.flush() || !self.step_sources(all) {
                return;
            }
        }
    }

    /// Handles one control message; `false` means stop.
    fn handle(&mut self, msg: Control, all: &mut bool) -> bool {
        match msg {
            Control::Stop => return false,
            Control::PollNow => *all = true,
            Control::Add(id, source) => self.add(id, source),
            Control::Fs(Ok(event)) => {
                if event.need_rescan() {
                    self.fall_back("file events were lost (event queue overflow)".into());
                    *all = true;
                } else if !matches!(event.kind, EventKind::Access(_)) {
                    // Our own opening and reading of a file shows up as access events.
                    let gone = matches!(
                        event.kind,
                        EventKind::Remove(_)
                            | EventKind::Modify(notify::event::ModifyKind::Name(_))
                    );
                    for path in &event.paths {
                        if gone && self.dirs.contains_key(path.as_path()) {
                            self.lost_dir(path);
                        }
                        self.hint(path);
                    }
                }
            }
            Control::Fs(Err(e)) => {
                let reason = match e.kind {
                    notify::ErrorKind::MaxFilesWatch => limit_reason(),
                    _ => format!("file events failed: {e}"),
                };
                self.fall_back(reason);
                *all = true;
            }
        }
        true
    }

    fn hint(&mut self, path: &Path) {
        let Driver {
            by_path,
            by_dir,
            entries,
            ..
        } = self;
        let hit = by_path.get(path).or_else(|| by_dir.get(path));
        for &i in hit.into_iter().flatten() {
            if let Some(e) = entries.get_mut(i) {
                e.hinted = true;
            }
        }
    }

    fn add(&mut self, id: SourceId, source: Box<dyn Source>) {
        let index = self.entries.len();
        let target = source.watch_target().map(absolute);
        let dir = target
            .as_ref()
            .and_then(|p| p.parent())
            .map(Path::to_path_buf);
        if let Some(d) = &dir {
            self.by_dir.entry(d.clone()).or_default().push(index);
            self.watch_dir(d);
        }
        if let Some(p) = target {
            // A symbolic link: appends show up as events in the target's folder.
            let real = std::fs::canonicalize(&p).ok().filter(|r| *r != p);
            if let Some(real_dir) = real.as_ref().and_then(|r| r.parent()) {
                let real_dir = real_dir.to_path_buf();
                self.watch_dir(&real_dir);
            }
            self.by_path.entry(p).or_default().push(index);
            if let Some(r) = real {
                self.by_path.entry(r).or_default().push(index);
            }
        }
        self.entries.push(Entry {
            id,
            source,
            dir,
            mode: None,
            pending: false,
            hinted: true,
            finished: false,
        });
        self.update_modes();
    }

    fn watch_dir(&mut self, dir: &Path) {
        if self.dirs.contains_key(dir) {
            return;
        }
        let Some(watcher) = self.watcher.as_mut() else {
            return;
        };
        let state = match watcher.watch(dir, RecursiveMode::NonRecursive) {
            Ok(()) => DirWatch::Watched,
            Err(e) => describe_watch_error(&e),
        };
        self.dirs.insert(dir.to_path_buf(), state);
    }

    /// Tries again to watch folders that did not exist yet.
    fn retry_dirs(&mut self) {
        let Some(watcher) = self.watcher.as_mut() else {
            return;
        };
        let mut changed = false;
        for (dir, state) in &mut self.dirs {
            if let DirWatch::Unwatched { retry: true, .. } = state {
                *state = match watcher.watch(dir, RecursiveMode::NonRecursive) {
                    Ok(()) => {
                        changed = true;
                        DirWatch::Watched
                    }
                    Err(e) => describe_watch_error(&e),
                };
            }
        }
        if changed {
            self.update_modes();
        }
    }

    /// A watched folder was removed or renamed: its watch is gone; poll its files and try
    /// to watch it again on each stat check.
    fn lost_dir(&mut self, dir: &Path) {
        if let Some(watcher) = self.watcher.as_mut() {
            let _ = watcher.unwatch(dir);
        }
        self.dirs.insert(
            dir.to_path_buf(),
            DirWatch::Unwatched {
                reason: "folder was removed or renamed".into(),
                retry: true,
            },
        );
        self.update_modes();
    }

    fn fall_back(&mut self, reason: String) {
        if self.fallback.is_none() {
            self.watcher = None;
            self.dirs.clear();
            self.fallback = Some(reason);
            self.update_modes();
        }
    }

    fn mode_for(&self, entry: &Entry) -> Option<WatchMode> {
        let dir = entry.dir.as_ref()?;
        let interval = self.options.poll_interval;
        if self.options.force_poll {
            return Some(WatchMode::Polling { interval });
        }
        if let Some(reason) = &self.fallback {
            return Some(WatchMode::PollingFallback {
                interval,
                reason: reason.clone(),
            });
        }
        Some(match self.dirs.get(dir) {
            Some(DirWatch::Watched) => WatchMode::Events {
                heartbeat: self.options.heartbeat,
            },
            Some(DirWatch::Unwatched { reason, .. }) => WatchMode::PollingFallback {
                interval,
                reason: reason.clone(),
            },
            None => WatchMode::PollingFallback {
                interval,
                reason: "folder not watched".into(),
            },
        })
    }

    fn update_modes(&mut self) {
        for i in 0..self.entries.len() {
            let Some(entry) = self.entries.get(i) else {
                continue;
            };
            let mode = self.mode_for(entry);
            if let Some(entry) = self.entries.get_mut(i) {
                if mode != entry.mode {
                    if let Some(m) = mode.clone() {
                        self.outbox.push((entry.id, FollowEvent::Mode(m)));
                    }
                    entry.mode = mode;
                }
            }
        }
    }

    /// The stat-check period: the heartbeat while every file has events, else the poll interval.
    fn period(&self) -> Duration {
        let all_events = self
            .entries
            .iter()
            .all(|e| matches!(e.mode, None | Some(WatchMode::Events { .. })));
        if all_events && !self.options.force_poll && self.fallback.is_none() {
            self.options.heartbeat
        } else {
            self.options.poll_interval
        }
    }

    /// Sends queued events; `false` if the receiver is gone.
    fn flush(&mut self) -> bool {
        for item in self.outbox.drain(..) {
            if !send_unless_stopped(&self.out, item, &self.stopping) {
                return false;
            }
        }
        true
    }

    /// Steps the sources that need it; `false` if the receiver is gone.
    fn step_sources(&mut self, all: bool) -> bool {
        let Driver {
            entries,
            events,
            out,
            stopping,
            ..
        } = self;
        for entry in entries.iter_mut() {
            if entry.finished || !(all || entry.hinted || entry.pending) {
                continue;
            }
            entry.hinted = false;
            entry.pending = false;
            for _ in 0..STEPS_PER_TURN {
                let step = entry.source.step(events);
                for event in events.drain(..) {
                    if !send_unless_stopped(out, (entry.id, event), stopping) {
                        return false;
                    }
                }
                match step {
                    Step::More => entry.pending = true,
                    Step::Idle => {
                        entry.pending = false;
                        break;
                    }
                    Step::Finished => {
                        entry.pending = false;
                        entry.finished = true;
                        break;
                    }
                }
            }
        }
        true
    }
}

fn absolute(path: &Path) -> PathBuf {
    std::path::absolute(path).unwrap_or_else(|_| path.to_path_buf())
}

fn limit_reason() -> String {
    "inotify watch limit reached (fs.inotify.max_user_watches)".into()
}

fn describe_watch_error(e: &notify::Error) -> DirWatch {
    match &e.kind {
        notify::ErrorKind::MaxFilesWatch => DirWatch::Unwatched {
            reason: limit_reason(),
            retry: false,
        },
        notify::ErrorKind::PathNotFound => DirWatch::Unwatched {
            reason: "folder does not exist yet".into(),
            retry: true,
        },
        notify::ErrorKind::Io(io) if io.kind() == std::io::ErrorKind::NotFound => {
            DirWatch::Unwatched {
                reason: "folder does not exist yet".into(),
                retry: true,
            }
        }
        _ => DirWatch::Unwatched {
            reason: format!("cannot watch the folder: {e}"),
            retry: false,
        },
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::follow::SystemClock;

    fn wait_for_mode(rx: &FollowReceiver, want: impl Fn(&WatchMode) -> bool) -> WatchMode {
        let deadline = Instant::now() + Duration::from_secs(20);
        loop {
            let left = deadline.saturating_duration_since(Instant::now());
            match rx.recv_timeout(left) {
                Ok((_, FollowEvent::Mode(m))) if want(&m) => return m,
                Ok(_) => {}
                Err(e) => panic!("mode never came: {e}"),
            }
        }
    }

    /// A lost-events notice (inotify queue overflow) switches to polling and says why
    /// (notify-types: `Event::need_rescan` marks a queue overflow).
    #[test]
    fn queue_overflow_falls_back_to_polling() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("run.log");
        std::fs::write(&p, "a\n").unwrap();
        let (mut set, rx) =
            FollowSet::start(FollowOptions::default(), Arc::new(SystemClock)).unwrap();
        set.add_path(&p).unwrap();
        wait_for_mode(&rx, |m| matches!(m, WatchMode::Events { .. }));
        let overflow = notify::Event::new(EventKind::Other).set_flag(notify::event::Flag::Rescan);
        set.control.send(Control::Fs(Ok(overflow))).unwrap();
        let m = wait_for_mode(&rx, |m| matches!(m, WatchMode::PollingFallback { .. }));
        assert!(matches!(m, WatchMode::PollingFallback { reason, .. } if reason.contains("lost")));
        set.stop();
    }

    /// Found by the 30-minute soak: a reader that stops reading (its run is over) while the
    /// channel is full, then stops the set, must not wait for ever on the file thread,
    /// which was blocked sending to the full channel.
    #[test]
    fn stop_returns_while_the_channel_is_full() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("run.log");
        let text: String = (0..200_000).map(|i| format!("{i} {i}.5\n")).collect();
        std::fs::write(&p, text).unwrap();
        let options = FollowOptions {
            channel_capacity: 1,
            ..FollowOptions::default()
        };
        let (mut set, rx) = FollowSet::start(options, Arc::new(SystemClock)).unwrap();
        set.add_path(&p).unwrap();
        // Read one event, then stop reading: the file thread fills the channel.
        rx.recv_timeout(Duration::from_secs(20)).unwrap();
        thread::sleep(Duration::from_millis(300));
        let (done_tx, done_rx) = mpsc::channel();
        thread::spawn(move || {
            set.stop();
            let _ = done_tx.send(());
        });
        assert!(
            done_rx.recv_timeout(Duration::from_secs(20)).is_ok(),
            "stop() did not return with the channel full"
        );
        drop(rx);
    }

    /// The inotify watch limit reported by the watcher switches to polling and names the limit.
    #[test]
    fn watch_limit_falls_back_to_polling() {
        let dir = tempfile::tempdir().unwrap();
        let p = dir.path().join("run.log");
        let (mut set, rx) =
            FollowSet::start(FollowOptions::default(), Arc::new(SystemClock)).unwrap();
        set.add_path(&p).unwrap();
        wait_for_mode(&rx, |m| matches!(m, WatchMode::Events { .. }));
        let limit = notify::Error::new(notify::ErrorKind::MaxFilesWatch);
        set.control.send(Control::Fs(Err(limit))).unwrap();
        let m = wait_for_mode(&rx, |m| matches!(m, WatchMode::PollingFallback { .. }));
        assert!(
            matches!(m, WatchMode::PollingFallback { reason, .. } if reason.contains("max_user_watches"))
        );
        set.stop();
    }
}
