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

fn edit_certificate(cert: &Path, edit: impl FnOnce(&mut Value)) {
    let text = std::fs::read_to_string(cert).unwrap();
    let mut doc: Value = serde_json::from_str(&text).unwrap();
    edit(&mut doc);
    std::fs::write(cert, serde_json::to_string_pretty(&doc).unwrap()).unwrap();
}

/// Issue 23, item 1: every field is recomputed, so a forged headline, split or an
/// added key is drift named by its path.
#[test]
fn forged_headline_splits_and_added_keys_are_drift_named_by_path() {
    let (dir, cert) = certified_folder();
    edit_certificate(&cert, |doc| {
        assert_eq!(doc["summary"]["gate"], "fail");
        doc["summary"]["gate"] = "pass".into();
        doc["summary"]["claims_certified"] = 3.into();
        let splits = doc["splits"].as_array_mut().unwrap();
        assert!(!splits.is_empty());
        for split in splits {
            split["comparisons_left"] = 100000.into();
        }
        doc["runs"][3]["extra_key"] = "forged".into();
        doc["certificate"]["signed_by"] = "nobody".into();
        doc["reviewed"] = true.into();
    });
    let (code, report) = verify(dir.path());
    assert_eq!(code, 1, "{report}");
    let kinds = drift_kinds(&report);
    for subject in [
        "summary.gate",
        "summary.claims_certified",
        "splits[0].comparisons_left",
        "reviewed",
        "certificate.signed_by",
    ] {
        assert!(
            kinds.iter().any(|(_, s)| s == subject),
            "{subject}: {kinds:?}"
        );
    }
    let details: Vec<&str> = report["drift"]
        .as_array()
        .unwrap()
        .iter()
        .filter(|d| d["kind"] == "run_changed")
        .map(|d| d["detail"].as_str().unwrap())
        .collect();
    assert!(
        details.iter().any(|d| d.contains("runs[3].extra_key")),
        "{details:?}"
    );
    // Each forged split is named.
    let splits = kinds
        .iter()
        .filter(|(k, s)| k == "field_changed" && s.ends_with("].comparisons_left"))
        .count();
    assert!(splits >= 2, "{kinds:?}");
}

/// Copies the certified folder (logs and certificate) to a new folder.
fn copy_of(dir: &Path) -> tempfile::TempDir {
    let copy = tempfile::tempdir().unwrap();
    std::fs::create_dir(copy.path().join("logs")).unwrap();
    for name in ["logs/demo.csv", "logs/worked.csv", "audit.cert.json"] {
        std::fs::copy(dir.join(name), copy.path().join(name)).unwrap();
    }
    copy
}

/// Issue 23, item 2: verify reads the reviewer's copy beside the certificate, never the
/// folder the audit ran in, and says which folder it read.
#[test]
fn verify_reads_the_copy_beside_the_certificate() {
    let (dir, _) = certified_folder();
    let copy = copy_of(dir.path());
    let log = copy.path().join("logs/worked.csv");
    let text = std::fs::read_to_string(&log).unwrap();
    std::fs::write(&log, text.replacen(",68,", ",69,", 1)).unwrap();
    // Run from elsewhere: the certificate's folder decides, not the working folder.
    let output = gapcert_in(
        dir.path(),
        &[
            "verify",
            copy.path().join("audit.cert.json").to_str().unwrap(),
        ],
    );
    assert_eq!(output.status.code(), Some(1), "{}", common::stdout(&output));
    let text = common::stdout(&output);
    assert!(
        text.contains("input_changed") && text.contains("logs/worked.csv"),
        "{text}"
    );
    let copy_folder = std::fs::canonicalize(copy.path()).unwrap();
    assert!(text.contains(&copy_folder.display().to_string()), "{text}");
    // With the original gone, nothing is looked up there: a file missing in the copy
    // is missing.
    std::fs::remove_file(copy.path().join("logs/demo.csv")).unwrap();
    drop(dir);
    let output = gapcert_in(
        copy.path(),
        &["verify", "audit.cert.json", "--format", "json"],
    );
    assert_eq!(output.status.code(), Some(1));
    let report: Value = serde_json::from_slice(&output.stdout).unwrap();
    let kinds = drift_kinds(&report);
    assert!(
        kinds.contains(&("input_missing".into(), "logs/demo.csv".into())),
        "{kinds:?}"
    );
}

/// `--root DIR` reads the inputs from DIR instead, and says so.
#[test]
fn root_names_the_folder_to_verify() {
    let (dir, _) = certified_folder();
    let copy = copy_of(dir.path());
    let log = copy.path().join("logs/worked.csv");
    let text = std::fs::read_to_string(&log).unwrap();
    std::fs::write(&log, text.replacen(",68,", ",69,", 1)).unwrap();
    // The copy's certificate checked against the untouched original.
    let output = gapcert_in(
        copy.path(),
        &[
            "verify",
            "audit.cert.json",
            "--root",
            dir.path().to_str().unwrap(),
        ],
    );
    assert_eq!(output.status.code(), Some(0), "{}", common::stdout(&output));
    let original = std::fs::canonicalize(dir.path()).unwrap();
    assert!(
        common::stdout(&output).contains(&original.display().to_string()),
        "{}",
        common::stdout(&output)
    );
}

/// Issue 24, item 9: a certificate cannot make verify read files outside its folder.
#[test]
fn paths_leading_out_of_the_certificate_folder_are_refused() {
    for (paths, root) in [
        (vec!["/etc/passwd"], "."),
        (vec!["logs", "../elsewhere/logs"], "."),
        (vec!["logs"], "../.."),
    ] {
        let (dir, cert) = certified_folder();
        edit_certificate(&cert, |doc| {
            doc["certificate"]["paths"] = serde_json::json!(paths);
            doc["certificate"]["root"] = root.into();
        });
        let output = gapcert_in(dir.path(), &["verify", "audit.cert.json"]);
        assert_eq!(output.status.code(), Some(2), "{paths:?} {root}");
        let err = common::stderr(&output);
        assert!(
            err.contains("refusing to read") && err.contains("--root"),
            "{err}"
        );
        assert!(output.stdout.is_empty());
    }
}

/// Issue 24, item 10: an editor that saves with a byte-order mark does not break it.
#[test]
fn a_certificate_saved_with_a_byte_order_mark_verifies() {
    let (dir, cert) = certified_folder();
    let mut bytes = vec![0xEF, 0xBB, 0xBF];
    bytes.extend(std::fs::read(&cert).unwrap());
    std::fs::write(&cert, bytes).unwrap();
    let (code, report) = verify(dir.path());
    assert_eq!(code, 0, "{report}");
}

/// Certificates of format 1 recorded the absolute folder of the audit; they still
/// verify, from their own folder.
#[test]
fn format_1_certificates_still_verify() {
    let (dir, cert) = certified_folder();
    edit_certificate(&cert, |doc| {
        let section = doc["certificate"].as_object_mut().unwrap();
        section.insert("format".into(), "gapcert-certificate/1".into());
        section.remove("root");
        section.insert("working_dir".into(), "/nowhere/that/exists".into());
    });
    let (code, report) = verify(dir.path());
    assert_eq!(code, 0, "{report}");
}

/// A certificate written in a subfolder records the folder the audit ran in relative to
/// its own (`..`); the inputs then lie outside the certificate's folder, so verify reads
/// them only when `--root` names that folder (here after moving both together).
#[test]
fn a_certificate_in_a_subfolder_needs_root_to_read_inputs_outside_it() {
    let (dir, _) = certified_folder();
    std::fs::create_dir(dir.path().join("reports")).unwrap();
    let output = gapcert_in(
        dir.path(),
        &[
            "audit",
            "logs/worked.csv",
            "--certificate",
            "reports/worked.cert.json",
            "-q",
        ],
    );
    assert_eq!(output.status.code(), Some(1), "{}", common::stderr(&output));
    let cert: Value = serde_json::from_str(
        &std::fs::read_to_string(dir.path().join("reports/worked.cert.json")).unwrap(),
    )
    .unwrap();
    assert_eq!(cert["certificate"]["root"], "..");
    assert!(cert["certificate"].get("working_dir").is_none());
    let moved = tempfile::tempdir().unwrap();
    std::fs::create_dir_all(moved.path().join("logs")).unwrap();
    std::fs::create_dir_all(moved.path().join("reports")).unwrap();
    for name in ["logs/worked.csv", "reports/worked.cert.json"] {
        std::fs::copy(dir.path().join(name), moved.path().join(name)).unwrap();
    }
    drop(dir);
    // The inputs lie outside the certificate's folder: read only when --root says so.
    let output = gapcert_in(moved.path(), &["verify", "reports/worked.cert.json"]);
    assert_eq!(output.status.code(), Some(2), "{}", common::stdout(&output));
    let err = common::stderr(&output);
    assert!(
        err.contains("`logs/worked.csv`") && err.contains("--root"),
        "{err}"
    );
    let output = gapcert_in(
        moved.path(),
        &["verify", "reports/worked.cert.json", "--root", "."],
    );
    assert_eq!(output.status.code(), Some(0), "{}", common::stdout(&output));
}

/// Drift lines quote the certificate, which anyone can edit: an escape sequence
/// planted in it does not reach the terminal.
#[test]
fn drift_lines_carry_no_escape_sequences() {
    let (dir, cert) = certified_folder();
    edit_certificate(&cert, |doc| {
        doc["reviewer"] = "\u{1b}]8;;https://example.invalid\u{7}approved\u{1b}[0m".into();
        doc["\u{1b}[31mkey"] = 1.into();
    });
    let output = gapcert_in(dir.path(), &["verify", "audit.cert.json"]);
    assert_eq!(output.status.code(), Some(1));
    let text = common::stdout(&output);
    assert!(
        text.contains("reviewer") && text.contains("approved"),
        "{text}"
    );
    assert!(
        !text.contains('\u{1b}') && !text.contains('\u{7}'),
        "{text:?}"
    );
}

/// Absolute paths inside the folder the audit ran in are written relative to it, so a
/// copy of the folder verifies (and an edited copy drifts).
#[test]
fn absolute_paths_inside_the_audit_folder_are_written_relative() {
    let dir = tempfile::tempdir().unwrap();
    let folder = std::fs::canonicalize(dir.path()).unwrap();
    std::fs::create_dir(folder.join("logs")).unwrap();
    std::fs::copy(
        common::root().join("fixtures/worked/runs.csv"),
        folder.join("logs/worked.csv"),
    )
    .unwrap();
    std::fs::copy(
        common::root().join("fixtures/worked/claims.csv"),
        folder.join("claims.csv"),
    )
    .unwrap();
    let logs = folder.join("logs");
    let claims = folder.join("claims.csv");
    let output = gapcert_in(
        &folder,
        &[
            "audit",
            logs.to_str().unwrap(),
            "--claims",
            claims.to_str().unwrap(),
            "--certificate",
            "audit.cert.json",
            "-q",
        ],
    );
    assert_eq!(output.status.code(), Some(1), "{}", common::stderr(&output));
    let text = std::fs::read_to_string(folder.join("audit.cert.json")).unwrap();
    assert!(
        !text.contains(&folder.display().to_string()),
        "an absolute path is left in the certificate"
    );
    let cert: Value = serde_json::from_str(&text).unwrap();
    assert_eq!(cert["certificate"]["paths"], serde_json::json!(["logs"]));
    assert_eq!(cert["inputs"][0]["path"], "logs/worked.csv");
    assert_eq!(
        cert["settings"]["claims"],
        serde_json::json!(["claims.csv"])
    );
    let copy = tempfile::tempdir().unwrap();
    std::fs::create_dir(copy.path().join("logs")).unwrap();
    for name in ["logs/worked.csv", "claims.csv", "audit.cert.json"] {
        std::fs::copy(folder.join(name), copy.path().join(name)).unwrap();
    }
    let verified = gapcert_in(copy.path(), &["verify", "audit.cert.json"]);
    assert_eq!(
        verified.status.code(),
        Some(0),
        "{}",
        common::stdout(&verified)
    );
    let log = copy.path().join("logs/worked.csv");
    let edited = std::fs::read_to_string(&log)
        .unwrap()
        .replacen(",68,", ",69,", 1);
    std::fs::write(&log, edited).unwrap();
    let drift = gapcert_in(copy.path(), &["verify", "audit.cert.json"]);
    assert_eq!(drift.status.code(), Some(1), "{}", common::stdout(&drift));
}

/// A value of the wrong type in a certificate is named with the line and column it
/// is on (read from the text: an error from the parsed value has neither).
#[test]
fn a_type_error_in_a_certificate_names_its_line() {
    let (dir, cert) = certified_folder();
    let text = std::fs::read_to_string(&cert).unwrap();
    let mut lines: Vec<String> = text.lines().map(str::to_string).collect();
    let at = lines
        .iter()
        .enumerate()
        .filter(|(_, line)| line.trim_start().starts_with("\"holdout_n\": "))
        .nth(3)
        .map(|(at, _)| at)
        .expect("a fourth run");
    let indent = &lines[at][..lines[at].find('"').unwrap()];
    lines[at] = format!("{indent}\"holdout_n\": \"many\",");
    std::fs::write(&cert, lines.join("\n")).unwrap();
    let output = gapcert_in(dir.path(), &["verify", "audit.cert.json"]);
    assert_eq!(output.status.code(), Some(2));
    let err = common::stderr(&output);
    assert!(
        err.contains(&format!("line {}", at + 1)),
        "line {}: {err}",
        at + 1
    );
}
