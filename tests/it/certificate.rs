//! `--certificate` and `gapcert verify`: a certificate verifies unchanged, and every
//! kind of drift is detected and named (exit 1); an unreadable certificate exits 2.

use crate::common;
use std::path::{Path, PathBuf};
use std::process::Command;

use serde_json::Value;

fn gapcert_in(dir: &Path, args: &[&str]) -> std::process::Output {
    Command::new(crate::common::binary())
        .args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .output()
        .expect("run gapcert")
}

/// A folder with two logs copied from the fixtures, audited with a certificate.
fn certified_folder() -> (tempfile::TempDir, PathBuf) {
    let dir = tempfile::tempdir().unwrap();
    let logs = dir.path().join("logs");
    std::fs::create_dir(&logs).unwrap();
    std::fs::copy(
        common::root().join("fixtures/demo/runs.csv"),
        logs.join("demo.csv"),
    )
    .unwrap();
    std::fs::copy(
        common::root().join("fixtures/worked/runs.csv"),
        logs.join("worked.csv"),
    )
    .unwrap();
    let output = gapcert_in(
        dir.path(),
        &[
            "audit",
            "logs",
            "--certificate",
            "audit.cert.json",
            "--format",
            "json",
            "--output",
            "audit.json",
        ],
    );
    assert_eq!(output.status.code(), Some(1), "{}", common::stderr(&output));
    let cert = dir.path().join("audit.cert.json");
    assert!(cert.exists());
    (dir, cert)
}

fn verify(dir: &Path) -> (i32, Value) {
    let output = gapcert_in(dir, &["verify", "audit.cert.json", "--format", "json"]);
    let code = output.status.code().unwrap();
    let value = serde_json::from_slice(&output.stdout).unwrap_or(Value::Null);
    (code, value)
}

fn drift_kinds(report: &Value) -> Vec<(String, String)> {
    report["drift"]
        .as_array()
        .unwrap()
        .iter()
        .map(|d| {
            (
                d["kind"].as_str().unwrap().to_string(),
                d["subject"].as_str().unwrap().to_string(),
            )
        })
        .collect()
}

#[test]
fn certificate_holds_the_document_and_input_hashes() {
    let (_dir, cert) = certified_folder();
    let doc: Value = serde_json::from_str(&std::fs::read_to_string(cert).unwrap()).unwrap();
    for key in [
        "tool",
        "settings",
        "inputs",
        "runs",
        "summary",
        "certificate",
    ] {
        assert!(doc.get(key).is_some(), "{key}");
    }
    let inputs = doc["inputs"].as_array().unwrap();
    assert_eq!(inputs.len(), 2);
    for input in inputs {
        assert_eq!(input["sha256"].as_str().unwrap().len(), 64);
        assert!(input["size"].as_u64().unwrap() > 0);
    }
    // SHA-256 of the demo log, computed independently of gapcert (sha2 crate is the
    // implementation under test, so compare with the coreutils sha256sum).
    if let Ok(out) = Command::new("sha256sum")
        .arg(common::root().join("fixtures/demo/runs.csv"))
        .output()
    {
        let expected = String::from_utf8_lossy(&out.stdout)
            .split_whitespace()
            .next()
            .unwrap_or("")
            .to_string();
        let recorded = inputs
            .iter()
            .find(|i| i["path"].as_str().unwrap().ends_with("demo.csv"))
            .unwrap();
        assert_eq!(recorded["sha256"].as_str().unwrap(), expected);
    } else {
        common::cannot_run("sha256sum is not installed: the independent check of the SHA-256");
    }
}

#[test]
fn unchanged_certificate_verifies() {
    let (dir, _) = certified_folder();
    let (code, report) = verify(dir.path());
    assert_eq!(code, 0, "{report}");
    assert_eq!(report["verified"], true);
}

#[test]
fn one_edited_byte_is_detected_and_named() {
    let (dir, _) = certified_folder();
    let log = dir.path().join("logs/worked.csv");
    let mut bytes = std::fs::read(&log).unwrap();
    // Change 68 misclassified to 69 on the first data row.
    let text = String::from_utf8(bytes.clone()).unwrap();
    let at = text.find(",68,").unwrap() + 2;
    bytes[at] = b'9';
    std::fs::write(&log, bytes).unwrap();
    let (code, report) = verify(dir.path());
    assert_eq!(code, 1);
    let kinds = drift_kinds(&report);
    assert!(
        kinds.contains(&("input_changed".into(), "logs/worked.csv".into())),
        "{kinds:?}"
    );
    assert!(
        kinds
            .iter()
            .any(|(k, s)| k == "run_changed" && s == "wk-plane"),
        "{kinds:?}"
    );
}

#[test]
fn deleted_and_added_inputs_are_detected() {
    let (dir, _) = certified_folder();
    std::fs::remove_file(dir.path().join("logs/worked.csv")).unwrap();
    std::fs::copy(
        common::root().join("fixtures/edge/bom_crlf.csv"),
        dir.path().join("logs/new.csv"),
    )
    .unwrap();
    let (code, report) = verify(dir.path());
    assert_eq!(code, 1);
    let kinds = drift_kinds(&report);
    assert!(
        kinds.contains(&("input_missing".into(), "logs/worked.csv".into())),
        "{kinds:?}"
    );
    assert!(
        kinds.contains(&("input_added".into(), "logs/new.csv".into())),
        "{kinds:?}"
    );
    assert!(kinds.iter().any(|(k, _)| k == "run_missing"), "{kinds:?}");
}

#[test]
fn an_edited_setting_is_detected_and_named() {
    let (dir, cert) = certified_folder();
    let mut doc: Value = serde_json::from_str(&std::fs::read_to_string(&cert).unwrap()).unwrap();
    doc["settings"]["confidence"] = serde_json::json!(0.9);
    std::fs::write(&cert, serde_json::to_string_pretty(&doc).unwrap()).unwrap();
    let (code, report) = verify(dir.path());
    assert_eq!(code, 1);
    let kinds = drift_kinds(&report);
    assert!(
        kinds.contains(&("setting_edited".into(), "confidence".into())),
        "{kinds:?}"
    );
}

#[test]
fn an_edited_verdict_is_detected() {
    let (dir, cert) = certified_folder();
    let mut doc: Value = serde_json::from_str(&std::fs::read_to_string(&cert).unwrap()).unwrap();
    let runs = doc["runs"].as_array_mut().unwrap();
    let refuted = runs.iter_mut().find(|r| r["verdict"] == "refuted").unwrap();
    refuted["verdict"] = serde_json::json!("certified");
    std::fs::write(&cert, serde_json::to_string_pretty(&doc).unwrap()).unwrap();
    let (code, report) = verify(dir.path());
    assert_eq!(code, 1);
    let kinds = drift_kinds(&report);
    assert!(kinds.iter().any(|(k, _)| k == "runs_edited"), "{kinds:?}");
    assert!(kinds.iter().any(|(k, _)| k == "run_changed"), "{kinds:?}");
}

#[test]
fn a_different_tool_version_is_drift() {
    let (dir, cert) = certified_folder();
    let text = std::fs::read_to_string(&cert).unwrap();
    let mut doc: Value = serde_json::from_str(&text).unwrap();
    doc["tool"]["version"] = serde_json::json!("0.0.1");
    std::fs::write(&cert, serde_json::to_string_pretty(&doc).unwrap()).unwrap();
    let (code, report) = verify(dir.path());
    assert_eq!(code, 1);
    assert!(drift_kinds(&report)
        .iter()
        .any(|(k, _)| k == "tool_version"));
}

#[test]
fn unreadable_certificates_exit_2() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::write(dir.path().join("audit.cert.json"), "{ not json").unwrap();
    let output = gapcert_in(dir.path(), &["verify", "audit.cert.json"]);
    assert_eq!(output.status.code(), Some(2));
    assert!(common::stderr(&output).contains("not a gapcert certificate"));
    let output = gapcert_in(dir.path(), &["verify", "missing.json"]);
    assert_eq!(output.status.code(), Some(2));
    std::fs::write(dir.path().join("audit.cert.json"), "{\"tool\": 1}").unwrap();
    assert_eq!(
        gapcert_in(dir.path(), &["verify", "audit.cert.json"])
            .status
            .code(),
        Some(2)
    );
}

#[test]
fn demo_certificate_verifies() {
    let dir = tempfile::tempdir().unwrap();
    let output = gapcert_in(
        dir.path(),
        &["demo", "--certificate", "audit.cert.json", "--quiet"],
    );
    assert_eq!(output.status.code(), Some(0));
    let (code, report) = verify(dir.path());
    assert_eq!(code, 0, "{report}");
}
