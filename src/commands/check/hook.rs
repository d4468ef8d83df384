//! What `check` does with each alert besides printing it: `--on-alert CMD` (a command run
//! with the alert in environment variables, rate-limited), `--alert-log FILE` (one JSON line
//! per alert, appended) and `--bell`.
//!
//! Safety: the command line is the user's own option text, split into words here by simple
//! shell-like rules (quotes and backslashes only; no variables, globs, substitutions or
//! operators). It is run directly, without a shell, unless the user writes `sh -c ...`
//! themselves. Nothing from the log (column names, messages, values) is ever put into the
//! command line: it reaches the command only through the `PLATEAU_ALERT_*` environment
//! variables.

use std::collections::VecDeque;
use std::fs::{File, OpenOptions};
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::process::{Child, Command, Stdio};
use std::time::{Duration, Instant};

use serde::{Deserialize, Serialize};

use crate::alert::Alert;
use crate::report::AlertRecord;

/// At most this many `--on-alert` runs ...
pub const HOOK_MAX_RUNS: usize = 10;
/// ... within this sliding window. Alerts beyond the limit are not passed to the command;
/// they are counted and reported on standard error (they are still printed and logged).
pub const HOOK_WINDOW: Duration = Duration::from_secs(60);

/// Splits the user's `--on-alert` text into words (see [`split_command`]).
pub fn split_words(text: &str) -> Result<Vec<String>, String> {
    split_command(text, "--on-alert")
}

/// Splits a command given as one option value (`option` names it in errors) into words:
/// blanks separate words; `'...'` keeps text literally; `"..."` keeps text with `\"`,
/// `\\`, `\$` and `` \` `` unescaped; a backslash outside quotes keeps the next
/// character. Nothing is expanded (no variables, globs, substitutions or operators).
pub fn split_command(text: &str, option: &str) -> Result<Vec<String>, String> {
    let mut words = Vec::new();
    let mut word = String::new();
    let mut in_word = false;
    let mut chars = text.chars();
    while let Some(c) = chars.next() {
        match c {
            ' ' | '\t' | '\n' => {
                if in_word {
                    words.push(std::mem::take(&mut word));
                    in_word = false;
                }
            }
            '\'' => {
                in_word = true;
                loop {
                    match chars.next() {
                        Some('\'') => break,
                        Some(x) => word.push(x),
                        None => return Err(format!("unclosed ' quote in {option}")),
                    }
                }
            }
            '"' => {
                in_word = true;
                loop {
                    match chars.next() {
                        Some('"') => break,
                        Some('\\') => match chars.next() {
                            Some(x @ ('"' | '\\' | '$' | '`')) => word.push(x),
                            Some(x) => {
                                word.push('\\');
                                word.push(x);
                            }
                            None => return Err(format!("unclosed \" quote in {option}")),
                        },
                        Some(x) => word.push(x),
                        None => return Err(format!("unclosed \" quote in {option}")),
                    }
                }
            }
            '\\' => {
                in_word = true;
                match chars.next() {
                    Some(x) => word.push(x),
                    None => return Err(format!("{option} ends with a lone backslash")),
                }
            }
            other => {
                in_word = true;
                word.push(other);
            }
        }
    }
    if in_word {
        words.push(word);
    }
    if words.is_empty() {
        return Err(format!("{option} needs a command"));
    }
    Ok(words)
}

/// The environment variables an alert is passed in: each value one line, with control
/// characters from the log escaped as everywhere else ([`crate::text::escape_control`]),
/// so that a hook writing them to a one-line format or a terminal stays safe. `job` is the
/// id of the batch job whose log raised it (`PLATEAU_ALERT_JOB`, empty otherwise).
pub fn alert_environment(
    alert: &Alert,
    file: &str,
    job: Option<&str>,
) -> Vec<(&'static str, String)> {
    raw_environment(alert, file, job)
        .into_iter()
        .map(|(k, v)| (k, crate::text::escape_control(&v).into_owned()))
        .collect()
}

fn raw_environment(alert: &Alert, file: &str, job: Option<&str>) -> Vec<(&'static str, String)> {
    let num = |v: Option<f64>| {
        v.map(|x| {
            crate::report::number::non_finite_text(x)
                .map(str::to_string)
                .unwrap_or_else(|| format!("{x}"))
        })
        .unwrap_or_default()
    };
    vec![
        ("PLATEAU_ALERT_KIND", alert.kind.name().to_string()),
        ("PLATEAU_ALERT_SEVERITY", alert.severity.name().to_string()),
        (
            "PLATEAU_ALERT_COLUMN",
            alert.column.clone().unwrap_or_default(),
        ),
        (
            "PLATEAU_ALERT_ROW",
            alert.row.map(|r| r.to_string()).unwrap_or_default(),
        ),
        (
            "PLATEAU_ALERT_LINE",
            alert.line.map(|r| r.to_string()).unwrap_or_default(),
        ),
        ("PLATEAU_ALERT_TIME", num(alert.time)),
        ("PLATEAU_ALERT_VALUE", num(alert.value)),
        ("PLATEAU_ALERT_LATEST", num(alert.latest)),
        ("PLATEAU_ALERT_PEAK", num(alert.peak)),
        ("PLATEAU_ALERT_UNIT", alert.unit.clone().unwrap_or_default()),
        ("PLATEAU_ALERT_MESSAGE", alert.message.clone()),
        ("PLATEAU_ALERT_FILE", file.to_string()),
        ("PLATEAU_ALERT_JOB", job.unwrap_or_default().to_string()),
    ]
}

/// What happened when an alert was passed to the command.
#[derive(Debug)]
pub enum HookOutcome {
    /// The command was started.
    Started,
    /// Skipped by the rate limit.
    RateLimited,
    /// The command could not be started.
    Failed(io::Error),
}

/// Runs the user's command for alerts, rate-limited, never waiting on it while following.
#[derive(Debug)]
pub struct AlertHook {
    argv: Vec<String>,
    recent: VecDeque<Instant>,
    running: Vec<Child>,
    /// Alerts skipped by the rate limit.
    pub skipped: u64,
}

impl AlertHook {
    /// A hook from the user's option text.
    pub fn new(command_text: &str) -> Result<AlertHook, String> {
        Ok(AlertHook {
            argv: split_words(command_text)?,
            recent: VecDeque::new(),
            running: Vec::new(),
            skipped: 0,
        })
    }

    /// The words the command runs as.
    pub fn argv(&self) -> &[String] {
        &self.argv
    }

    /// Starts the command for `alert` unless the rate limit says no. `now` is passed in so
    /// the limit can be tested without a clock.
    pub fn fire(
        &mut self,
        alert: &Alert,
        file: &str,
        job: Option<&str>,
        now: Instant,
    ) -> HookOutcome {
        while self
            .recent
            .front()
            .is_some_and(|t| now.saturating_duration_since(*t) >= HOOK_WINDOW)
        {
            self.recent.pop_front();
        }
        if self.recent.len() >= HOOK_MAX_RUNS {
            self.skipped += 1;
            return HookOutcome::RateLimited;
        }
        self.recent.push_back(now);
        let Some((program, args)) = self.argv.split_first() else {
            return HookOutcome::Failed(io::Error::other("empty command"));
        };
        let mut cmd = Command::new(program);
        cmd.args(args).stdin(Stdio::null());
        for (k, v) in alert_environment(alert, file, job) {
            cmd.env(k, v);
        }
        match cmd.spawn() {
            Ok(child) => {
                self.running.push(child);
                HookOutcome::Started
            }
            Err(e) => HookOutcome::Failed(e),
        }
    }

    /// Collects finished commands; returns a message for each that failed.
    pub fn reap(&mut self) -> Vec<String> {
        let mut failures = Vec::new();
        let mut still = Vec::new();
        for mut child in self.running.drain(..) {
            match child.try_wait() {
                Ok(Some(status)) if !status.success() => {
                    failures.push(format!("--on-alert command exited with {status}"));
                }
                Ok(Some(_)) => {}
                Ok(None) => still.push(child),
                Err(e) => failures.push(format!("--on-alert command: {e}")),
            }
        }
        self.running = still;
        failures
    }

    /// Waits up to `limit` for the running commands (at the end of `check`); returns the
    /// failures. Commands still running after that are left alone.
    pub fn finish(&mut self, limit: Duration) -> Vec<String> {
        let start = Instant::now();
        let mut failures = Vec::new();
        loop {
            failures.extend(self.reap());
            if self.running.is_empty() || start.elapsed() >= limit {
                break;
            }
            std::thread::sleep(Duration::from_millis(20));
        }
        failures
    }
}

/// One line of the `--alert-log` file: the alert, the file it is about and, for a batch
/// job's log, the job's id.
#[derive(Debug, Clone, PartialEq, Serialize, Deserialize)]
pub struct AlertLogLine {
    pub file: String,
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub job: Option<String>,
    #[serde(flatten)]
    pub alert: AlertRecord,
}

/// Appends alerts as JSON lines to a file (created if missing, never truncated).
#[derive(Debug)]
pub struct AlertLog {
    path: PathBuf,
    file: File,
}

impl AlertLog {
    /// Opens `path` for appending.
    pub fn open(path: &Path) -> io::Result<AlertLog> {
        let file = OpenOptions::new().create(true).append(true).open(path)?;
        Ok(AlertLog {
            path: path.to_path_buf(),
            file,
        })
    }

    /// Appends one alert (`job`: the batch job whose log raised it).
    pub fn append(&mut self, alert: &Alert, source: &str, job: Option<&str>) -> io::Result<()> {
        let line = AlertLogLine {
            file: source.to_string(),
            job: job.map(str::to_string),
            alert: AlertRecord::from(alert),
        };
        let mut text = serde_json::to_string(&line).map_err(io::Error::other)?;
        text.push('\n');
        self.file.write_all(text.as_bytes())?;
        self.file.flush()
    }

    /// The log's path.
    pub fn path(&self) -> &Path {
        &self.path
    }
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::alert::{AlertKind, Severity};

    #[test]
    fn words_split_like_a_simple_shell_without_expansion() {
        assert_eq!(
            split_words("notify-send 'run alert' \"a \\\"b\\\"\" c\\ d $(x)").unwrap(),
            vec!["notify-send", "run alert", "a \"b\"", "c d", "$(x)"]
        );
        assert_eq!(
            split_words("sh -c 'echo \"$PLATEAU_ALERT_KIND\" >> log'").unwrap(),
            vec!["sh", "-c", "echo \"$PLATEAU_ALERT_KIND\" >> log"]
        );
        assert!(split_words("  ").is_err());
        assert!(split_words("a 'b").is_err());
    }

    #[test]
    fn rate_limit_allows_a_burst_then_skips_until_the_window_passes() {
        let mut hook = AlertHook::new("true").unwrap();
        let alert = Alert::new(AlertKind::Spike, Severity::Warning, "m");
        let t0 = Instant::now();
        for i in 0..HOOK_MAX_RUNS {
            assert!(matches!(
                hook.fire(&alert, "f", None, t0 + Duration::from_millis(i as u64)),
                HookOutcome::Started | HookOutcome::Failed(_)
            ));
        }
        assert!(matches!(
            hook.fire(&alert, "f", None, t0 + Duration::from_secs(1)),
            HookOutcome::RateLimited
        ));
        assert_eq!(hook.skipped, 1);
        assert!(!matches!(
            hook.fire(&alert, "f", None, t0 + HOOK_WINDOW + Duration::from_secs(1)),
            HookOutcome::RateLimited
        ));
        hook.finish(Duration::from_secs(5));
    }

    #[test]
    fn environment_carries_every_field() {
        let mut a = Alert::new(AlertKind::Nonfinite, Severity::Critical, "x; y");
        a.column = Some("temp".into());
        a.row = Some(3);
        a.value = Some(f64::NAN);
        let env = alert_environment(&a, "run.log", Some("4321_7"));
        let get = |k: &str| env.iter().find(|(n, _)| *n == k).map(|(_, v)| v.clone());
        assert_eq!(get("PLATEAU_ALERT_KIND").as_deref(), Some("nonfinite"));
        assert_eq!(get("PLATEAU_ALERT_VALUE").as_deref(), Some("nan"));
        assert_eq!(get("PLATEAU_ALERT_ROW").as_deref(), Some("3"));
        assert_eq!(get("PLATEAU_ALERT_MESSAGE").as_deref(), Some("x; y"));
        assert_eq!(get("PLATEAU_ALERT_FILE").as_deref(), Some("run.log"));
        assert_eq!(get("PLATEAU_ALERT_JOB").as_deref(), Some("4321_7"));
        let env = alert_environment(&a, "run.log", None);
        let get = |k: &str| env.iter().find(|(n, _)| *n == k).map(|(_, v)| v.clone());
        assert_eq!(get("PLATEAU_ALERT_JOB").as_deref(), Some(""));
    }

    #[test]
    fn environment_values_are_one_line_and_inert() {
        let mut a = Alert::new(AlertKind::Spike, Severity::Warning, "a\nb\r\u{1b}[2J");
        a.column = Some("t\u{1b}]0;x\u{7}".into());
        a.unit = Some("K\n".into());
        let env = alert_environment(&a, "dir\nrun.log", None);
        for (k, v) in &env {
            assert!(!v.chars().any(crate::text::needs_escape), "{k}={v:?}");
        }
        let get = |k: &str| env.iter().find(|(n, _)| *n == k).map(|(_, v)| v.clone());
        assert_eq!(
            get("PLATEAU_ALERT_MESSAGE").as_deref(),
            Some("a\\nb\\r\\x1b[2J")
        );
        assert_eq!(
            get("PLATEAU_ALERT_COLUMN").as_deref(),
            Some("t\\x1b]0;x\\x07")
        );
        assert_eq!(get("PLATEAU_ALERT_FILE").as_deref(), Some("dir\\nrun.log"));
    }

    #[test]
    fn alert_log_lines_parse_back() {
        let dir = tempfile::tempdir().unwrap();
        let path = dir.path().join("alerts.jsonl");
        let mut log = AlertLog::open(&path).unwrap();
        let mut a = Alert::new(AlertKind::Runaway, Severity::Critical, "grows");
        a.value = Some(f64::INFINITY);
        log.append(&a, "a.log", None).unwrap();
        log.append(&a, "b.log", Some("88")).unwrap();
        let text = std::fs::read_to_string(&path).unwrap();
        let lines: Vec<AlertLogLine> = text
            .lines()
            .map(|l| serde_json::from_str(l).unwrap())
            .collect();
        assert_eq!(lines.len(), 2);
        assert_eq!(lines[1].file, "b.log");
        assert_eq!(lines[1].job.as_deref(), Some("88"));
        assert_eq!(lines[0].job, None);
        // No job: no key at all (lines of earlier versions read the same).
        assert!(!text.lines().next().unwrap().contains("\"job\""));
        assert_eq!(lines[0].alert.kind, AlertKind::Runaway);
        assert_eq!(lines[0].alert.value, Some(f64::INFINITY));
    }
}
