//! Hostile files (issue 24, items 1, 2, 3 and 8): a log's content cannot drop it from
//! the gate, a link planted in an output folder is never followed, temporaries of
//! killed audits are removed by the next audit, and no escape sequence reaches the
//! terminal through an error message. Every file is generated in a temporary
//! directory; the runs in them are invented. Each test failed on the build before
//! (`GAPCERT_BIN=<older gapcert> cargo test --release --test it hostile`).

use std::path::{Path, PathBuf};
use std::process::{Command, Output};

use crate::common::{binary, root};

/// Runs gapcert in `dir`.
fn run_in(dir: &Path, args: &[&str]) -> Output {
    Command::new(binary())
        .args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .env("COLUMNS", "200")
        .output()
        .expect("run gapcert")
}

fn text(bytes: &[u8]) -> String {
    String::from_utf8_lossy(bytes).to_string()
}

fn write(dir: &Path, name: &str, contents: &str) -> PathBuf {
    let path = dir.join(name);
    std::fs::create_dir_all(path.parent().unwrap()).unwrap();
    std::fs::write(&path, contents).unwrap();
    path
}

/// A run whose claim (99 %) its held-out errors (100 of 1,000) refute: any audit
/// that reads it fails the gate.
const FAILING_RUN: &str = r#"{"run":"hx-refuted","holdout_n":1000,"holdout_misclassified":100,"claimed_accuracy":0.99,"notes":"compare verdict, explanation, error_upper_bound and certifiable_accuracy with last week"}"#;

/// A run that passes: 5 errors in 20,000, claimed 90 %.
const PASSING_LOG: &str =
    "run,holdout_n,holdout_misclassified,claimed_accuracy\nhx-fine,20000,5,0.9\n";

// ---------------------------------------------------------------------------------
// Item 1: a log is never dropped from the gate by its content.

#[test]
fn a_log_whose_notes_name_report_columns_is_audited() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "exp/fine.csv", PASSING_LOG);
    write(dir.path(), "exp/refuted.jsonl", &format!("{FAILING_RUN}\n"));
    for target in ["exp", "exp/refuted.jsonl"] {
        let output = run_in(dir.path(), &["audit", target, "--format", "json"]);
        assert_eq!(
            output.status.code(),
            Some(1),
            "{target}: the refuted run must fail the gate: {}",
            text(&output.stderr)
        );
        let doc: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
        let runs = doc["runs"].as_array().unwrap();
        assert!(
            runs.iter().any(|run| run["run"] == "hx-refuted"),
            "{target}: {doc}"
        );
        assert!(
            doc["skipped_files"].as_array().unwrap().is_empty(),
            "{target}: {}",
            doc["skipped_files"]
        );
    }
    // A CSV log with the same words in its header's neighbourhood is audited too.
    write(
        dir.path(),
        "csv/refuted.csv",
        "run,holdout_n,holdout_misclassified,claimed_accuracy,verdict,explanation,error_upper_bound,certifiable_accuracy\nhx-refuted,1000,100,0.99,ok,fine,0.01,0.99\n",
    );
    let output = run_in(dir.path(), &["audit", "csv"]);
    assert_eq!(output.status.code(), Some(1), "{}", text(&output.stderr));
}

#[test]
fn a_report_named_on_the_command_line_is_an_input_error() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::copy(
        root().join("fixtures/demo/runs.csv"),
        dir.path().join("runs.csv"),
    )
    .unwrap();
    for (report, flags) in [
        ("audit.csv", &[][..]),
        ("audit.ndjson", &[][..]),
        ("audit.json", &[][..]),
        ("audit.parquet", &[][..]),
        ("audit.cert.json", &["--certificate"][..]),
    ] {
        let mut args = vec!["audit", "runs.csv", "--gate", "never"];
        if flags.is_empty() {
            args.extend(["-o", report]);
        } else {
            args.extend([flags[0], report]);
        }
        let output = run_in(dir.path(), &args);
        assert_eq!(output.status.code(), Some(0), "{}", text(&output.stderr));
        for lenient in [false, true] {
            let mut args = vec!["audit", "runs.csv", report, "--gate", "never"];
            if lenient {
                args.push("--lenient");
            }
            let output = run_in(dir.path(), &args);
            let err = text(&output.stderr);
            assert_eq!(output.status.code(), Some(2), "{report}: {err}");
            assert!(
                err.contains(report) && err.contains("gapcert") && err.contains("not a run log"),
                "{report}: {err}"
            );
        }
    }
}

#[test]
fn claims_reports_in_a_folder_are_still_left_out() {
    let dir = tempfile::tempdir().unwrap();
    let exp = dir.path().join("exp");
    std::fs::create_dir_all(&exp).unwrap();
    std::fs::copy(root().join("fixtures/demo/runs.csv"), exp.join("runs.csv")).unwrap();
    std::fs::copy(
        root().join("fixtures/demo/claims.csv"),
        dir.path().join("claims.csv"),
    )
    .unwrap();
    for name in ["claims.csv", "claims.ndjson", "claims.parquet"] {
        let output = run_in(
            dir.path(),
            &[
                "audit",
                "exp",
                "--claims",
                "claims.csv",
                "--gate",
                "never",
                "--claims-output",
                &format!("exp/out-{name}"),
            ],
        );
        assert_eq!(output.status.code(), Some(0), "{}", text(&output.stderr));
    }
    // Runs reports with --keep columns after gapcert's own.
    for name in ["kept.csv", "kept.ndjson", "kept.parquet"] {
        let output = run_in(
            dir.path(),
            &[
                "audit",
                "exp",
                "--keep",
                "notes,dim",
                "--gate",
                "never",
                "-o",
                &format!("exp/{name}"),
            ],
        );
        assert_eq!(output.status.code(), Some(0), "{}", text(&output.stderr));
    }
    let output = run_in(
        dir.path(),
        &["audit", "exp", "-v", "--gate", "never", "--format", "json"],
    );
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(0), "{err}");
    let doc: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    assert_eq!(doc["summary"]["runs"], 21, "only runs.csv is read");
    for name in ["claims.csv", "claims.ndjson", "claims.parquet"] {
        assert!(
            err.contains(&format!("exp/out-{name}: a gapcert report of claims")),
            "{name}: {err}"
        );
    }
    for name in ["kept.csv", "kept.ndjson", "kept.parquet"] {
        assert!(
            err.contains(&format!("exp/{name}: a gapcert report of runs")),
            "{name}: {err}"
        );
    }
}
