//! Running an external module's command once: the request written to its
//! standard input, standard output and error collected, and the whole
//! exchange bounded by a timeout after which the command (and anything it
//! started) is killed.
//!
//! Owns the child process for the length of one call and nothing after it.

use std::io::{Read, Write};
use std::path::Path;
use std::process::{Child, Command, ExitStatus, Stdio};
use std::sync::mpsc;
use std::thread;
use std::time::{Duration, Instant};

use wait_timeout::ChildExt;

/// Most bytes read from standard output: a response is a page of JSON, so
/// anything far larger is a runaway module, not an answer.
pub const MAX_STDOUT_BYTES: u64 = 16 << 20;

/// Most bytes of standard error kept for messages.
pub const MAX_STDERR_BYTES: u64 = 64 << 10;

/// Environment variables passed through to a module; everything else is
/// left out so that a result cannot depend on a stray setting of the shell
/// that started packwright.
const PASSED_ENV: [&str; 6] = ["PATH", "HOME", "TMPDIR", "LANG", "LC_ALL", "SYSTEMROOT"];

/// What a finished command gave.
#[derive(Debug)]
pub struct Finished {
    /// How it ended.
    pub status: ExitStatus,
    /// Its standard output (at most [`MAX_STDOUT_BYTES`]).
    pub stdout: Vec<u8>,
    /// Its standard error (at most [`MAX_STDERR_BYTES`]).
    pub stderr: Vec<u8>,
}

/// Why a command gave no answer.
#[derive(Debug)]
pub enum Failure {
    /// It could not be started.
    Spawn(std::io::Error),
    /// It did not finish in time and was killed; what it wrote to standard
    /// error so far.
    Timeout {
        /// Its standard error up to the kill.
        stderr: Vec<u8>,
    },
}

/// Runs `program args` in `workdir`, writes `input` to its standard input
/// and waits at most `timeout` for it to exit and close its output.
pub fn run(
    program: &Path,
    args: &[String],
    workdir: &Path,
    input: &[u8],
    timeout: Duration,
) -> Result<Finished, Failure> {
    let mut command = Command::new(program);
    command
        .args(args)
        .current_dir(workdir)
        .env_clear()
        .stdin(Stdio::piped())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped());
    for name in PASSED_ENV {
        if let Some(value) = std::env::var_os(name) {
            command.env(name, value);
        }
    }
    // A Python module must not leave __pycache__ folders in the project.
    command.env("PYTHONDONTWRITEBYTECODE", "1");
    command.env(
        "PACKWRIGHT_PROTOCOL",
        crate::protocol::PROTOCOL_VERSION.to_string(),
    );
    #[cfg(unix)]
    {
        use std::os::unix::process::CommandExt;
        // Its own process group, so that a timeout kills whatever it started too.
        command.process_group(0);
    }
    let started = Instant::now();
    let mut child = command.spawn().map_err(Failure::Spawn)?;

    let stdin = child.stdin.take().expect("stdin is piped");
    let input = input.to_vec();
    // Written from a thread: a module that answers before reading all its
    // input must not block us, and one that never reads must not either.
    // A module that exits without reading gives a broken pipe, which is
    // its business: its exit status and output tell the story.
    thread::spawn(move || {
        let mut stdin = stdin;
        let _ = stdin.write_all(&input);
    });
    let stdout = collect(
        child.stdout.take().expect("stdout is piped"),
        MAX_STDOUT_BYTES,
    );
    let stderr = collect(
        child.stderr.take().expect("stderr is piped"),
        MAX_STDERR_BYTES,
    );

    let status = match child.wait_timeout(timeout) {
        Ok(Some(status)) => status,
        Ok(None) | Err(_) => return Err(stop(&mut child, &stderr)),
    };
    let remaining = timeout.saturating_sub(started.elapsed());
    // The command has exited, but something it started may still hold its
    // output open; that counts against the same timeout.
    let (Ok(stdout_bytes), Ok(stderr_bytes)) = (
        stdout.recv_timeout(remaining),
        stderr.recv_timeout(remaining.max(Duration::from_millis(50))),
    ) else {
        return Err(stop(&mut child, &stderr));
    };
    Ok(Finished {
        status,
        stdout: stdout_bytes,
        stderr: stderr_bytes,
    })
}

/// Reads a pipe to its end (or `limit` bytes) on a thread and sends the bytes.
fn collect(pipe: impl Read + Send + 'static, limit: u64) -> mpsc::Receiver<Vec<u8>> {
    let (send, receive) = mpsc::channel();
    thread::spawn(move || {
        let mut bytes = Vec::new();
        let mut limited = pipe.take(limit);
        let _ = limited.read_to_end(&mut bytes);
        // Drain the rest so that the module is not blocked writing.
        let _ = std::io::copy(&mut limited.into_inner(), &mut std::io::sink());
        let _ = send.send(bytes);
    });
    receive
}

/// Kills the command and its group after a timeout; returns the failure
/// with what standard error held.
fn stop(child: &mut Child, stderr: &mpsc::Receiver<Vec<u8>>) -> Failure {
    kill_group(child);
    let _ = child.kill();
    let _ = child.wait();
    let stderr = stderr
        .recv_timeout(Duration::from_millis(500))
        .unwrap_or_default();
    Failure::Timeout { stderr }
}

#[cfg(unix)]
fn kill_group(child: &Child) {
    let pid = rustix::process::Pid::from_child(child);
    // The group may already be gone; nothing to do then.
    let _ = rustix::process::kill_process_group(pid, rustix::process::Signal::KILL);
}

#[cfg(not(unix))]
fn kill_group(_child: &Child) {}

#[cfg(all(test, unix))]
mod tests {
    use super::*;

    fn sh(script: &str, timeout: Duration) -> Result<Finished, Failure> {
        run(
            Path::new("/bin/sh"),
            &["-c".to_string(), script.to_string()],
            Path::new("/"),
            b"ping\n",
            timeout,
        )
    }

    #[test]
    fn output_and_status_come_back() {
        let done = sh(
            "read line; echo \"got $line\"; echo oops >&2; exit 3",
            Duration::from_secs(5),
        )
        .expect("finishes");
        assert_eq!(done.stdout, b"got ping\n");
        assert_eq!(done.stderr, b"oops\n");
        assert_eq!(done.status.code(), Some(3));
    }

    #[test]
    fn a_hanging_command_and_its_children_are_killed() {
        let started = Instant::now();
        let result = sh(
            "echo started >&2; sleep 30 & sleep 30",
            Duration::from_millis(300),
        );
        match result {
            Err(Failure::Timeout { stderr }) => assert_eq!(stderr, b"started\n"),
            other => panic!("expected a timeout, got {other:?}"),
        }
        // The background sleep held stdout open; it must not keep us waiting.
        assert!(started.elapsed() < Duration::from_secs(10));
    }

    #[test]
    fn the_environment_is_pared_down() {
        std::env::var_os("PATH").expect("tests run with a PATH");
        let done = sh("env | sort", Duration::from_secs(5)).expect("finishes");
        let env = String::from_utf8(done.stdout).expect("utf-8");
        assert!(env.contains("PACKWRIGHT_PROTOCOL=1"));
        assert!(env.contains("PYTHONDONTWRITEBYTECODE=1"));
        assert!(!env.contains("CARGO_PKG_NAME"), "{env}");
    }
}
