//! The live demo: several invented runs written at once into a temporary folder, each at
//! its own pace, so that a dashboard opened on the folder shows every kind of verdict
//! within seconds and each run's story unfolds as it is written.
//!
//! A [`DemoPlan`] says what is written and when: each [`DemoRun`] is a scenario with a
//! *backlog* (the rows the job had written before the demo started, written at once) and a
//! pace in rows per second; its schedule ([`DemoRun::rows_due`]) is a pure function of the
//! elapsed time, so tests can replay it without waiting. [`LiveDemo::start`] creates the
//! folder, writes the backlogs, and starts one writer thread; dropping the [`LiveDemo`] (or
//! [`LiveDemo::finish`]) stops the thread and removes the folder with everything in it.
//!
//! The standard plan is timed so that ten seconds after the start the logs show a healthy
//! run, one still settling (that becomes steady about a minute later), one whose energy
//! drifts, one that blows up (its growth starts after a few seconds and ends in non-finite
//! values, after which it writes nothing more), and one whose output stalls (it stops in the
//! middle of a row). The stall is only seen as such with a stall limit shorter than the
//! default minute: use [`DemoPlan::stall_after`].

pub mod examples;

use std::fs::File;
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::sync::mpsc::{self, Receiver, RecvTimeoutError, Sender};
use std::thread::JoinHandle;
use std::time::{Duration, Instant};

use crate::scenario::{Emitted, LogEmitter, LogStyle, Scenario, ScenarioSpec};

use examples::RunFacts;

/// Hours a run that neither stalls nor blows up keeps writing before it finishes.
const LIVE_HOURS: f64 = 4.0;

/// One run of the demo: a scenario, its file, and when its rows are written.
#[derive(Debug, Clone, PartialEq)]
pub struct DemoRun {
    /// What is generated; `spec.rows` rows are written, then the scenario's ending.
    pub spec: ScenarioSpec,
    /// File name inside the demo folder.
    pub file_name: String,
    /// Rows already written when the demo starts (the job ran before we looked).
    pub backlog_rows: u64,
    /// Rows written per second after the backlog.
    pub rows_per_second: f64,
    /// The verdict the run is there to show, in a word (healthy, settling, drifting,
    /// blowing up, stalled, ...).
    pub shows: &'static str,
}

impl DemoRun {
    /// The demo's version of `scenario`: layout, backlog, pace and length chosen so that
    /// its story is visible within seconds.
    pub fn for_scenario(scenario: Scenario) -> DemoRun {
        // (layout, backlog rows, rows per second, seconds of writing or None for hours, shows)
        let (style, backlog, pace, seconds, shows) = match scenario {
            Scenario::Production => (LogStyle::Whitespace, 1500, 1.0, None, "healthy"),
            Scenario::DensitySettling => (LogStyle::Whitespace, 20, 4.0, None, "settling"),
            Scenario::Heating => (LogStyle::Csv, 30, 5.0, None, "settling, then steady"),
            Scenario::StagedHeating => (LogStyle::Csv, 20, 5.0, None, "settling, then steady"),
            Scenario::Equilibration => {
                (LogStyle::Whitespace, 20, 5.0, None, "settling, then steady")
            }
            Scenario::NveDrift => (LogStyle::Tab, 600, 5.0, None, "drifting"),
            Scenario::BlowUp => (LogStyle::Fortran, 700, 8.0, None, "blowing up"),
            Scenario::Stalled => (LogStyle::Whitespace, 400, 3.0, Some(3.0), "stalled"),
            Scenario::ThermostatFailure => (
                LogStyle::Whitespace,
                300,
                5.0,
                None,
                "wrong fluctuation size",
            ),
        };
        let live_rows = (pace * seconds.unwrap_or(LIVE_HOURS * 3600.0)).round() as u64;
        let mut spec = ScenarioSpec::new(scenario, style, backlog + live_rows);
        if scenario == Scenario::BlowUp {
            // The growth starts 2.5 s after the demo starts.
            spec.fault_row = Some(backlog + 20);
        }
        DemoRun {
            file_name: format!("{}.{}", scenario.name(), style.extension()),
            spec,
            backlog_rows: backlog,
            rows_per_second: pace,
            shows,
        }
    }

    /// What a user would tell plateau about this run (its size and targets), so that the
    /// dashboard judges it as it would a real one.
    pub fn facts(&self) -> RunFacts {
        RunFacts::of(&self.spec)
    }

    /// Slots (rows, and the ending after the last row) written by `elapsed` seconds after
    /// the start: the backlog at once, then one every `1/rows_per_second` seconds.
    pub fn rows_due(&self, elapsed: f64) -> u64 {
        let live = if elapsed > 0.0 && self.rows_per_second > 0.0 {
            // A hair of slack so that a slot due at exactly `elapsed` counts.
            (elapsed * self.rows_per_second + 1e-9).floor() as u64
        } else {
            0
        };
        self.backlog_rows
            .saturating_add(live)
            .min(self.spec.rows.saturating_add(1))
    }

    /// Seconds after the start at which slot `slot` is written (0 for the backlog).
    pub fn due_at(&self, slot: u64) -> f64 {
        match slot.checked_sub(self.backlog_rows) {
            None => 0.0,
            Some(k) => (k + 1) as f64 / self.rows_per_second.max(f64::MIN_POSITIVE),
        }
    }
}

/// What the demo writes: its runs, and the stall limit that suits their paces.
#[derive(Debug, Clone, PartialEq)]
pub struct DemoPlan {
    pub runs: Vec<DemoRun>,
    /// A stall limit for the dashboard (`--stall-after`): a few row intervals of the
    /// slowest run, so the stalled run is seen as stalled within seconds.
    pub stall_after: Duration,
}

/// The scenarios of the standard demo, in the order they are listed.
pub const STANDARD_SCENARIOS: [Scenario; 6] = [
    Scenario::Production,
    Scenario::DensitySettling,
    Scenario::Heating,
    Scenario::NveDrift,
    Scenario::BlowUp,
    Scenario::Stalled,
];

impl DemoPlan {
    /// Healthy, settling, heating, drifting, blowing up and stalling runs at once.
    pub fn standard() -> DemoPlan {
        DemoPlan::of(&STANDARD_SCENARIOS)
    }

    /// What `plateau demo` shows: the standard plan, or one run of `scenario` alone.
    pub fn select(scenario: Option<Scenario>) -> DemoPlan {
        match scenario {
            Some(s) => DemoPlan::of(&[s]),
            None => DemoPlan::standard(),
        }
    }

    /// One run of each of `scenarios`.
    pub fn of(scenarios: &[Scenario]) -> DemoPlan {
        DemoPlan {
            runs: scenarios
                .iter()
                .map(|&s| DemoRun::for_scenario(s))
                .collect(),
            stall_after: Duration::from_secs(4),
        }
    }
}

/// A run being written.
#[derive(Debug)]
struct LiveRun {
    plan: DemoRun,
    emitter: LogEmitter,
    file: File,
    /// Slots written so far.
    written: u64,
    buffer: Vec<u8>,
}

impl LiveRun {
    fn create(plan: DemoRun, folder: &Path) -> io::Result<LiveRun> {
        let mut file = File::create(folder.join(&plan.file_name))?;
        let mut emitter = LogEmitter::new(plan.spec.clone());
        let mut buffer = Vec::new();
        emitter.write_header(&mut buffer)?;
        file.write_all(&buffer)?;
        buffer.clear();
        Ok(LiveRun {
            plan,
            emitter,
            file,
            written: 0,
            buffer,
        })
    }

    /// Writes every slot due by `elapsed`, in one write.
    fn catch_up(&mut self, elapsed: f64) -> io::Result<()> {
        let due = self.plan.rows_due(elapsed);
        while self.written < due && !self.emitter.ended() {
            self.written += 1;
            if self.emitter.write_next(&mut self.buffer)? == Emitted::End {
                break;
            }
        }
        if !self.buffer.is_empty() {
            self.file.write_all(&self.buffer)?;
            self.buffer.clear();
        }
        Ok(())
    }

    /// Seconds after the start when the next slot is due, or `None` once the run ended.
    fn next_due(&self) -> Option<f64> {
        (!self.emitter.ended()).then(|| self.plan.due_at(self.written))
    }
}

/// The demo's runs being written into a temporary folder; removed when dropped.
#[derive(Debug)]
pub struct LiveDemo {
    folder: Option<tempfile::TempDir>,
    paths: Vec<PathBuf>,
    stop: Option<Sender<()>>,
    writer: Option<JoinHandle<io::Result<()>>>,
}

impl LiveDemo {
    /// Creates a folder in the system's temporary folder, writes every run's header and
    /// backlog, and starts writing the rest at the plan's paces.
    pub fn start(plan: &DemoPlan) -> io::Result<LiveDemo> {
        LiveDemo::start_in(plan, &std::env::temp_dir())
    }

    /// As [`start`](Self::start), with the folder created inside `parent`.
    pub fn start_in(plan: &DemoPlan, parent: &Path) -> io::Result<LiveDemo> {
        let folder = tempfile::Builder::new()
            .prefix("plateau-demo-")
            .tempdir_in(parent)?;
        let mut runs = Vec::with_capacity(plan.runs.len());
        for run in &plan.runs {
            let mut live = LiveRun::create(run.clone(), folder.path())?;
            live.catch_up(0.0)?;
            runs.push(live);
        }
        let paths = plan
            .runs
            .iter()
            .map(|r| folder.path().join(&r.file_name))
            .collect();
        let (stop, stopped) = mpsc::channel();
        let start = Instant::now();
        let writer = std::thread::Builder::new()
            .name("demo-writer".to_string())
            .spawn(move || write_until_stopped(runs, start, &stopped))?;
        Ok(LiveDemo {
            folder: Some(folder),
            paths,
            stop: Some(stop),
            writer: Some(writer),
        })
    }

    /// The folder the logs are written in (open the dashboard on it).
    pub fn folder(&self) -> &Path {
        self.folder
            .as_ref()
            .map_or_else(|| Path::new(""), |f| f.path())
    }

    /// The logs' paths, in the plan's order.
    pub fn paths(&self) -> &[PathBuf] {
        &self.paths
    }

    /// Stops writing and removes the folder; reports a failed write or removal.
    pub fn finish(mut self) -> io::Result<()> {
        let written = self.stop_writer();
        let removed = match self.folder.take() {
            Some(folder) => folder.close(),
            None => Ok(()),
        };
        written.and(removed)
    }

    fn stop_writer(&mut self) -> io::Result<()> {
        // Dropping the sender wakes the writer, which sees the channel closed.
        self.stop.take();
        match self.writer.take().map(JoinHandle::join) {
            Some(Ok(result)) => result,
            Some(Err(_)) => Err(io::Error::other("the demo's writer thread panicked")),
            None => Ok(()),
        }
    }
}

impl Drop for LiveDemo {
    fn drop(&mut self) {
        // Errors cannot be reported from here; `finish` reports them.
        let _ = self.stop_writer();
        if let Some(folder) = self.folder.take() {
            let _ = folder.close();
        }
    }
}

/// The writer thread: writes what is due, sleeps until the next slot or until told to stop
/// (a message or the sender dropped).
fn write_until_stopped(
    mut runs: Vec<LiveRun>,
    start: Instant,
    stop: &Receiver<()>,
) -> io::Result<()> {
    loop {
        let elapsed = start.elapsed().as_secs_f64();
        let mut next: Option<f64> = None;
        for run in &mut runs {
            run.catch_up(elapsed)?;
            if let Some(due) = run.next_due() {
                next = Some(next.map_or(due, |n: f64| n.min(due)));
            }
        }
        let wait = match next {
            Some(due) => Duration::from_secs_f64((due - start.elapsed().as_secs_f64()).max(0.0)),
            // Every run has ended: nothing more to write until told to stop.
            None => Duration::from_secs(3600),
        };
        match stop.recv_timeout(wait) {
            Err(RecvTimeoutError::Timeout) => {}
            Ok(()) | Err(RecvTimeoutError::Disconnected) => return Ok(()),
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn schedule_writes_the_backlog_at_once_then_at_the_pace() {
        let run = DemoRun::for_scenario(Scenario::NveDrift);
        assert_eq!(run.rows_due(0.0), 600);
        assert_eq!(run.rows_due(0.19), 600);
        assert_eq!(run.rows_due(0.2), 601);
        assert_eq!(run.rows_due(10.0), 650);
        assert_eq!(run.due_at(599), 0.0);
        assert_eq!(run.due_at(600), 0.2);
        assert_eq!(run.rows_due(run.due_at(649)), 650);
        // The stalled run writes three seconds of rows, then its ending, then nothing.
        let stalled = DemoRun::for_scenario(Scenario::Stalled);
        assert_eq!(stalled.spec.rows, 409);
        assert_eq!(stalled.rows_due(3.4), 410);
        assert_eq!(stalled.rows_due(1e6), 410);
    }

    #[test]
    fn selection_is_the_standard_plan_or_one_scenario() {
        let standard = DemoPlan::select(None);
        assert_eq!(standard, DemoPlan::standard());
        // Every kind of verdict is there: healthy, settling, drifting, blowing up, stalled.
        let shows: Vec<&str> = standard.runs.iter().map(|r| r.shows).collect();
        for kind in ["healthy", "settling", "drifting", "blowing up", "stalled"] {
            assert!(
                shows.iter().any(|s| s.starts_with(kind)),
                "{kind}: {shows:?}"
            );
        }
        for scenario in Scenario::ALL {
            let plan = DemoPlan::select(Some(scenario));
            assert_eq!(plan.runs.len(), 1);
            assert_eq!(plan.runs[0].spec.scenario, scenario);
            assert_eq!(plan.runs[0], DemoRun::for_scenario(scenario));
        }
    }

    #[test]
    fn facts_follow_the_ensemble() {
        // Constant energy: no thermostat or barostat target.
        let nve = DemoRun::for_scenario(Scenario::NveDrift).facts();
        assert_eq!((nve.target_temperature, nve.target_pressure), (None, None));
        // Heating: the thermostat's schedule, no barostat.
        let heating = DemoRun::for_scenario(Scenario::Heating).facts();
        assert_eq!(
            heating.target_temperature.as_deref(),
            Some("0ps=10K,100ps=300K")
        );
        assert_eq!(heating.target_pressure, None);
        // Constant pressure: both targets; the size is the scenario's system.
        let run = DemoRun::for_scenario(Scenario::Production);
        let npt = run.facts();
        assert_eq!(npt.target_temperature.as_deref(), Some("300K"));
        assert!(npt.target_pressure.is_some());
        assert_eq!(npt.atoms, run.spec.atoms);
    }

    #[test]
    fn file_names_are_distinct() {
        let plan = DemoPlan::of(&Scenario::ALL);
        let mut names: Vec<&str> = plan.runs.iter().map(|r| r.file_name.as_str()).collect();
        names.sort_unstable();
        names.dedup();
        assert_eq!(names.len(), Scenario::ALL.len());
    }
}
