//! Follower measurements for BENCHMARKS.md (not run in CI, not a test):
//!
//! - `latency-events`: time from an append to its `Data` event, with file events (inotify);
//! - `latency-poll`:   the same with forced polling (`--poll`, period `PLATEAU_POLL_MS`,
//!   default 1000 ms);
//! - `idle`:           CPU time of the follower threads on one quiet file over `PLATEAU_SECS`
//!   seconds (default 20);
//! - `many`:           CPU time of the follower threads with 100 files, each appended once a
//!   second, over `PLATEAU_SECS` seconds (`many-poll`: the same with forced polling);
//! - `neighbour`:      CPU time of the follower of one quiet file while another file in the
//!   same folder is written 1000 times a second.
//!
//! Run: `cargo bench --bench follow -- MODE...` (no mode: all), or `benches/follow_latency.sh`.
//! CPU time is read from `/proc/self/task/*/schedstat` (nanoseconds on CPU per thread; Linux).

use std::error::Error;
use std::fs::{self, OpenOptions};
use std::io::Write;
use std::path::Path;
use std::sync::mpsc::RecvTimeoutError;
use std::sync::Arc;
use std::thread;
use std::time::{Duration, Instant};

use plateau::follow::{FollowEvent, FollowOptions, FollowReceiver, FollowSet, SystemClock};

type Res<T> = Result<T, Box<dyn Error>>;

fn env_u64(name: &str, default: u64) -> u64 {
    std::env::var(name)
        .ok()
        .and_then(|v| v.parse().ok())
        .unwrap_or(default)
}

fn append(path: &Path, bytes: &[u8]) -> Res<()> {
    let mut f = OpenOptions::new().append(true).open(path)?;
    f.write_all(bytes)?;
    Ok(())
}

/// Waits for the next `Data` event; `None` on timeout.
fn next_data(rx: &FollowReceiver, limit: Duration) -> Res<Option<Instant>> {
    let deadline = Instant::now() + limit;
    loop {
        let left = deadline.saturating_duration_since(Instant::now());
        match rx.recv_timeout(left) {
            Ok((_, FollowEvent::Data { .. })) => return Ok(Some(Instant::now())),
            Ok(_) => {}
            Err(RecvTimeoutError::Timeout) => return Ok(None),
            Err(e) => return Err(e.into()),
        }
    }
}

fn summary(name: &str, mut v: Vec<Duration>) {
    v.sort_unstable();
    let n = v.len();
    if n == 0 {
        println!("{name}: no samples");
        return;
    }
    let at = |q: f64| {
        v.get(((n - 1) as f64 * q).round() as usize)
            .copied()
            .unwrap_or_default()
    };
    println!(
        "{name}: n={n} min={:.3?} median={:.3?} p95={:.3?} max={:.3?}",
        at(0.0),
        at(0.5),
        at(0.95),
        at(1.0)
    );
}

/// A small pseudo-random sequence (xorshift) so append times fall at varied phases.
struct Jitter(u64);
impl Jitter {
    fn next_ms(&mut self, max: u64) -> u64 {
        self.0 ^= self.0 << 13;
        self.0 ^= self.0 >> 7;
        self.0 ^= self.0 << 17;
        self.0 % max.max(1)
    }
}

fn latency(options: FollowOptions, name: &str, samples: usize, gap_ms: u64) -> Res<()> {
    let dir = tempfile::tempdir()?;
    let p = dir.path().join("run.log");
    fs::write(&p, b"step temp\n")?;
    let (mut set, rx) = FollowSet::start(options.clone(), Arc::new(SystemClock))?;
    set.add_path(&p)?;
    next_data(&rx, Duration::from_secs(10))?.ok_or("first data never came")?;
    let limit = options.poll_interval * 3 + Duration::from_secs(2);
    let mut jitter = Jitter(0x9E37_79B9_7F4A_7C15);
    let mut v = Vec::new();
    for i in 0..samples {
        thread::sleep(Duration::from_millis(jitter.next_ms(gap_ms)));
        let t0 = Instant::now();
        append(&p, format!("{i} 300.{i}\n").as_bytes())?;
        match next_data(&rx, limit)? {
            Some(t1) => v.push(t1 - t0),
            None => println!("{name}: sample {i} missed (no data within {limit:?})"),
        }
    }
    summary(name, v);
    set.stop();
    Ok(())
}

/// CPU nanoseconds of every thread of this process except `skip` (thread ids).
fn cpu_ns(skip: &[String]) -> Res<u64> {
    let mut total = 0;
    for entry in fs::read_dir("/proc/self/task")? {
        let entry = entry?;
        let tid = entry.file_name().to_string_lossy().into_owned();
        if skip.contains(&tid) {
            continue;
        }
        // The thread may have ended meanwhile.
        if let Ok(s) = fs::read_to_string(entry.path().join("schedstat")) {
            total += s
                .split_whitespace()
                .next()
                .and_then(|x| x.parse::<u64>().ok())
                .unwrap_or(0);
        }
    }
    Ok(total)
}

/// The id of the calling thread (Linux: `/proc/thread-self` links to `PID/task/TID`).
fn my_tid() -> Res<String> {
    let link = fs::read_link("/proc/thread-self")?;
    let name = link.file_name().ok_or("no thread id")?;
    Ok(name.to_string_lossy().into_owned())
}

/// Receives and discards events on its own thread; returns (its thread id, a counter).
fn drain(rx: FollowReceiver) -> Res<(String, Arc<std::sync::atomic::AtomicU64>)> {
    use std::sync::atomic::{AtomicU64, Ordering};
    let count = Arc::new(AtomicU64::new(0));
    let c = count.clone();
    let (tx, tid_rx) = std::sync::mpsc::channel();
    thread::spawn(move || {
        let _ = tx.send(my_tid().unwrap_or_default());
        while let Ok((_, e)) = rx.recv() {
            if let FollowEvent::Data { lines, .. } = e {
                c.fetch_add(lines, Ordering::Relaxed);
            }
        }
    });
    Ok((tid_rx.recv()?, count))
}

fn idle(secs: u64) -> Res<()> {
    let dir = tempfile::tempdir()?;
    let p = dir.path().join("quiet.log");
    fs::write(&p, b"step temp\n1 300\n")?;
    let (mut set, rx) = FollowSet::start(FollowOptions::default(), Arc::new(SystemClock))?;
    set.add_path(&p)?;
    let (consumer, _) = drain(rx)?;
    thread::sleep(Duration::from_millis(500));
    let skip = vec![my_tid()?, consumer];
    let c0 = cpu_ns(&skip)?;
    let t0 = Instant::now();
    thread::sleep(Duration::from_secs(secs));
    let used = cpu_ns(&skip)? - c0;
    let wall = t0.elapsed();
    println!(
        "idle, 1 quiet file, events + 1 s stat check: {:.3} ms CPU in {:.1} s = {:.4} % of a core",
        used as f64 / 1e6,
        wall.as_secs_f64(),
        used as f64 / wall.as_nanos() as f64 * 100.0
    );
    set.stop();
    Ok(())
}

fn many(secs: u64, force_poll: bool) -> Res<()> {
    use std::sync::atomic::Ordering;
    const FILES: usize = 100;
    let dir = tempfile::tempdir()?;
    let paths: Vec<_> = (0..FILES)
        .map(|i| dir.path().join(format!("run{i:03}.log")))
        .collect();
    for p in &paths {
        fs::write(p, b"step temp\n")?;
    }
    let options = FollowOptions {
        force_poll,
        ..FollowOptions::default()
    };
    let (mut set, rx) = FollowSet::start(options, Arc::new(SystemClock))?;
    for p in &paths {
        set.add_path(p)?;
    }
    let (consumer, count) = drain(rx)?;
    thread::sleep(Duration::from_millis(500));
    let before = count.load(Ordering::Relaxed);
    // This (writer) thread and the consumer are not counted.
    let skip = vec![my_tid()?, consumer];
    let c0 = cpu_ns(&skip)?;
    let t0 = Instant::now();
    let tick = Duration::from_secs(1) / FILES as u32;
    let mut written = 0u64;
    for s in 0..secs {
        for (i, p) in paths.iter().enumerate() {
            let due = t0 + Duration::from_secs(s) + tick * i as u32;
            thread::sleep(due.saturating_duration_since(Instant::now()));
            append(p, format!("{s} 300.{i}\n").as_bytes())?;
            written += 1;
        }
    }
    let used = cpu_ns(&skip)? - c0;
    let wall = t0.elapsed();
    // Let the last appends arrive before counting.
    let deadline = Instant::now() + Duration::from_secs(5);
    while count.load(Ordering::Relaxed) - before < written && Instant::now() < deadline {
        thread::sleep(Duration::from_millis(10));
    }
    println!(
        "{FILES} files each appended once a second ({}): {:.1} ms CPU in {:.1} s = {:.3} % of a core; rows {} of {written}",
        if force_poll { "polling 1 s" } else { "events" },
        used as f64 / 1e6,
        wall.as_secs_f64(),
        used as f64 / wall.as_nanos() as f64 * 100.0,
        count.load(Ordering::Relaxed) - before,
    );
    set.stop();
    Ok(())
}

/// One quiet followed file while a sibling file in the same folder (say, a trajectory) is
/// appended 1000 times a second: the cost of watching the folder rather than the file.
fn neighbour(secs: u64) -> Res<()> {
    let dir = tempfile::tempdir()?;
    let p = dir.path().join("quiet.log");
    let noisy = dir.path().join("traj.bin");
    fs::write(&p, b"step temp\n")?;
    fs::write(&noisy, b"")?;
    let (mut set, rx) = FollowSet::start(FollowOptions::default(), Arc::new(SystemClock))?;
    set.add_path(&p)?;
    let (consumer, _) = drain(rx)?;
    thread::sleep(Duration::from_millis(500));
    let skip = vec![my_tid()?, consumer];
    let c0 = cpu_ns(&skip)?;
    let t0 = Instant::now();
    let mut f = OpenOptions::new().append(true).open(&noisy)?;
    let mut writes = 0u64;
    let tick = Duration::from_millis(1);
    while t0.elapsed() < Duration::from_secs(secs) {
        f.write_all(&[0u8; 256])?;
        writes += 1;
        thread::sleep((t0 + tick * writes as u32).saturating_duration_since(Instant::now()));
    }
    let used = cpu_ns(&skip)? - c0;
    let wall = t0.elapsed();
    println!(
        "1 quiet file, a neighbour in its folder written {writes} times: {:.1} ms CPU in {:.1} s = {:.3} % of a core",
        used as f64 / 1e6,
        wall.as_secs_f64(),
        used as f64 / wall.as_nanos() as f64 * 100.0
    );
    set.stop();
    Ok(())
}

fn main() -> Res<()> {
    let modes: Vec<String> = std::env::args()
        .skip(1)
        .filter(|a| !a.starts_with('-'))
        .collect();
    let want = |m: &str| modes.is_empty() || modes.iter().any(|x| x == m);
    let secs = env_u64("PLATEAU_SECS", 20);
    let poll_ms = env_u64("PLATEAU_POLL_MS", 1000);
    if want("latency-events") {
        // Heartbeat far away: only file events can deliver within the measured time.
        let options = FollowOptions {
            heartbeat: Duration::from_secs(3600),
            ..FollowOptions::default()
        };
        latency(options, "append -> data, file events", 200, 20)?;
    }
    if want("latency-poll") {
        let options = FollowOptions {
            force_poll: true,
            poll_interval: Duration::from_millis(poll_ms),
            ..FollowOptions::default()
        };
        let name = format!("append -> data, polling every {poll_ms} ms");
        latency(options, &name, 20, poll_ms)?;
    }
    if want("idle") {
        idle(secs)?;
    }
    if want("many") {
        many(secs, false)?;
    }
    if want("many-poll") {
        many(secs, true)?;
    }
    if want("neighbour") {
        neighbour(secs)?;
    }
    Ok(())
}
