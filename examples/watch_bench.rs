//! Measures `plateau watch` in a pseudo-terminal, for BENCHMARKS.md:
//! - append → screen latency: one row appended, time until the screen (read through a
//!   terminal emulator) shows the new row count;
//! - CPU of the whole process on a quiet log;
//! - bytes written to the terminal, and CPU, while 10 rows a second arrive;
//! - CPU with 100 runs in the overview, quiet and with every run appended once a second.
//!
//! `cargo build --release && cargo run --release --example watch_bench [SECONDS]`
//! (SECONDS per phase, default 60). Uses `target/release/plateau` (or `PLATEAU_BIN`).

use std::fs::OpenOptions;
use std::io::{Read, Write};
use std::path::{Path, PathBuf};
use std::sync::atomic::{AtomicU64, Ordering};
use std::sync::{Arc, Mutex};
use std::thread;
use std::time::{Duration, Instant};

use portable_pty::{native_pty_system, Child, CommandBuilder, PtySize};

use plateau::scenario::{write_log, LogStyle, Scenario, ScenarioSpec};

type Error = Box<dyn std::error::Error>;

struct Watch {
    child: Box<dyn Child + Send + Sync>,
    bytes: Arc<AtomicU64>,
    screen: Arc<Mutex<vt100::Parser>>,
    /// (time, rows shown) each time the shown row count changed.
    rows: Arc<Mutex<Vec<(Instant, u64)>>>,
    _master: Box<dyn portable_pty::MasterPty + Send>,
}

fn rows_on(screen: &vt100::Screen) -> Option<u64> {
    let text = screen.contents();
    let line = text.lines().find(|l| l.contains("│ rows"))?;
    line.split("│ rows")
        .nth(1)?
        .trim()
        .replace(' ', "")
        .parse()
        .ok()
}

impl Watch {
    fn start(bin: &Path, args: &[&str], dir: &Path, cols: u16, lines: u16) -> Result<Watch, Error> {
        let pair = native_pty_system().openpty(PtySize {
            rows: lines,
            cols,
            pixel_width: 0,
            pixel_height: 0,
        })?;
        let mut cmd = CommandBuilder::new(bin);
        cmd.args(args);
        cmd.cwd(dir);
        cmd.env("TERM", "xterm-256color");
        let child = pair.slave.spawn_command(cmd)?;
        drop(pair.slave);
        let mut reader = pair.master.try_clone_reader()?;
        let bytes = Arc::new(AtomicU64::new(0));
        let screen = Arc::new(Mutex::new(vt100::Parser::new(lines, cols, 0)));
        let rows = Arc::new(Mutex::new(Vec::new()));
        {
            let (bytes, screen, rows) = (bytes.clone(), screen.clone(), rows.clone());
            thread::spawn(move || {
                let mut buf = [0u8; 65536];
                let mut last = None;
                while let Ok(n) = reader.read(&mut buf) {
                    if n == 0 {
                        return;
                    }
                    let now = Instant::now();
                    bytes.fetch_add(n as u64, Ordering::Relaxed);
                    let Ok(mut s) = screen.lock() else { return };
                    s.process(&buf[..n]);
                    let shown = rows_on(s.screen());
                    if shown.is_some() && shown != last {
                        last = shown;
                        if let (Ok(mut r), Some(v)) = (rows.lock(), shown) {
                            r.push((now, v));
                        }
                    }
                }
            });
        }
        Ok(Watch {
            child,
            bytes,
            screen,
            rows,
            _master: pair.master,
        })
    }

    fn cpu_seconds(&self) -> f64 {
        let Some(pid) = self.child.process_id() else {
            return 0.0;
        };
        let stat = std::fs::read_to_string(format!("/proc/{pid}/stat")).unwrap_or_default();
        let after = stat.rsplit_once(')').map(|(_, r)| r).unwrap_or("");
        let fields: Vec<&str> = after.split_whitespace().collect();
        // utime and stime are fields 14 and 15 of the line; 12 and 13 after the name.
        let ticks: f64 = [11, 12]
            .iter()
            .filter_map(|&i| fields.get(i).and_then(|f| f.parse::<f64>().ok()))
            .sum();
        // SAFETY: sysconf only reads a constant.
        let hz = unsafe { libc::sysconf(libc::_SC_CLK_TCK) } as f64;
        ticks / hz
    }

    fn shown_rows(&self) -> Option<u64> {
        self.screen.lock().ok().and_then(|s| rows_on(s.screen()))
    }

    fn wait_rows(&self, want: u64, limit: Duration) -> Option<Instant> {
        let deadline = Instant::now() + limit;
        while Instant::now() < deadline {
            if let Some(t) = self
                .rows
                .lock()
                .ok()
                .and_then(|r| r.iter().find(|(_, v)| *v >= want).map(|(t, _)| *t))
            {
                return Some(t);
            }
            thread::sleep(Duration::from_millis(1));
        }
        None
    }

    fn stop(mut self) {
        let _ = self.child.kill();
        let _ = self.child.wait();
    }
}

fn log_lines(rows: u64, seed: u64) -> Vec<String> {
    let mut spec = ScenarioSpec::new(Scenario::Equilibration, LogStyle::Whitespace, rows);
    spec.seed = seed;
    let mut text = Vec::new();
    let _ = write_log(&spec, &mut text);
    String::from_utf8_lossy(&text)
        .lines()
        .map(|l| format!("{l}\n"))
        .collect()
}

fn append(path: &Path, text: &str) -> Result<(), Error> {
    let mut f = OpenOptions::new().append(true).open(path)?;
    f.write_all(text.as_bytes())?;
    f.flush()?;
    Ok(())
}

fn percentile(sorted: &[f64], p: f64) -> f64 {
    let i = ((sorted.len() as f64 - 1.0) * p).round() as usize;
    sorted.get(i).copied().unwrap_or(f64::NAN)
}

fn main() -> Result<(), Error> {
    let secs: u64 = std::env::args()
        .nth(1)
        .and_then(|s| s.parse().ok())
        .unwrap_or(60);
    let bin = std::env::var_os("PLATEAU_BIN")
        .map(PathBuf::from)
        .unwrap_or_else(|| Path::new(env!("CARGO_MANIFEST_DIR")).join("target/release/plateau"));
    let dir = tempfile::tempdir()?;
    let phase = Duration::from_secs(secs);

    // One run: latency, idle CPU, 10 rows a second.
    let lines = log_lines(2000 + 40 + 12 * secs + 100, 7);
    let header = lines.iter().take_while(|l| l.starts_with('#')).count();
    let path = dir.path().join("md.log");
    std::fs::write(&path, lines[..header + 2000].concat())?;
    let w = Watch::start(&bin, &["watch", "md.log"], dir.path(), 80, 24)?;
    if w.wait_rows(2000, Duration::from_secs(30)).is_none() {
        return Err("the first 2000 rows did not reach the screen".into());
    }
    thread::sleep(Duration::from_secs(2));
    let mut next = header + 2000;
    let mut latencies = Vec::new();
    let mut state = 0x2545_F491_4F6C_DD1Du64;
    for _ in 0..40 {
        state ^= state << 13;
        state ^= state >> 7;
        state ^= state << 17;
        thread::sleep(Duration::from_millis(300 + state % 900));
        let want = w.shown_rows().unwrap_or(0) + 1;
        let t0 = Instant::now();
        append(&path, &lines[next])?;
        next += 1;
        match w.wait_rows(want, Duration::from_secs(5)) {
            Some(t) => latencies.push(t.saturating_duration_since(t0).as_secs_f64() * 1e3),
            None => println!("a row did not reach the screen within 5 s"),
        }
    }
    latencies.sort_by(f64::total_cmp);
    println!(
        "append -> screen, file events ({} samples): median {:.1} ms, p90 {:.1} ms, max {:.1} ms",
        latencies.len(),
        percentile(&latencies, 0.5),
        percentile(&latencies, 0.9),
        percentile(&latencies, 1.0)
    );

    // Quiet log: CPU and bytes over the phase (the "last row" clock ticks once a second
    // for the first minute, then once a minute).
    let (c0, b0) = (w.cpu_seconds(), w.bytes.load(Ordering::Relaxed));
    thread::sleep(phase);
    let (c1, b1) = (w.cpu_seconds(), w.bytes.load(Ordering::Relaxed));
    println!(
        "quiet log, {secs} s: {:.3} % of a core, {:.0} bytes/s to the terminal",
        (c1 - c0) / secs as f64 * 100.0,
        (b1 - b0) as f64 / secs as f64
    );

    // 10 rows a second.
    let (c0, b0) = (w.cpu_seconds(), w.bytes.load(Ordering::Relaxed));
    let start = Instant::now();
    let mut k = 0u32;
    while start.elapsed() < phase && next < lines.len() {
        append(&path, &lines[next])?;
        next += 1;
        k += 1;
        let due = start + Duration::from_millis(100 * u64::from(k));
        thread::sleep(due.saturating_duration_since(Instant::now()));
    }
    let took = start.elapsed().as_secs_f64();
    let (c1, b1) = (w.cpu_seconds(), w.bytes.load(Ordering::Relaxed));
    println!(
        "10 rows/s, {took:.0} s: {:.0} bytes/s to the terminal, {:.2} % of a core",
        (b1 - b0) as f64 / took,
        (c1 - c0) / took * 100.0
    );
    w.stop();

    // 100 runs in the overview.
    let many = dir.path().join("many");
    std::fs::create_dir(&many)?;
    let mut paths = Vec::new();
    let mut runs_lines = Vec::new();
    for i in 0..100u64 {
        let l = log_lines(2000 + secs + 10, 100 + i);
        let h = l.iter().take_while(|x| x.starts_with('#')).count();
        let p = many.join(format!("run{i:03}.log"));
        std::fs::write(&p, l[..h + 2000].concat())?;
        paths.push(p);
        runs_lines.push((l, h + 2000));
    }
    let w = Watch::start(&bin, &["watch", "many/*.log"], dir.path(), 120, 40)?;
    // Wait until every run is read and analysed: the process goes quiet.
    let t = Instant::now();
    let mut last = w.cpu_seconds();
    loop {
        thread::sleep(Duration::from_secs(1));
        let now = w.cpu_seconds();
        let settled = now - last < 0.02;
        last = now;
        if settled || t.elapsed() > Duration::from_secs(300) {
            break;
        }
    }
    println!(
        "100 runs of 2000 rows read and analysed: {:.1} s wall, {:.1} s CPU",
        t.elapsed().as_secs_f64() - 1.0,
        w.cpu_seconds()
    );
    let (c0, b0) = (w.cpu_seconds(), w.bytes.load(Ordering::Relaxed));
    thread::sleep(phase);
    let (c1, b1) = (w.cpu_seconds(), w.bytes.load(Ordering::Relaxed));
    println!(
        "100 quiet runs, {secs} s: {:.2} % of a core, {:.0} bytes/s",
        (c1 - c0) / secs as f64 * 100.0,
        (b1 - b0) as f64 / secs as f64
    );
    let (c0, b0) = (w.cpu_seconds(), w.bytes.load(Ordering::Relaxed));
    let start = Instant::now();
    let mut second = 0u64;
    while start.elapsed() < phase {
        for (p, (l, next)) in paths.iter().zip(runs_lines.iter_mut()) {
            if let Some(line) = l.get(*next) {
                append(p, line)?;
                *next += 1;
            }
        }
        second += 1;
        let due = start + Duration::from_secs(second);
        thread::sleep(due.saturating_duration_since(Instant::now()));
    }
    let took = start.elapsed().as_secs_f64();
    let (c1, b1) = (w.cpu_seconds(), w.bytes.load(Ordering::Relaxed));
    println!(
        "100 runs, each appended once a second, {took:.0} s: {:.2} % of a core, {:.0} bytes/s",
        (c1 - c0) / took * 100.0,
        (b1 - b0) as f64 / took
    );
    w.stop();
    Ok(())
}
