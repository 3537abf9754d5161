//! Helpers shared by the integration tests: running the binary, reading CSV and JSON.
#![allow(dead_code)]

use std::collections::HashMap;
use std::path::{Path, PathBuf};
use std::process::{Command, Output};

/// The crate root (where fixtures/ lives).
pub fn root() -> PathBuf {
    PathBuf::from(env!("CARGO_MANIFEST_DIR"))
}

/// Runs gapcert with `args` from the crate root.
pub fn gapcert(args: &[&str]) -> Output {
    Command::new(env!("CARGO_BIN_EXE_gapcert"))
        .args(args)
        .current_dir(root())
        .env("NO_COLOR", "1")
        .output()
        .expect("run gapcert")
}

pub fn stdout(output: &Output) -> String {
    String::from_utf8_lossy(&output.stdout).to_string()
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
    let text = std::fs::read_to_string(path).expect("read csv");
    let mut records = parse_csv(&text);
    let header = records.remove(0);
    records
        .into_iter()
        .filter(|r| !(r.len() == 1 && r[0].is_empty()))
        .map(|r| header.iter().cloned().zip(r).collect())
        .collect()
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
