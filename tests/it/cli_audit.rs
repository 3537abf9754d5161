//! End-to-end tests of `gapcert audit` / `gapcert demo` against an independent
//! reference: `benches/reference_audit.py` (pandas + scipy, written separately from the
//! Rust code) produced `fixtures/*/expected*.csv`, and `fixtures/worked/expected.json`
//! was computed with mpmath at 40 digits (see fixtures/worked/README.md).

use std::collections::{BTreeSet, HashMap};

use crate::common::{close, gapcert, gapcert_json, read_csv, root, stderr, stdout};
use serde_json::Value;

const NUMERIC_FIELDS: &[&str] = &[
    "train_n",
    "train_error_rate",
    "holdout_n",
    "holdout_error_rate",
    "holdout_misclassified",
    "delta",
    "error_upper_bound",
    "error_lower_bound",
    "vc_dim",
    "growth_ln",
    "vc_allowance",
    "vc_bound",
    "observed_gap",
    "certified_gap_max",
    "claim_error_rate",
    "holdout_needed",
    "train_needed",
];

fn number(value: &Value) -> Option<f64> {
    value.as_f64()
}

/// Compares gapcert's JSON runs with a reference CSV written by the pandas + scipy
/// script, field by field, at `tolerance`.
fn assert_matches_reference(runs: &[Value], expected_csv: &str, tolerance: f64) {
    let expected = read_csv(&root().join(expected_csv));
    assert_eq!(runs.len(), expected.len(), "run count vs {expected_csv}");
    let by_run: HashMap<&str, &Value> = runs
        .iter()
        .map(|r| (r["run"].as_str().unwrap(), r))
        .collect();
    let mut failures = Vec::new();
    for row in &expected {
        let name = row["run"].as_str();
        let Some(run) = by_run.get(name) else {
            failures.push(format!("{name}: missing from gapcert's output"));
            continue;
        };
        for &field in NUMERIC_FIELDS {
            let want = row[field].trim();
            let got = &run[field];
            match (want.is_empty(), got.is_null()) {
                (true, true) => {}
                (true, false) => failures.push(format!("{name}.{field}: expected null, got {got}")),
                (false, true) => {
                    failures.push(format!("{name}.{field}: expected {want}, got null"))
                }
                (false, false) => {
                    let want: f64 = want.parse().unwrap();
                    let got = number(got).unwrap();
                    if !close(got, want, tolerance) {
                        failures.push(format!("{name}.{field}: expected {want}, got {got}"));
                    }
                }
            }
        }
        // Rates taken as the decimal complement of a logged accuracy (0.9 → 0.1) and
        // δ = 1 − confidence are exact: the reference takes the same complement with
        // Python's decimal module, so the two must agree to the last bit.
        for field in [
            "holdout_error_rate",
            "train_error_rate",
            "claim_error_rate",
            "delta",
        ] {
            let want = row[field].trim();
            if want.is_empty() {
                continue;
            }
            let want: f64 = want.parse().unwrap();
            if number(&run[field]) != Some(want) {
                failures.push(format!(
                    "{name}.{field}: expected exactly {want}, got {}",
                    run[field]
                ));
            }
        }
        for (field, index, column) in [
            ("hoeffding_interval", 0, "hoeffding_interval_lo"),
            ("hoeffding_interval", 1, "hoeffding_interval_hi"),
            ("binomial_interval", 0, "binomial_interval_lo"),
            ("binomial_interval", 1, "binomial_interval_hi"),
        ] {
            let want: f64 = row[column].parse().unwrap();
            let got = run[field][index].as_f64().unwrap();
            if !close(got, want, tolerance) {
                failures.push(format!("{name}.{column}: expected {want}, got {got}"));
            }
        }
        // K: gapcert reports the number of models compared (after grouping) as
        // `candidates`; the reference calls it selection_k.
        let k: u64 = row["selection_k"].parse().unwrap();
        if run["candidates"].as_u64() != Some(k) {
            failures.push(format!(
                "{name}.candidates: expected K = {k}, got {}",
                run["candidates"]
            ));
        }
        if run["verdict"].as_str() != Some(row["verdict"].as_str()) {
            failures.push(format!(
                "{name}.verdict: expected {}, got {}",
                row["verdict"], run["verdict"]
            ));
        }
        let want_findings: BTreeSet<&str> = row["findings"]
            .split(';')
            .filter(|s| !s.is_empty())
            .collect();
        let got_findings: BTreeSet<&str> = run["findings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| f["code"].as_str().unwrap())
            .collect();
        if want_findings != got_findings {
            failures.push(format!(
                "{name}.findings: expected {want_findings:?}, got {got_findings:?}"
            ));
        }
        if run["holdout_set"].as_str().unwrap_or("") != row["holdout_set"] {
            failures.push(format!("{name}.holdout_set differs"));
        }
    }
    assert!(
        failures.is_empty(),
        "{} mismatch(es) against {expected_csv}:\n{}",
        failures.len(),
        failures.join("\n")
    );
}

fn runs_of(doc: &Value) -> Vec<Value> {
    doc["runs"].as_array().expect("runs array").clone()
}

#[test]
fn demo_matches_independent_reference() {
    let (code, doc) = gapcert_json(&["demo", "--format", "json"]);
    assert_eq!(code, 0, "the demo exits 0 unless --gate is given");
    assert_eq!(
        doc["summary"]["gate"], "fail",
        "the demo has unproven and refuted claims, so the default gate would fail"
    );
    assert_matches_reference(&runs_of(&doc), "fixtures/demo/expected.csv", 1e-9);
    // Given explicitly, the gate sets the exit code as for any audit.
    let (code, _) = gapcert_json(&["demo", "--format", "json", "--gate", "unproven"]);
    assert_eq!(code, 1);
    let (code, _) = gapcert_json(&["demo", "--format", "json", "--gate", "never"]);
    assert_eq!(code, 0);
}

#[test]
fn demo_file_audit_matches_reference_under_each_setting() {
    for (flags, expected) in [
        (vec![], "fixtures/demo/expected.csv"),
        (
            vec!["--holdout-bound", "hoeffding"],
            "fixtures/demo/expected_hoeffding.csv",
        ),
        (
            vec!["--familywise"],
            "fixtures/demo/expected_familywise.csv",
        ),
        (
            vec!["--same-holdout"],
            "fixtures/demo/expected_same_holdout.csv",
        ),
    ] {
        let log = if flags.contains(&"--same-holdout") {
            // One split declared: the demo runs without their split names.
            "fixtures/demo/runs_one_split.csv"
        } else {
            "fixtures/demo/runs.csv"
        };
        let mut args = vec!["audit", log, "--format", "json"];
        args.extend(flags.iter());
        let (_, doc) = gapcert_json(&args);
        assert_matches_reference(&runs_of(&doc), expected, 1e-9);
    }
}

#[test]
fn every_format_gives_the_same_runs() {
    let strip = |doc: &Value| -> Vec<Value> {
        runs_of(doc)
            .into_iter()
            .map(|mut r| {
                r.as_object_mut().unwrap().remove("source");
                r
            })
            .collect()
    };
    let (_, base) = gapcert_json(&["audit", "fixtures/demo/runs.csv", "--format", "json"]);
    let base = strip(&base);
    for file in [
        "runs.tsv",
        "runs.parquet",
        "runs.jsonl",
        "runs.json",
        "runs.arrow",
    ] {
        let path = format!("fixtures/formats/{file}");
        let (_, doc) = gapcert_json(&["audit", &path, "--format", "json"]);
        assert_eq!(strip(&doc), base, "{file} differs from the CSV audit");
    }
}

#[test]
fn worked_example_matches_mpmath_values() {
    // fixtures/worked/expected.json: mpmath at 40 digits (see its README for the
    // formulae with the numbers substituted by hand).
    let expected: Value = serde_json::from_str(
        &std::fs::read_to_string(root().join("fixtures/worked/expected.json")).unwrap(),
    )
    .unwrap();
    let (_, doc) = gapcert_json(&["audit", "fixtures/worked/runs.csv", "--format", "json"]);
    let runs = runs_of(&doc);
    for want in expected["runs"].as_array().unwrap() {
        let name = want["run"].as_str().unwrap();
        let got = runs.iter().find(|r| r["run"] == want["run"]).expect(name);
        for &field in NUMERIC_FIELDS {
            match (&want[field], &got[field]) {
                (Value::Null, Value::Null) => {}
                (w, g) => {
                    let (w, g) = (
                        w.as_f64().unwrap_or(f64::NAN),
                        g.as_f64().unwrap_or(f64::NAN),
                    );
                    assert!(close(g, w, 1e-9), "{name}.{field}: mpmath {w}, gapcert {g}");
                }
            }
        }
        for field in ["hoeffding_interval", "binomial_interval"] {
            for i in 0..2 {
                let (w, g) = (
                    want[field][i].as_f64().unwrap(),
                    got[field][i].as_f64().unwrap(),
                );
                assert!(
                    close(g, w, 1e-9),
                    "{name}.{field}[{i}]: mpmath {w}, gapcert {g}"
                );
            }
        }
        assert_eq!(got["verdict"], want["verdict"], "{name}.verdict");
    }
}

#[test]
fn json_document_has_the_specified_fields() {
    let (_, doc) = gapcert_json(&["demo", "--format", "json"]);
    for key in [
        "tool",
        "generated_at",
        "settings",
        "inputs",
        "runs",
        "summary",
    ] {
        assert!(doc.get(key).is_some(), "top-level {key}");
    }
    for key in [
        "confidence",
        "holdout_bound",
        "familywise",
        "tolerance",
        "max_width",
        "gate",
    ] {
        assert!(doc["settings"].get(key).is_some(), "settings.{key}");
    }
    for key in ["path", "sha256", "rows"] {
        assert!(doc["inputs"][0].get(key).is_some(), "inputs[].{key}");
    }
    let spec_fields = [
        "run",
        "source",
        "family",
        "train_n",
        "train_error_rate",
        "holdout_n",
        "holdout_error_rate",
        "holdout_misclassified",
        "holdout_set",
        "candidates",
        "delta",
        "hoeffding_interval",
        "binomial_interval",
        "error_upper_bound",
        "error_lower_bound",
        "vc_dim",
        "growth_ln",
        "vc_allowance",
        "vc_bound",
        "observed_gap",
        "certified_gap_max",
        "claim_error_rate",
        "verdict",
        "holdout_needed",
        "train_needed",
        "findings",
    ];
    for run in doc["runs"].as_array().unwrap() {
        for field in spec_fields {
            assert!(run.get(field).is_some(), "runs[].{field} missing");
        }
    }
    for key in [
        "runs",
        "certified",
        "unproven",
        "refuted",
        "no_claim",
        "gate",
    ] {
        assert!(doc["summary"].get(key).is_some(), "summary.{key}");
    }
    chrono::DateTime::parse_from_rfc3339(doc["generated_at"].as_str().unwrap()).expect("RFC 3339");
}

#[test]
fn demo_tells_its_story() {
    // The demo scenario (fixtures/demo/README.md) promises these verdicts.
    let (_, doc) = gapcert_json(&["demo", "--format", "json"]);
    let s = &doc["summary"];
    assert_eq!(s["refuted"], 1, "exactly one over-claim is refuted");
    assert!(s["certified"].as_u64().unwrap() >= 2);
    assert!(s["unproven"].as_u64().unwrap() >= 1);
    assert!(s["no_claim"].as_u64().unwrap() >= 1);
    let runs = runs_of(&doc);
    let has = |code: &str| {
        runs.iter().any(|r| {
            r["findings"]
                .as_array()
                .unwrap()
                .iter()
                .any(|f| f["code"] == code)
        })
    };
    assert!(has("gap_beyond_theory"));
    assert!(has("theory_unavailable"));
    assert!(has("holdout_reused"));
    let splits: BTreeSet<&str> = runs
        .iter()
        .filter_map(|r| r["holdout_set"].as_str())
        .collect();
    assert!(splits.len() >= 2);
}

#[test]
fn gates_set_the_exit_code() {
    assert_eq!(
        gapcert(&["demo", "--gate", "never", "--format", "json"])
            .status
            .code(),
        Some(0)
    );
    assert_eq!(
        gapcert(&["demo", "--gate", "refuted", "--format", "json"])
            .status
            .code(),
        Some(1)
    );
    assert_eq!(
        gapcert(&["demo", "--gate", "unproven", "--format", "json"])
            .status
            .code(),
        Some(1)
    );
    // A log whose only claim is certified passes the default gate.
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("ok.csv");
    std::fs::write(
        &log,
        "run,holdout_n,holdout_misclassified,claimed_accuracy\nonly,20000,100,0.99\n",
    )
    .unwrap();
    let output = gapcert(&["audit", log.to_str().unwrap()]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    // Refuted: 30% observed error against a 1% claim.
    std::fs::write(
        &log,
        "run,holdout_n,holdout_misclassified,claimed_accuracy\nbad,1000,300,0.99\n",
    )
    .unwrap();
    assert_eq!(
        gapcert(&["audit", log.to_str().unwrap(), "--gate", "refuted"])
            .status
            .code(),
        Some(1)
    );
}

/// (file, [(row, column)]) for each bad fixture: every listed problem must be named.
const BAD_CASES: &[(&str, &[(usize, &str)])] = &[
    ("rate_above_one.csv", &[(3, "holdout_error_rate")]),
    (
        "nan_inf.csv",
        &[(1, "holdout_error_rate"), (4, "train_error_rate")],
    ),
    ("non_numeric_n.csv", &[(2, "holdout_n")]),
    (
        "zero_negative_counts.csv",
        &[(1, "holdout_n"), (3, "train_n"), (4, "candidates")],
    ),
    ("misclassified_gt_n.csv", &[(2, "holdout_misclassified")]),
    ("accuracy_rate_conflict.csv", &[(1, "holdout_accuracy")]),
    ("linear_without_dim.csv", &[(2, "dim")]),
    (
        "several_bad_rows.csv",
        &[
            (1, "holdout_error_rate"),
            (2, "dim"),
            (3, "holdout_misclassified"),
            (4, "holdout_n"),
        ],
    ),
    ("truncated.jsonl", &[(4, "")]),
];

#[test]
fn an_unreadable_json_record_is_reported_once() {
    let path = "fixtures/bad/truncated.jsonl";
    let output = gapcert(&["audit", path]);
    assert_eq!(output.status.code(), Some(2));
    let err = stderr(&output);
    let record_4: Vec<&str> = err
        .lines()
        .filter(|l| l.contains(&format!("{path}:4:")))
        .collect();
    assert_eq!(record_4.len(), 1, "{err}");
    assert!(record_4[0].contains("invalid JSON"), "{err}");
}

#[test]
fn a_percent_sign_in_a_rate_gets_advice() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("runs.csv");
    std::fs::write(
        &path,
        "run,holdout_n,holdout_accuracy,claimed_accuracy\na,100,97%,0.9\nb,100,n/a,0.9\n",
    )
    .unwrap();
    let output = gapcert(&["audit", path.to_str().unwrap()]);
    assert_eq!(output.status.code(), Some(2));
    let err = stderr(&output);
    let file = path.to_str().unwrap();
    assert!(
        err.contains(&format!(
            "{file}:1: holdout_accuracy = \"97%\" is not a number: write the rate as a fraction"
        )),
        "{err}"
    );
    // Text that is not a number with a percent sign gets the plain message.
    assert!(
        err.contains(&format!(
            "{file}:2: holdout_accuracy = \"n/a\" is not a number\n"
        )),
        "{err}"
    );
    // The unreadable cell is the row's only problem: it is not also called empty.
    assert!(!err.contains("all empty"), "{err}");
}

#[test]
fn semicolon_separated_csv_gets_a_hint_about_the_separator() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("export.csv");
    std::fs::write(&path, "run;holdout_n;holdout_error_rate\na;1000;0.02\n").unwrap();
    let output = gapcert(&["audit", path.to_str().unwrap()]);
    assert_eq!(output.status.code(), Some(2));
    let err = stderr(&output);
    assert!(
        err.contains("missing required column holdout_n")
            && err.contains("single column `run;holdout_n;holdout_error_rate`")
            && err.contains("the file looks semicolon-separated"),
        "{err}"
    );
    // A comma-separated file that merely lacks the column gets no such hint.
    std::fs::write(&path, "run,n,holdout_error_rate\na,1000,0.02\n").unwrap();
    let err = stderr(&gapcert(&["audit", path.to_str().unwrap()]));
    assert!(err.contains("missing required column holdout_n"), "{err}");
    assert!(!err.contains("looks"), "{err}");
}

#[test]
fn bad_rows_are_all_reported_with_file_row_and_column() {
    let dir = tempfile::tempdir().unwrap();
    for (file, problems) in BAD_CASES {
        let path = format!("fixtures/bad/{file}");
        let out = dir.path().join(format!("{file}.json"));
        let output = gapcert(&[
            "audit",
            &path,
            "--format",
            "json",
            "--output",
            out.to_str().unwrap(),
        ]);
        let err = stderr(&output);
        assert_eq!(
            output.status.code(),
            Some(2),
            "{file}: exit code; stderr:\n{err}"
        );
        assert!(
            !out.exists(),
            "{file}: an output file was written despite bad input"
        );
        for (row, column) in *problems {
            let prefix = format!("{path}:{row}:");
            let line = err
                .lines()
                .find(|l| l.contains(&prefix))
                .unwrap_or_else(|| {
                    panic!("{file}: no problem reported for row {row}; stderr:\n{err}")
                });
            assert!(
                line.contains(column),
                "{file}:{row}: column {column} not named in {line:?}"
            );
        }
        assert!(!err.contains("panicked"), "{file}: panic");
    }
}

#[test]
fn broken_files_are_reported() {
    for (file, words) in [
        ("missing_holdout_n.csv", "holdout_n"),
        ("no_holdout_error.csv", "held-out error"),
        ("truncated_array.json", "invalid JSON"),
        ("garbage.parquet", "Parquet"),
        ("empty.csv", "empty"),
        ("header_only.csv", "no runs"),
    ] {
        let path = format!("fixtures/bad/{file}");
        let output = gapcert(&["audit", &path]);
        let err = stderr(&output);
        assert_eq!(output.status.code(), Some(2), "{file}: {err}");
        assert!(err.contains(&path) && err.contains(words), "{file}: {err}");
        assert!(!err.contains("panicked"), "{file}: panic");
    }
}

#[test]
fn problems_in_several_files_are_reported_together() {
    let output = gapcert(&[
        "audit",
        "fixtures/bad/rate_above_one.csv",
        "fixtures/bad/non_numeric_n.csv",
    ]);
    let err = stderr(&output);
    assert_eq!(output.status.code(), Some(2));
    assert!(
        err.contains("rate_above_one.csv:3:") && err.contains("non_numeric_n.csv:2:"),
        "{err}"
    );
}

#[test]
fn lenient_skips_bad_rows_and_lists_them() {
    // All four rows are bad, so nothing is left to audit: that is still an input error.
    let output = gapcert(&[
        "audit",
        "fixtures/bad/several_bad_rows.csv",
        "--lenient",
        "--format",
        "json",
        "--gate",
        "never",
    ]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stdout(&output).is_empty());
    let (code, doc) = gapcert_json(&[
        "audit",
        "fixtures/bad/zero_negative_counts.csv",
        "--lenient",
        "--format",
        "json",
        "--gate",
        "never",
    ]);
    assert_eq!(code, 0);
    assert_eq!(doc["summary"]["rows_skipped"], 3);
    assert_eq!(doc["summary"]["runs"], 1);
    assert_eq!(doc["summary"]["rows_read"], 4, "read = audited + skipped");
    let skipped: Vec<&str> = doc["skipped_rows"]
        .as_array()
        .unwrap()
        .iter()
        .map(|s| s["source"].as_str().unwrap())
        .collect();
    assert_eq!(
        skipped,
        [
            "fixtures/bad/zero_negative_counts.csv:1",
            "fixtures/bad/zero_negative_counts.csv:3",
            "fixtures/bad/zero_negative_counts.csv:4"
        ]
    );
}

#[test]
fn urls_are_not_fetched_but_rejected_as_missing_files() {
    for url in [
        "s3://bucket/runs.csv",
        "https://example.com/runs.csv",
        "gs://b/x.parquet",
    ] {
        let output = gapcert(&["audit", url]);
        let err = stderr(&output);
        assert_eq!(output.status.code(), Some(2), "{url}");
        assert!(
            err.contains(url) && err.contains("local files"),
            "{url}: {err}"
        );
    }
}

#[test]
fn unknown_explicit_file_type_is_an_error_but_skipped_in_folders() {
    let output = gapcert(&["audit", "fixtures/edge/mixed/README.txt"]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("unknown log type"));
    let (_, doc) = gapcert_json(&["audit", "fixtures/edge/mixed", "--format", "json"]);
    assert_eq!(doc["summary"]["files_skipped"], 1);
    assert_matches_reference(&runs_of(&doc), "fixtures/edge/expected_mixed.csv", 1e-9);
}

#[test]
fn awkward_but_valid_files_read_like_plain_ones() {
    for args in [
        vec!["audit", "fixtures/edge/bom_crlf.csv"],
        vec!["audit", "fixtures/edge/mixed_case.csv"],
        vec![
            "audit",
            "fixtures/edge/renamed.csv",
            "--map-file",
            "fixtures/edge/map.json",
        ],
        vec![
            "audit",
            "fixtures/edge/renamed.csv",
            "--map",
            "holdout_error_rate=val_err",
            "--map",
            "holdout_n=n_val",
        ],
        vec!["audit", "fixtures/edge/percent.csv", "--percent"],
    ] {
        let mut args = args.clone();
        args.extend(["--format", "json"]);
        let (code, doc) = gapcert_json(&args);
        assert!(code == 0 || code == 1, "{args:?}");
        assert_matches_reference(&runs_of(&doc), "fixtures/edge/expected.csv", 1e-9);
    }
}

#[test]
fn percent_scale_without_flag_is_an_error_with_a_hint() {
    let output = gapcert(&["audit", "fixtures/edge/percent.csv"]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("--percent"));
}

#[test]
fn output_goes_to_a_file_atomically_and_not_into_a_missing_folder() {
    let dir = tempfile::tempdir().unwrap();
    let out = dir.path().join("report.json");
    let output = gapcert(&[
        "demo",
        "--format",
        "json",
        "--output",
        out.to_str().unwrap(),
    ]);
    assert_eq!(output.status.code(), Some(0));
    assert!(stdout(&output).is_empty());
    let doc: Value = serde_json::from_str(&std::fs::read_to_string(&out).unwrap()).unwrap();
    assert!(doc["runs"].as_array().unwrap().len() > 5);
    let leftovers: Vec<_> = std::fs::read_dir(dir.path())
        .unwrap()
        .filter_map(|e| e.ok())
        .filter(|e| e.file_name().to_string_lossy().ends_with(".tmp"))
        .collect();
    assert!(leftovers.is_empty(), "temporary files left behind");
    let nowhere = dir.path().join("no/such/folder/report.json");
    let output = gapcert(&[
        "demo",
        "--format",
        "json",
        "--output",
        nowhere.to_str().unwrap(),
    ]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("cannot write"));
}

#[test]
fn every_report_format_renders_the_demo() {
    let dir = tempfile::tempdir().unwrap();
    for format in ["table", "json", "ndjson", "csv", "parquet", "markdown"] {
        let out = dir.path().join(format!("demo.{format}"));
        let output = gapcert(&[
            "demo",
            "--format",
            format,
            "--output",
            out.to_str().unwrap(),
        ]);
        assert_eq!(
            output.status.code(),
            Some(0),
            "{format}: {}",
            stderr(&output)
        );
        let bytes = std::fs::read(&out).unwrap();
        assert!(bytes.len() > 200, "{format}: {} bytes", bytes.len());
    }
    let ndjson = std::fs::read_to_string(dir.path().join("demo.ndjson")).unwrap();
    let first: Value = serde_json::from_str(ndjson.lines().next().unwrap()).unwrap();
    assert!(
        first.get("binomial_interval_lo").is_some() && first.get("binomial_interval_hi").is_some()
    );
    let csv = read_csv(&dir.path().join("demo.csv"));
    assert_eq!(csv.len(), 21);
    let table = std::fs::read_to_string(dir.path().join("demo.table")).unwrap();
    assert!(
        table.contains("refuted") && table.contains("i.i.d."),
        "table shows verdicts and cautions"
    );
    let markdown = std::fs::read_to_string(dir.path().join("demo.markdown")).unwrap();
    assert!(markdown.contains("| verdict |") && markdown.contains("i.i.d."));
    // Worst first: the refuted run heads the table.
    let first_row = table.lines().find(|l| l.contains("kw-")).unwrap();
    assert!(first_row.contains("refuted"), "{first_row}");
}

#[test]
fn lenient_counts_the_rows_of_a_skipped_file_as_read_and_skipped() {
    // missing_holdout_n.csv has 4 data rows and no holdout_n column: skipped whole.
    // zero_negative_counts.csv: 1 run audited, 3 rows skipped.
    for format in ["json", "ndjson"] {
        let output = gapcert(&[
            "audit",
            "fixtures/bad/missing_holdout_n.csv",
            "fixtures/bad/zero_negative_counts.csv",
            "--lenient",
            "--format",
            format,
            "--gate",
            "never",
        ]);
        assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
        if format == "ndjson" {
            assert_eq!(stdout(&output).lines().count(), 1);
            continue;
        }
        let doc: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
        let summary = &doc["summary"];
        assert_eq!(summary["runs"], 1);
        assert_eq!(summary["rows_skipped"], 3 + 4);
        assert_eq!(
            summary["rows_read"], 8,
            "read = audited + skipped, skipped file included"
        );
        assert_eq!(doc["skipped_files"].as_array().unwrap().len(), 1);
        assert_eq!(doc["skipped_rows"].as_array().unwrap().len(), 3);
    }
}

#[test]
fn streamed_flat_outputs_equal_the_in_memory_ones_byte_for_byte() {
    // `--format ndjson|csv` alone streams (read, audit, format and write overlap);
    // with `--certificate` the whole document is built in memory first. Both must
    // write the same bytes. Six files in every format plus the demo log.
    let dir = tempfile::tempdir().unwrap();
    for format in ["ndjson", "csv"] {
        let streamed = dir.path().join(format!("streamed.{format}"));
        let whole = dir.path().join(format!("whole.{format}"));
        let certificate = dir.path().join(format!("certificate-{format}.json"));
        for (out, extra) in [
            (&streamed, vec![]),
            (&whole, vec!["--certificate", certificate.to_str().unwrap()]),
        ] {
            let mut args = vec![
                "audit",
                "fixtures/formats",
                "fixtures/demo/runs.csv",
                "--format",
                format,
                "--gate",
                "never",
                "--output",
                out.to_str().unwrap(),
            ];
            args.extend(extra);
            let output = gapcert(&args);
            assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
        }
        let streamed = std::fs::read(&streamed).unwrap();
        assert!(streamed.len() > 1000, "{format}");
        assert_eq!(streamed, std::fs::read(&whole).unwrap(), "{format}");
    }
}

/// `--report FILE` (repeatable) writes one more report per file, in the format its
/// extension names, from the same audit: each is the file `--format X --output FILE`
/// writes alone (the generation time aside), and the exit code is the gate's.
#[test]
fn reports_of_one_audit_equal_the_reports_written_one_by_one() {
    let dir = tempfile::tempdir().unwrap();
    let at = |name: &str| dir.path().join(name).to_str().unwrap().to_string();
    let logs = root().join("fixtures/demo/runs.csv");
    let claims = root().join("fixtures/demo/claims.csv");
    let (logs, claims) = (logs.to_str().unwrap(), claims.to_str().unwrap());
    let names = [
        "all.json",
        "all.ndjson",
        "all.csv",
        "all.md",
        "all.xml",
        "all.html",
    ];
    let mut args = vec!["audit", logs, "--claims", claims, "--quiet"];
    let paths: Vec<String> = names.iter().map(|n| at(n)).collect();
    for path in &paths {
        args.extend(["--report", path.as_str()]);
    }
    let together = gapcert(&args);
    assert_eq!(together.status.code(), Some(1), "{}", stderr(&together));
    let masked = |path: &str| {
        let text = std::fs::read_to_string(path).unwrap();
        text.lines()
            .map(|line| match line.find("20") {
                // Mask the generation time wherever a format writes it.
                Some(_) if line.contains("generated") || line.contains("Generated") => {
                    "GENERATED".to_string()
                }
                _ => line.to_string(),
            })
            .collect::<Vec<_>>()
            .join("\n")
    };
    for (name, path) in names.iter().zip(&paths) {
        let alone = at(&format!("alone-{name}"));
        let flag = if name.ends_with(".html") {
            "--html"
        } else {
            "--output"
        };
        let output = gapcert(&["audit", logs, "--claims", claims, "--quiet", flag, &alone]);
        assert_eq!(output.status.code(), Some(1), "{name}: {}", stderr(&output));
        assert_eq!(masked(path), masked(&alone), "{name}");
    }
    // An extension that names no report, and a report over an input, are usage errors.
    let output = gapcert(&["audit", logs, "--report", &at("out.txt")]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("--report"), "{}", stderr(&output));
    let output = gapcert(&["audit", logs, "--report", logs]);
    assert_eq!(output.status.code(), Some(2));
    assert!(
        stderr(&output).contains("is the input"),
        "{}",
        stderr(&output)
    );
}

/// The flat formats carry codes and numbers; `--explain` adds each run's explanation
/// and nothing else: the same line with one more field, the sentence of the JSON
/// document (SPEC §7).
#[test]
fn explain_adds_the_sentence_to_the_flat_formats_and_nothing_else() {
    let demo = root().join("fixtures/demo/runs.csv");
    let demo = demo.to_str().unwrap();
    let (_, document) = gapcert_json(&["audit", demo, "--format", "json", "--gate", "never"]);
    let runs = runs_of(&document);
    let lines = |explain: bool| -> Vec<Value> {
        let mut args = vec!["audit", demo, "--format", "ndjson", "--gate", "never"];
        if explain {
            args.push("--explain");
        }
        let output = gapcert(&args);
        assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
        stdout(&output)
            .lines()
            .map(|line| serde_json::from_str(line).unwrap())
            .collect()
    };
    let (plain, explained) = (lines(false), lines(true));
    assert_eq!(plain.len(), runs.len());
    for ((plain, mut explained), run) in plain.into_iter().zip(explained).zip(&runs) {
        assert!(plain.get("explanation").is_none(), "{plain}");
        let sentence = explained
            .as_object_mut()
            .unwrap()
            .remove("explanation")
            .expect("--explain writes the explanation");
        assert_eq!(sentence, run["explanation"]);
        assert!(!sentence.as_str().unwrap().is_empty());
        assert_eq!(plain, explained, "only the explanation differs");
    }
    // CSV: the explanation column comes and goes with --explain.
    for (explain, has) in [(false, false), (true, true)] {
        let mut args = vec!["audit", demo, "--format", "csv", "--gate", "never"];
        if explain {
            args.push("--explain");
        }
        let output = gapcert(&args);
        let header = stdout(&output).lines().next().unwrap().to_string();
        assert_eq!(
            header.split(',').any(|c| c == "explanation"),
            has,
            "{header}"
        );
    }
}
