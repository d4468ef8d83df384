//! Running one scheduler command to its end, with a time limit.

use std::ffi::OsStr;
use std::io::Read;
use std::process::{Command, ExitStatus, Stdio};
use std::thread;
use std::time::{Duration, Instant};

use super::SchedulerError;

/// What a finished command printed, and how it exited.
#[derive(Debug, Clone)]
pub struct Captured {
    pub status: ExitStatus,
    pub stdout: String,
    pub stderr: String,
}

impl Captured {
    /// The standard output of a command that succeeded; its failure otherwise.
    pub fn into_stdout(self, program: &str) -> Result<String, SchedulerError> {
        if self.status.success() {
            Ok(self.stdout)
        } else {
            Err(SchedulerError::Failed {
                program: program.to_string(),
                status: self.status.to_string(),
                stderr: self.stderr,
            })
        }
    }
}

/// Runs `program` with `args` (no shell, standard input closed) and waits for it at most
/// `limit`; a command still running then is ended and reported as timed out. Output that
/// is not UTF-8 is read lossily.
pub fn run_captured<S: AsRef<OsStr>>(
    program: &OsStr,
    args: &[S],
    limit: Duration,
) -> Result<Captured, SchedulerError> {
    let name = program.to_string_lossy().into_owned();
    let mut command = Command::new(program);
    command
        .args(args)
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    crate::follow::detach(&mut command);
    let mut child = command.spawn().map_err(|source| SchedulerError::Start {
        program: name.clone(),
        source,
    })?;
    let stdout = child.stdout.take().map(reader_thread);
    let stderr = child.stderr.take().map(reader_thread);
    let deadline = Instant::now() + limit;
    let mut pause = Duration::from_millis(1);
    let status = loop {
        match child.try_wait() {
            Ok(Some(status)) => break status,
            Ok(None) if Instant::now() >= deadline => {
                let _ = child.kill();
                let _ = child.wait();
                return Err(SchedulerError::TimedOut {
                    program: name,
                    after: limit,
                });
            }
            Ok(None) => {
                thread::sleep(pause);
                pause = (pause * 2).min(Duration::from_millis(50));
            }
            Err(source) => {
                let _ = child.kill();
                return Err(SchedulerError::Start {
                    program: name,
                    source,
                });
            }
        }
    };
    let collect = |h: Option<thread::JoinHandle<Vec<u8>>>| {
        h.and_then(|h| h.join().ok())
            .map(|b| String::from_utf8_lossy(&b).into_owned())
            .unwrap_or_default()
    };
    Ok(Captured {
        status,
        stdout: collect(stdout),
        stderr: collect(stderr),
    })
}

fn reader_thread<R: Read + Send + 'static>(mut reader: R) -> thread::JoinHandle<Vec<u8>> {
    thread::spawn(move || {
        let mut bytes = Vec::new();
        // A read error leaves what was read so far.
        let _ = reader.read_to_end(&mut bytes);
        bytes
    })
}

#[cfg(all(test, unix))]
mod tests {
    use super::*;

    #[test]
    fn captures_output_and_status() {
        let c = run_captured(
            OsStr::new("sh"),
            &["-c", "echo out; echo err >&2; exit 4"],
            Duration::from_secs(30),
        )
        .unwrap();
        assert_eq!((c.stdout.as_str(), c.stderr.as_str()), ("out\n", "err\n"));
        assert_eq!(c.status.code(), Some(4));
        let e = c.into_stdout("sh").unwrap_err().to_string();
        assert!(e.contains("err"), "{e}");
    }

    #[test]
    fn a_command_over_its_time_is_ended() {
        let e =
            run_captured(OsStr::new("sleep"), &["1000"], Duration::from_millis(100)).unwrap_err();
        assert!(matches!(e, SchedulerError::TimedOut { .. }), "{e}");
    }

    #[test]
    fn a_missing_program_is_named() {
        let e = run_captured(
            OsStr::new("/nonexistent/plateau-no-such-program"),
            &[] as &[&str],
            Duration::from_secs(5),
        )
        .unwrap_err();
        assert!(e.to_string().contains("plateau-no-such-program"), "{e}");
    }
}
