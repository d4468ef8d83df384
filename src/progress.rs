//! A progress line on standard error while a whole file is read (`report`, `check`,
//! `columns`).
//!
//! [`Meter`] is told the bytes read so far (by [`crate::ingest::read_path_observed`]) and
//! draws one line, `reading FILE: 312 MiB of 1.2 GiB (26 %)`, rewritten in place with a
//! carriage return. It keeps quiet when standard error is not a terminal, until reading
//! has taken [`FIRST_AFTER`] (a small file is read before anything would be seen), and
//! between updates ([`EVERY`]): a few updates a second at most. When reading ends the line
//! is erased, so the command's own output starts on a clean line. The timing decisions are
//! a pure [`Throttle`], tested with made-up instants.

use std::io::{self, IsTerminal, Write};
use std::time::{Duration, Instant};

/// Reading shorter than this shows nothing.
pub const FIRST_AFTER: Duration = Duration::from_millis(300);

/// The shortest time between two updates of the line.
pub const EVERY: Duration = Duration::from_millis(250);

/// When to draw: not before `first_after` from the start, then at most once per `every`.
#[derive(Debug, Clone, Copy, PartialEq, Eq)]
pub struct Throttle {
    start: Instant,
    first_after: Duration,
    every: Duration,
    last: Option<Instant>,
}

impl Throttle {
    /// A throttle started at `start`.
    pub fn new(start: Instant, first_after: Duration, every: Duration) -> Throttle {
        Throttle {
            start,
            first_after,
            every,
            last: None,
        }
    }

    /// Whether to draw at `now`; when it says yes, the next yes is `every` later.
    pub fn due(&mut self, now: Instant) -> bool {
        let ready = match self.last {
            None => now.saturating_duration_since(self.start) >= self.first_after,
            Some(last) => now.saturating_duration_since(last) >= self.every,
        };
        if ready {
            self.last = Some(now);
        }
        ready
    }

    /// Whether it has said yes at least once (something is on screen to erase).
    pub fn drawn(&self) -> bool {
        self.last.is_some()
    }
}

/// A byte count for people: `512 B`, `3.4 KiB`, `312 MiB`, `1.2 GiB`.
pub fn bytes(n: u64) -> String {
    const UNITS: [&str; 5] = ["B", "KiB", "MiB", "GiB", "TiB"];
    let mut value = n as f64;
    let mut unit = 0;
    while value >= 1024.0 && unit + 1 < UNITS.len() {
        value /= 1024.0;
        unit += 1;
    }
    let name = UNITS.get(unit).copied().unwrap_or("B");
    if unit == 0 {
        format!("{n} B")
    } else if value < 10.0 {
        format!("{value:.1} {name}")
    } else {
        format!("{value:.0} {name}")
    }
}

/// The text of the line: what is read, how much, and the share of the whole when known.
pub fn line(what: &str, read: u64, total: Option<u64>) -> String {
    match total {
        Some(total) if total > 0 => {
            let percent = (read.min(total) as f64 / total as f64 * 100.0).floor();
            format!(
                "reading {what}: {} of {} ({percent:.0} %)",
                bytes(read),
                bytes(total)
            )
        }
        _ => format!("reading {what}: {}", bytes(read)),
    }
}

/// Erases the current line and returns the cursor to its start.
const ERASE: &str = "\r\x1b[2K";

/// The progress line of one file being read, drawn on `out`.
#[derive(Debug)]
pub struct Meter<W: Write> {
    out: Option<W>,
    what: String,
    throttle: Throttle,
}

impl Meter<io::Stderr> {
    /// A meter on standard error, quiet when standard error is not a terminal.
    pub fn stderr(what: &str) -> Meter<io::Stderr> {
        let err = io::stderr();
        let out = err.is_terminal().then_some(err);
        Meter::new(out, what, Instant::now())
    }
}

impl<W: Write> Meter<W> {
    /// A meter drawing on `out` (none: quiet), started at `start`.
    pub fn new(out: Option<W>, what: &str, start: Instant) -> Meter<W> {
        Meter {
            out,
            what: what.to_string(),
            throttle: Throttle::new(start, FIRST_AFTER, EVERY),
        }
    }

    /// `read` bytes of `total` (when known) are read now.
    pub fn observe(&mut self, read: u64, total: Option<u64>) {
        self.observe_at(Instant::now(), read, total);
    }

    /// As [`observe`](Self::observe) at a given instant.
    pub fn observe_at(&mut self, now: Instant, read: u64, total: Option<u64>) {
        let Some(out) = self.out.as_mut() else {
            return;
        };
        if !self.throttle.due(now) {
            return;
        }
        let text = format!("{ERASE}{}", line(&self.what, read, total));
        // A progress line that cannot be written is not worth failing the read for.
        if out
            .write_all(text.as_bytes())
            .and_then(|()| out.flush())
            .is_err()
        {
            self.out = None;
        }
    }

    /// Erases the line, if one was drawn (also done when dropped).
    pub fn finish(&mut self) {
        if let Some(mut out) = self.out.take() {
            if self.throttle.drawn() {
                let _ = out.write_all(ERASE.as_bytes()).and_then(|()| out.flush());
            }
        }
    }
}

impl<W: Write> Drop for Meter<W> {
    fn drop(&mut self) {
        self.finish();
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    fn ms(n: u64) -> Duration {
        Duration::from_millis(n)
    }

    #[test]
    fn throttle_waits_then_limits_the_rate() {
        let t0 = Instant::now();
        let mut t = Throttle::new(t0, ms(300), ms(250));
        assert!(!t.due(t0));
        assert!(!t.due(t0 + ms(299)));
        assert!(!t.drawn());
        assert!(t.due(t0 + ms(300)));
        assert!(t.drawn());
        // Not again within 250 ms of the last draw, then once.
        assert!(!t.due(t0 + ms(301)));
        assert!(!t.due(t0 + ms(549)));
        assert!(t.due(t0 + ms(550)));
        assert!(!t.due(t0 + ms(551)));
        // Calls every millisecond for ten seconds draw at most 4 a second (plus the first).
        let mut t = Throttle::new(t0, ms(300), ms(250));
        let draws = (0..10_000).filter(|&i| t.due(t0 + ms(i))).count();
        assert_eq!(draws, 39, "(10000 - 300) / 250 + 1");
    }

    #[test]
    fn byte_counts_read_naturally() {
        assert_eq!(bytes(0), "0 B");
        assert_eq!(bytes(1023), "1023 B");
        assert_eq!(bytes(1024), "1.0 KiB");
        assert_eq!(bytes(3 * 1024 * 1024 + 512 * 1024), "3.5 MiB");
        assert_eq!(bytes(312 * 1024 * 1024), "312 MiB");
        assert_eq!(bytes(1288490189), "1.2 GiB");
    }

    #[test]
    fn the_line_names_the_file_and_the_share() {
        assert_eq!(
            line("big.log", 256 << 20, Some(1 << 30)),
            "reading big.log: 256 MiB of 1.0 GiB (25 %)"
        );
        assert_eq!(line("-", 5 << 20, None), "reading -: 5.0 MiB");
        assert_eq!(line("e.log", 10, Some(0)), "reading e.log: 10 B");
    }

    /// A writer whose bytes the test can still read after the meter let go of it.
    #[derive(Clone, Default)]
    struct Shared(std::rc::Rc<std::cell::RefCell<Vec<u8>>>);

    impl Write for Shared {
        fn write(&mut self, buf: &[u8]) -> io::Result<usize> {
            self.0.borrow_mut().extend_from_slice(buf);
            Ok(buf.len())
        }
        fn flush(&mut self) -> io::Result<()> {
            Ok(())
        }
    }

    impl Shared {
        fn text(&self) -> String {
            String::from_utf8_lossy(&self.0.borrow()).into_owned()
        }
    }

    #[test]
    fn a_meter_draws_throttled_lines_and_erases_them() {
        let t0 = Instant::now();
        let out = Shared::default();
        let mut m = Meter::new(Some(out.clone()), "x.log", t0);
        m.observe_at(t0 + ms(100), 10, Some(100));
        assert_eq!(out.text(), "", "nothing before 300 ms");
        m.observe_at(t0 + ms(300), 30 << 20, Some(100 << 20));
        m.observe_at(t0 + ms(400), 40 << 20, Some(100 << 20));
        m.observe_at(t0 + ms(600), 60 << 20, Some(100 << 20));
        m.finish();
        // Finishing twice (and the drop) erases once.
        m.finish();
        drop(m);
        assert_eq!(
            out.text(),
            "\r\x1b[2Kreading x.log: 30 MiB of 100 MiB (30 %)\
             \r\x1b[2Kreading x.log: 60 MiB of 100 MiB (60 %)\
             \r\x1b[2K"
        );
    }

    #[test]
    fn a_quick_read_leaves_nothing_and_a_quiet_meter_writes_nothing() {
        let t0 = Instant::now();
        let out = Shared::default();
        let mut quick = Meter::new(Some(out.clone()), "x", t0);
        quick.observe_at(t0 + ms(10), 1, Some(1));
        drop(quick);
        assert_eq!(out.text(), "", "no line, nothing to erase");
        let mut quiet: Meter<Shared> = Meter::new(None, "x", t0);
        quiet.observe_at(t0 + ms(1000), 1, Some(2));
        drop(quiet);
        assert_eq!(out.text(), "");
    }
}
