//! Where arrival times come from. Tests inject a [`ManualClock`].

use std::fmt::Debug;
use std::sync::Mutex;
use std::time::{Duration, SystemTime};

/// A source of wall-clock time for the arrival stamps of data.
pub trait Clock: Send + Sync + Debug {
    /// The current wall-clock time.
    fn now(&self) -> SystemTime;
}

/// The system's wall clock.
#[derive(Debug, Clone, Copy, Default)]
pub struct SystemClock;

impl Clock for SystemClock {
    fn now(&self) -> SystemTime {
        SystemTime::now()
    }
}

/// A clock that only moves when told to (for tests).
#[derive(Debug)]
pub struct ManualClock {
    now: Mutex<SystemTime>,
}

impl ManualClock {
    /// A clock showing `start`.
    pub fn new(start: SystemTime) -> Self {
        Self {
            now: Mutex::new(start),
        }
    }

    /// Sets the time shown.
    pub fn set(&self, t: SystemTime) {
        if let Ok(mut now) = self.now.lock() {
            *now = t;
        }
    }

    /// Moves the time shown forward by `d`.
    pub fn advance(&self, d: Duration) {
        if let Ok(mut now) = self.now.lock() {
            *now += d;
        }
    }
}

impl Clock for ManualClock {
    fn now(&self) -> SystemTime {
        match self.now.lock() {
            Ok(now) => *now,
            Err(poisoned) => *poisoned.into_inner(),
        }
    }
}
