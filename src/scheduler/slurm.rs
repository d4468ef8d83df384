//! Slurm: `squeue --me` with an explicit format, `srun --overlap` steps on a job's node.
//!
//! The jobs are asked for with `--noheader` and [`SQUEUE_FORMAT`]: seven fields joined by
//! [`SQUEUE_SEPARATOR`] (the ASCII unit separator, a byte no job name or folder name holds
//! in practice, while `|`, `,`, `:` and spaces all occur in job names). The working
//! directory comes last. A line with another field count, a job id that is not a number
//! or a working directory that is not absolute is skipped and reported with its line
//! number; empty lines are ignored.
//!
//! A file on the job's node is read through a step attached to the running job:
//! `srun --overlap --jobid=ID --nodes=1 --ntasks=1 --nodelist=NODE --job-name=plateau-read
//! tail -c +N -F -- PATH`. `--overlap` lets the step share the job's resources, so it
//! starts even when the job uses all of them; the step ends with the job.

use std::ffi::OsString;
use std::path::{Path, PathBuf};
use std::time::{Duration, SystemTime};

use super::exec::run_captured;
use super::{
    listing_command, tail_command, BadLine, Job, JobId, JobState, Listing, Scheduler,
    SchedulerError,
};
use crate::follow::CommandSpec;

/// The separator between the fields of `squeue`'s answer (ASCII unit separator).
pub const SQUEUE_SEPARATOR: char = '\u{1f}';

/// `squeue --format`: numeric job id (`%A`, one per array element), the id shown to users
/// (`%i`, `123_4` for arrays), state (`%T`), time used (`%M`), batch host (`%B`), name
/// (`%j`), working directory (`%Z`).
pub const SQUEUE_FORMAT: &str = "%A\u{1f}%i\u{1f}%T\u{1f}%M\u{1f}%B\u{1f}%j\u{1f}%Z";

const FIELDS: usize = 7;

/// How long a `squeue` may take before it is given up (Slurm's own message timeout is
/// 10 s by default, and it retries).
const QUERY_LIMIT: Duration = Duration::from_secs(60);

/// The Slurm scheduler, through its commands on `PATH` (or given paths).
#[derive(Debug, Clone)]
pub struct Slurm {
    squeue: OsString,
    srun: OsString,
}

impl Default for Slurm {
    fn default() -> Self {
        Self::new()
    }
}

impl Slurm {
    /// Slurm through `squeue` and `srun` found on `PATH`.
    pub fn new() -> Self {
        Self::with_programs("squeue", "srun")
    }

    /// Slurm through the given `squeue` and `srun` (a site's wrappers, tests).
    pub fn with_programs(squeue: impl Into<OsString>, srun: impl Into<OsString>) -> Self {
        Self {
            squeue: squeue.into(),
            srun: srun.into(),
        }
    }

    fn squeue(&self, args: &[&str]) -> Result<super::Captured, SchedulerError> {
        run_captured(&self.squeue, args, QUERY_LIMIT)
    }

    /// `srun` arguments that run `words` as a one-task step of `job` on its batch node.
    fn step(&self, job: &Job, step_name: &str, words: Vec<OsString>) -> CommandSpec {
        let mut args: Vec<OsString> = vec![
            "--overlap".into(),
            format!("--jobid={}", job.id).into(),
            "--nodes=1".into(),
            "--ntasks=1".into(),
        ];
        if let Some(node) = &job.node {
            args.push(format!("--nodelist={node}").into());
        }
        args.push(format!("--job-name={step_name}").into());
        args.extend(words);
        CommandSpec::new(self.srun.clone(), args)
    }
}

impl Scheduler for Slurm {
    fn name(&self) -> &str {
        "slurm"
    }

    fn jobs(&self, now: SystemTime) -> Result<Listing, SchedulerError> {
        let format = format!("--format={SQUEUE_FORMAT}");
        let out = self
            .squeue(&["--me", "--states=all", "--noheader", &format])?
            .into_stdout("squeue")?;
        Ok(parse_squeue(&out, now))
    }

    fn state_of(&self, job: &JobId) -> Result<Option<JobState>, SchedulerError> {
        let jobs = format!("--jobs={job}");
        let out = self.squeue(&[&jobs, "--states=all", "--noheader", "--format=%T"])?;
        if !out.status.success() {
            // A job purged from the controller's memory is "invalid" to squeue.
            if out.stderr.contains("Invalid job id") {
                return Ok(None);
            }
            return out.into_stdout("squeue").map(|_| None);
        }
        Ok(out
            .stdout
            .lines()
            .map(str::trim)
            .find(|l| !l.is_empty())
            .map(slurm_state))
    }

    fn follow_command(&self, job: &Job, path: &Path) -> CommandSpec {
        self.step(job, "plateau-read", tail_command(path))
    }

    fn list_command(&self, job: &Job, dir: &Path, depth: usize) -> CommandSpec {
        self.step(job, "plateau-list", listing_command(dir, depth))
    }
}

/// plateau's view of a Slurm job state (`squeue %T`, long form).
pub fn slurm_state(text: &str) -> JobState {
    let word = text.trim();
    match word {
        "RUNNING" | "RESIZING" => JobState::Running,
        "PENDING" | "CONFIGURING" | "REQUEUED" | "REQUEUE_FED" | "REQUEUE_HOLD"
        | "RESV_DEL_HOLD" => JobState::Pending,
        "SUSPENDED" | "STOPPED" => JobState::Suspended,
        "COMPLETING" | "SIGNALING" | "STAGE_OUT" => JobState::Ending,
        "COMPLETED" | "CANCELLED" | "FAILED" | "TIMEOUT" | "NODE_FAIL" | "PREEMPTED"
        | "BOOT_FAIL" | "DEADLINE" | "OUT_OF_MEMORY" | "SPECIAL_EXIT" | "REVOKED" => {
            JobState::Ended(word.to_ascii_lowercase().replace('_', "-"))
        }
        other => JobState::Other(other.to_ascii_lowercase()),
    }
}

/// Slurm's time used (`%M`): `S`, `M:SS`, `H:MM:SS` or `D-HH:MM:SS`; `None` when it is not
/// such a time (`INVALID`, empty).
pub fn parse_elapsed(text: &str) -> Option<Duration> {
    let text = text.trim();
    let (days, clock) = match text.split_once('-') {
        Some((d, rest)) => (d.parse::<u64>().ok()?, rest),
        None => (0, text),
    };
    let mut secs = 0u64;
    let parts: Vec<&str> = clock.split(':').collect();
    if parts.is_empty() || parts.len() > 3 {
        return None;
    }
    for part in parts {
        if part.is_empty() || !part.bytes().all(|b| b.is_ascii_digit()) {
            return None;
        }
        secs = secs
            .checked_mul(60)?
            .checked_add(part.parse::<u64>().ok()?)?;
    }
    Some(Duration::from_secs(
        days.checked_mul(86_400)?.checked_add(secs)?,
    ))
}

/// Reads `squeue --noheader --format=`[`SQUEUE_FORMAT`]. `now` turns the time used of a
/// running job into its start time. Bad lines are skipped and listed; empty lines ignored.
pub fn parse_squeue(text: &str, now: SystemTime) -> Listing {
    let mut listing = Listing::default();
    for (i, raw) in text.lines().enumerate() {
        let line = raw.trim_end_matches('\r');
        if line.trim().is_empty() {
            continue;
        }
        match parse_job(line, now) {
            Ok(job) => listing.jobs.push(job),
            Err(reason) => listing.bad_lines.push(BadLine {
                line: i + 1,
                reason,
            }),
        }
    }
    listing
}

fn parse_job(line: &str, now: SystemTime) -> Result<Job, String> {
    let fields: Vec<&str> = line.split(SQUEUE_SEPARATOR).collect();
    let [id, shown, state, elapsed, node, name, workdir] = fields.as_slice() else {
        return Err(format!(
            "{} fields where {FIELDS} were expected (is it squeue's answer to the format plateau asked for?)",
            fields.len()
        ));
    };
    let id = id.trim();
    if id.is_empty() || !id.bytes().all(|b| b.is_ascii_digit()) {
        return Err(format!("job id `{id}` is not a number"));
    }
    let workdir = PathBuf::from(workdir);
    if !workdir.is_absolute() {
        return Err(format!(
            "working directory `{}` is not an absolute path",
            workdir.display()
        ));
    }
    let state = slurm_state(state);
    let node = match node.trim() {
        "" | "n/a" | "(null)" | "None" => None,
        n => Some(n.to_string()),
    };
    let started = if matches!(state, JobState::Pending) {
        None
    } else {
        parse_elapsed(elapsed).and_then(|d| now.checked_sub(d))
    };
    let shown = shown.trim();
    Ok(Job {
        id: JobId(id.to_string()),
        shown_id: if shown.is_empty() { id } else { shown }.to_string(),
        name: name.to_string(),
        state,
        node,
        workdir,
        started,
    })
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::time::UNIX_EPOCH;

    fn t(secs: u64) -> SystemTime {
        UNIX_EPOCH + Duration::from_secs(secs)
    }

    fn line(fields: &[&str]) -> String {
        fields.join("\u{1f}")
    }

    #[test]
    fn elapsed_times() {
        assert_eq!(parse_elapsed("0:00"), Some(Duration::from_secs(0)));
        assert_eq!(parse_elapsed("5"), Some(Duration::from_secs(5)));
        assert_eq!(parse_elapsed("12:34"), Some(Duration::from_secs(754)));
        assert_eq!(parse_elapsed("1:02:03"), Some(Duration::from_secs(3723)));
        assert_eq!(
            parse_elapsed("2-03:04:05"),
            Some(Duration::from_secs(2 * 86_400 + 3 * 3600 + 4 * 60 + 5))
        );
        for bad in [
            "", "INVALID", "1:2:3:4", "a:00", "1-", "-1:00", "1::2", " : ",
        ] {
            assert_eq!(parse_elapsed(bad), None, "{bad:?}");
        }
    }

    #[test]
    fn states() {
        assert_eq!(slurm_state("RUNNING"), JobState::Running);
        assert_eq!(slurm_state("PENDING"), JobState::Pending);
        assert_eq!(slurm_state("CONFIGURING"), JobState::Pending);
        assert_eq!(slurm_state("SUSPENDED"), JobState::Suspended);
        assert_eq!(slurm_state("COMPLETING"), JobState::Ending);
        assert_eq!(
            slurm_state("OUT_OF_MEMORY"),
            JobState::Ended("out-of-memory".into())
        );
        assert_eq!(
            slurm_state("COMPLETED\n"),
            JobState::Ended("completed".into())
        );
        assert_eq!(slurm_state("WEIRD"), JobState::Other("weird".into()));
        assert!(slurm_state("TIMEOUT").is_over() && !slurm_state("TIMEOUT").is_running());
    }

    /// Running, pending and array jobs, a name with `|` and spaces, a folder with spaces.
    #[test]
    fn reads_the_jobs() {
        let text = [
            line(&[
                "101",
                "101",
                "RUNNING",
                "1:00",
                "node7",
                "heat stage|2",
                "/home/u/a b",
            ]),
            line(&["102", "102", "PENDING", "0:00", "n/a", "prod", "/home/u/p"]),
            line(&[
                "105",
                "104_1",
                "RUNNING",
                "0:05",
                "node8",
                "arr",
                "/scratch/u/x",
            ]),
        ]
        .join("\n");
        let listing = parse_squeue(&text, t(10_000));
        assert!(listing.bad_lines.is_empty(), "{:?}", listing.bad_lines);
        let jobs = listing.jobs;
        assert_eq!(jobs.len(), 3);
        assert_eq!(jobs[0].id, JobId("101".into()));
        assert_eq!(jobs[0].name, "heat stage|2");
        assert_eq!(jobs[0].workdir, PathBuf::from("/home/u/a b"));
        assert_eq!(jobs[0].node.as_deref(), Some("node7"));
        assert_eq!(jobs[0].started, Some(t(9_940)));
        assert_eq!(jobs[1].state, JobState::Pending);
        assert_eq!((jobs[1].node.as_deref(), jobs[1].started), (None, None));
        assert_eq!(
            (jobs[2].id.0.as_str(), jobs[2].shown_id.as_str()),
            ("105", "104_1")
        );
    }

    /// Empty and blank lines are ignored; malformed ones are skipped with their line number
    /// and reason, and the good lines around them are kept.
    #[test]
    fn malformed_and_empty_lines() {
        let good = line(&["7", "7", "RUNNING", "0:01", "n1", "ok", "/w"]);
        let text = [
            "".to_string(),
            good.clone(),
            "   ".to_string(),
            "squeue: error: Unable to contact slurm controller".to_string(),
            line(&[
                "7",
                "7",
                "RUNNING",
                "0:01",
                "n1",
                "name\u{1f}with separator",
                "/w",
            ]),
            line(&["x7", "7", "RUNNING", "0:01", "n1", "bad id", "/w"]),
            line(&["", "", "RUNNING", "0:01", "n1", "no id", "/w"]),
            line(&["8", "8", "RUNNING", "0:01", "n1", "relative", "w"]),
            line(&["9", "9", "RUNNING", "0:01", "n1", "cut"]),
            format!("{good}\r"),
            "\u{1f}\u{1f}\u{1f}\u{1f}\u{1f}\u{1f}".to_string(),
        ]
        .join("\n");
        let listing = parse_squeue(&text, t(100));
        assert_eq!(listing.jobs.len(), 2);
        assert_eq!(
            listing.jobs[0], listing.jobs[1],
            "CRLF line read like the other"
        );
        let bad: Vec<usize> = listing.bad_lines.iter().map(|b| b.line).collect();
        assert_eq!(bad, vec![4, 5, 6, 7, 8, 9, 11]);
        assert!(listing.bad_lines[0].reason.contains("1 fields"));
        assert!(listing.bad_lines[1].reason.contains("8 fields"));
        assert!(listing.bad_lines[2].reason.contains("not a number"));
        assert!(listing.bad_lines[4].reason.contains("absolute"));
    }

    #[test]
    fn nothing_at_all() {
        assert_eq!(parse_squeue("", t(0)), Listing::default());
        assert_eq!(parse_squeue("\n\n", t(0)), Listing::default());
    }

    /// Odd time used and unknown nodes do not reject a job.
    #[test]
    fn odd_but_readable_fields() {
        let text = line(&["3", "", "RUNNING", "INVALID", "(null)", "", "/w"]);
        let listing = parse_squeue(&text, t(100));
        let job = &listing.jobs[0];
        assert_eq!(job.shown_id, "3");
        assert_eq!((job.node.as_deref(), job.started), (None, None));
        assert_eq!(job.name, "");
    }

    #[test]
    fn step_commands() {
        let slurm = Slurm::new();
        let job = parse_squeue(
            &line(&["42", "42", "RUNNING", "0:01", "n3", "j", "/w"]),
            t(100),
        )
        .jobs
        .remove(0);
        let spec = slurm.follow_command(&job, Path::new("/w/md run.log"));
        assert_eq!(spec.program(), "srun");
        let args: Vec<String> = spec
            .args()
            .iter()
            .map(|a| a.to_string_lossy().into_owned())
            .collect();
        assert_eq!(
            args,
            [
                "--overlap",
                "--jobid=42",
                "--nodes=1",
                "--ntasks=1",
                "--nodelist=n3",
                "--job-name=plateau-read",
                "tail",
                "-c",
                "+{start-byte}",
                "-F",
                "--",
                "/w/md run.log"
            ]
        );
        assert!(spec.resumes());
        let list = slurm.list_command(&job, Path::new("/w"), 2);
        assert!(list.args().iter().any(|a| a == "find"));
        assert!(list.args().iter().any(|a| a == "2"));
    }
}
