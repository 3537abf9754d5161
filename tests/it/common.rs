//! Helpers shared by the integration tests: running the binary, reading CSV and JSON.
#![allow(dead_code)]

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The crate root (where fixtures/ lives).
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// The binary under test: this build's, or another named by `GAPCERT_BIN` (to show
/// that a new test fails on an older build, as the closing notes of issues report).
pub fn binary() -> PathBuf {
    std::env::var_os("GAPCERT_BIN")
        .map(PathBuf::from)
        .unwrap_or_else(|| PathBuf::from(env!("CARGO_BIN_EXE_gapcert")))
}

/// Whether the tests run under continuous integration: `CI` set to anything but empty,
/// `false` or `0` (CI services set `CI=true`).
pub fn under_ci() -> bool {
    std::env::var("CI").is_ok_and(|v| !v.is_empty() && v != "false" && v != "0")
}

/// Reports that a test, or one check of it, cannot run because `reason` (a tool, a
/// device, a folder) is missing. Under CI that is a failure: the CI image must provide
/// everything the tests need, and a test that passes without running hides the gap.
/// Elsewhere it prints a note and returns, and the caller skips what cannot run.
pub fn cannot_run(reason: &str) {
    if under_ci() {
        panic!("this test cannot run: {reason}; CI is set, so that is a failure, not a skip");
    }
    eprintln!("SKIPPED (cannot run here): {reason}");
}

/// Runs gapcert with `args` from the crate root.
pub fn gapcert(args: &[&str]) -> Output {
    Command::new(binary())
        .args(args)
        .current_dir(root())
        .env("NO_COLOR", "1")
        .output()
        .expect("run gapcert")
}

pub fn stdout(output: &Output) -> String {
    String::from_utf8_lossy(&output.stdout).to_string()
}

/// Runs gapcert in `dir`, without colours and 200 columns wide.
pub fn run_in(dir: &Path, args: &[&str]) -> Output {
    Command::new(binary())
        .args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .env("COLUMNS", "200")
        .output()
        .expect("run gapcert")
}

/// Bytes of an output as text (invalid UTF-8 replaced).
pub fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).to_string()
}

pub fn stderr(output: &Output) -> String {
    String::from_utf8_lossy(&output.stderr).to_string()
}

/// Runs gapcert and parses its standard output as one JSON document.
pub fn gapcert_json(args: &[&str]) -> (i32, serde_json::Value) {
    let output = gapcert(args);
    let code = output.status.code().unwrap_or(-1);
    let value = serde_json::from_slice(&output.stdout).unwrap_or_else(|error| {
        panic!(
            "gapcert {args:?} did not print JSON ({error}); exit {code}; stderr:\n{}",
            stderr(&output)
        )
    });
    (code, value)
}

/// A minimal RFC 4180 reader: header plus rows as maps.
pub fn read_csv(path: &Path) -> Vec<HashMap<String, String>> {
    parse_csv_text(&std::fs::read_to_string(path).expect("read csv"))
}

fn parse_csv(text: &str) -> Vec<Vec<String>> {
    let mut records = Vec::new();
    let mut record = Vec::new();
    let mut field = String::new();
    let mut quoted = false;
    let mut chars = text.chars().peekable();
    while let Some(ch) = chars.next() {
        if quoted {
            if ch == '"' {
                if chars.peek() == Some(&'"') {
                    field.push('"');
                    chars.next();
                } else {
                    quoted = false;
                }
            } else {
                field.push(ch);
            }
        } else {
            match ch {
                '"' => quoted = true,
                ',' => record.push(std::mem::take(&mut field)),
                '\r' => {}
                '\n' => {
                    record.push(std::mem::take(&mut field));
                    records.push(std::mem::take(&mut record));
                }
                _ => field.push(ch),
            }
        }
    }
    if !field.is_empty() || !record.is_empty() {
        record.push(field);
        records.push(record);
    }
    records
}

/// Relative-or-absolute closeness: |a − b| ≤ tol · max(1, |a|, |b|)... scaled for
/// small values so that 1e-9 means nine significant digits or 1e-9 absolute.
pub fn close(a: f64, b: f64, tolerance: f64) -> bool {
    (a - b).abs() <= tolerance * a.abs().max(b.abs()).max(1e-3)
}

/// How a child process ended, with everything it printed.
pub struct Finished {
    /// Exit code; `None` when killed by a signal or by the deadline.
    pub code: Option<i32>,
    /// The signal that ended it (Unix), if any.
    pub signal: Option<i32>,
    pub stdout: Vec<u8>,
    pub stderr: String,
    pub elapsed: std::time::Duration,
    /// The deadline passed and the process was killed.
    pub timed_out: bool,
}

impl Finished {
    /// Fails unless the process exited by itself with 0, 1 or 2, before the deadline,
    /// without a panic message.
    pub fn assert_no_crash(&self, what: &str) {
        let tail: String = self
            .stderr
            .chars()
            .rev()
            .take(2000)
            .collect::<Vec<_>>()
            .into_iter()
            .rev()
            .collect();
        assert!(
            !self.timed_out,
            "{what}: still running after {:?} (hang?); stderr tail:\n{tail}",
            self.elapsed
        );
        assert!(
            !self.stderr.contains("panicked"),
            "{what}: panicked; stderr tail:\n{tail}"
        );
        assert!(
            matches!(self.code, Some(0..=2)),
            "{what}: exit code {:?}, signal {:?}; stderr tail:\n{tail}",
            self.code,
            self.signal
        );
    }
}

/// Runs gapcert in `dir` with a deadline; the child is killed when the deadline passes.
/// Standard output and error are drained on threads so a large output cannot block.
pub fn gapcert_deadline(dir: &Path, args: &[&str], deadline: std::time::Duration) -> Finished {
    use std::io::Read;
    use std::process::Stdio;
    let started = std::time::Instant::now();
    let mut child = Command::new(binary())
        .args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .stdin(Stdio::null())
        .stdout(Stdio::piped())
        .stderr(Stdio::piped())
        .spawn()
        .expect("run gapcert");
    let mut out_pipe = child.stdout.take().expect("stdout pipe");
    let mut err_pipe = child.stderr.take().expect("stderr pipe");
    let out_thread = std::thread::spawn(move || {
        let mut bytes = Vec::new();
        let _ = out_pipe.read_to_end(&mut bytes);
        bytes
    });
    // Keep at most the last 1 MB of standard error (enough for any message).
    let err_thread = std::thread::spawn(move || {
        let mut kept: Vec<u8> = Vec::new();
        let mut buffer = [0u8; 1 << 16];
        while let Ok(read) = err_pipe.read(&mut buffer) {
            if read == 0 {
                break;
            }
            kept.extend_from_slice(&buffer[..read]);
            if kept.len() > 2 << 20 {
                kept.drain(..kept.len() - (1 << 20));
            }
        }
        kept
    });
    let mut timed_out = false;
    let status = loop {
        if let Some(status) = child.try_wait().expect("wait for gapcert") {
            break status;
        }
        if started.elapsed() > deadline {
            timed_out = true;
            let _ = child.kill();
            break child.wait().expect("wait for killed gapcert");
        }
        std::thread::sleep(std::time::Duration::from_millis(10));
    };
    let elapsed = started.elapsed();
    let stdout = out_thread.join().unwrap_or_default();
    let stderr = String::from_utf8_lossy(&err_thread.join().unwrap_or_default()).to_string();
    #[cfg(unix)]
    let signal = std::os::unix::process::ExitStatusExt::signal(&status);
    #[cfg(not(unix))]
    let signal = None;
    Finished {
        code: if timed_out { None } else { status.code() },
        signal,
        stdout,
        stderr,
        elapsed,
        timed_out,
    }
}

/// Parses CSV text (RFC 4180) into header-keyed rows, like [`read_csv`].
pub fn parse_csv_text(text: &str) -> Vec<HashMap<String, String>> {
    let mut records = parse_csv(text);
    let header = records.remove(0);
    records
        .into_iter()
        .filter(|r| !(r.len() == 1 && r[0].is_empty()))
        .map(|r| header.iter().cloned().zip(r).collect())
        .collect()
}

/// `n` with a comma every three digits (12,345,678), written here independently of
/// the crate's own formatter.
pub fn group(n: u64) -> String {
    let digits = n.to_string();
    let mut grouped = String::new();
    for (i, digit) in digits.chars().enumerate() {
        if i > 0 && (digits.len() - i) % 3 == 0 {
            grouped.push(',');
        }
        grouped.push(digit);
    }
    grouped
}
