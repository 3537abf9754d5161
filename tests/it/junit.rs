//! `--format junit` (SPEC §12): one test case per claim, failed exactly when the gate
//! fails on it, parsed here by an independent XML parser (roxmltree) and counted
//! against the JSON document of the same audit.

use std::path::Path;
use std::process::{Command, Output};

use serde_json::Value;

use crate::common::{binary, gapcert, gapcert_json, stderr};

struct Case {
    class: String,
    name: String,
    failed: bool,
    message: Option<String>,
    properties: Vec<(String, String)>,
}

fn cases(xml: &str) -> (roxmltree::Document<'_>, Vec<Case>) {
    let doc = roxmltree::Document::parse(xml).unwrap_or_else(|e| panic!("{e}: {xml}"));
    let cases = doc
        .descendants()
        .filter(|n| n.has_tag_name("testcase"))
        .map(|case| {
            let failure = case.children().find(|n| n.has_tag_name("failure"));
            Case {
                class: case.attribute("classname").unwrap().to_string(),
                name: case.attribute("name").unwrap().to_string(),
                failed: failure.is_some(),
                message: failure.and_then(|f| f.attribute("message").map(String::from)),
                properties: case
                    .descendants()
                    .filter(|n| n.has_tag_name("property"))
                    .map(|p| {
                        (
                            p.attribute("name").unwrap().to_string(),
                            p.attribute("value").unwrap().to_string(),
                        )
                    })
                    .collect(),
            }
        })
        .collect();
    (doc, cases)
}

fn property<'a>(case: &'a Case, name: &str) -> Option<&'a str> {
    case.properties
        .iter()
        .find(|(n, _)| n == name)
        .map(|(_, v)| v.as_str())
}

/// The demo's runs with claims and its claims file, under each gate.
#[test]
fn one_case_per_claim_failed_exactly_where_the_gate_fails() {
    for gate in ["unproven", "refuted", "never"] {
        let output = gapcert(&["demo", "--format", "junit", "--gate", gate]);
        let xml = String::from_utf8(output.stdout.clone()).unwrap();
        let (doc, cases) = cases(&xml);
        let (_, json) = gapcert_json(&["demo", "--format", "json", "--gate", gate]);
        let runs: Vec<&Value> = json["runs"]
            .as_array()
            .unwrap()
            .iter()
            .filter(|r| r["verdict"] != "no_claim")
            .collect();
        let claims = json["claims"].as_array().unwrap();
        assert_eq!(cases.len(), runs.len() + claims.len(), "{gate}");
        // Each run's case carries its verdict and bounds; each fails as the gate says.
        for (case, run) in cases.iter().zip(&runs) {
            assert!(case.name.starts_with(run["run"].as_str().unwrap()));
            assert_eq!(
                Some(run["verdict"].as_str().unwrap()),
                property(case, "verdict")
            );
            assert_eq!(property(case, "confidence"), Some("0.95"));
            assert_eq!(property(case, "method"), Some("binomial"));
            let verdict = run["verdict"].as_str().unwrap();
            let slip = run["findings"].as_array().unwrap().iter().any(|f| {
                [
                    "claim_below_half",
                    "claim_looks_like_error_rate",
                    "claim_looks_like_accuracy",
                    "holdout_n_equals_train_n",
                ]
                .contains(&f["code"].as_str().unwrap())
            });
            let expected = match gate {
                "unproven" => verdict != "certified" || slip,
                "refuted" => verdict == "refuted" || slip,
                _ => false,
            };
            assert_eq!(case.failed, expected, "{gate}: {}", case.name);
            if case.failed {
                assert_eq!(case.message.as_deref(), run["explanation"].as_str());
            }
        }
        for (case, claim) in cases[runs.len()..].iter().zip(claims) {
            assert!(case.name.starts_with(claim["claim"].as_str().unwrap()));
            assert_eq!(property(case, "method"), claim["method"].as_str());
            let verdict = claim["verdict"].as_str().unwrap();
            let expected = match gate {
                "unproven" => verdict != "certified",
                "refuted" => verdict == "refuted",
                _ => false,
            };
            assert_eq!(case.failed, expected, "{gate}: {}", case.name);
            if case.failed {
                assert_eq!(case.message.as_deref(), claim["evidence"].as_str());
            }
        }
        // The counts in the suites' attributes agree with the cases, and the exit
        // code with the failures (the demo exits 1 only with an explicit failing gate).
        let failures = cases.iter().filter(|c| c.failed).count();
        let root = doc.root_element();
        assert_eq!(
            root.attribute("tests"),
            Some(cases.len().to_string().as_str())
        );
        assert_eq!(
            root.attribute("failures"),
            Some(failures.to_string().as_str())
        );
        assert_eq!(
            output.status.code(),
            Some(if failures > 0 { 1 } else { 0 }),
            "{gate}"
        );
        assert_eq!(
            json["summary"]["gate"] == "fail",
            failures > 0,
            "{gate}: the gate fails exactly when a case fails"
        );
    }
}

#[test]
fn hostile_run_names_are_escaped() {
    let dir = tempfile::tempdir().unwrap();
    // Invented names built to break XML: markup, quotes, a CDATA end, an entity, a
    // control character XML 1.0 forbids, and a line break inside a quoted CSV cell.
    let names = [
        "<script>alert(1)</script>",
        "a&b\"c'd",
        "]]><evil/>",
        "&amp;already",
        "bell\u{7}ring",
        "two\nlines",
    ];
    let mut log = String::from("run,holdout_n,holdout_misclassified,claimed_accuracy\n");
    for (i, name) in names.iter().enumerate() {
        log.push_str(&format!(
            "\"{}\",1000,{},0.9\n",
            name.replace('"', "\"\""),
            30 + 40 * i
        ));
    }
    std::fs::write(dir.path().join("hostile.csv"), &log).unwrap();
    let output = run_in(dir.path(), &["audit", "hostile.csv", "-o", "report.xml"]);
    assert_eq!(output.status.code(), Some(1), "{}", stderr(&output));
    let xml = std::fs::read_to_string(dir.path().join("report.xml")).unwrap();
    let (_, cases) = cases(&xml);
    assert_eq!(cases.len(), names.len());
    for (case, name) in cases.iter().zip(names) {
        let expected = name.replace('\u{7}', "\u{fffd}");
        assert!(
            case.name
                .starts_with(&format!("{expected}: claimed accuracy")),
            "{:?} vs {expected:?}",
            case.name
        );
        assert_eq!(case.class, "hostile.csv");
    }
    assert!(cases.iter().any(|c| c.failed));
}

fn run_in(dir: &Path, args: &[&str]) -> Output {
    Command::new(binary())
        .args(args)
        .current_dir(dir)
        .env("NO_COLOR", "1")
        .output()
        .expect("run gapcert")
}

/// The CI example's script: reports written, gapcert's exit status passed on.
#[test]
fn ci_example_gate_script_writes_reports_and_passes_the_exit_status_on() {
    let dir = tempfile::tempdir().unwrap();
    let root = crate::common::root();
    let script = root.join("examples/ci/gate.sh");
    let gate = |args: &[&str]| {
        Command::new("sh")
            .arg(&script)
            .args(args)
            .current_dir(&root)
            .env("GAPCERT", binary())
            .env("GAPCERT_OUT", dir.path().join("out"))
            .output()
            .expect("run gate.sh")
    };
    let output = gate(&[
        "fixtures/demo/runs.csv",
        "--claims",
        "fixtures/demo/claims.csv",
    ]);
    assert_eq!(output.status.code(), Some(1), "{}", stderr(&output));
    let out = dir.path().join("out");
    let xml = std::fs::read_to_string(out.join("audit.xml")).unwrap();
    let (_, cases) = cases(&xml);
    assert!(cases.iter().any(|c| c.failed));
    let summary = std::fs::read_to_string(out.join("summary.md")).unwrap();
    // The summary posted on the pull request says what the gate decided (it once
    // came from a second audit run with `--gate never` and said "passes").
    assert!(
        summary.starts_with("### gapcert audit: the gate **fails**"),
        "{summary}"
    );
    assert!(out.join("audit.html").exists() && out.join("audit.cert.json").exists());
    // Options pass through to the one audit: `--gate never` passes and the summary
    // says so; `--format` and `--output` add a report of the caller's own.
    let extra = dir.path().join("extra.json");
    let output = gate(&[
        "fixtures/demo/runs.csv",
        "--claims",
        "fixtures/demo/claims.csv",
        "--gate",
        "never",
        "--format",
        "json",
        "--output",
        extra.to_str().unwrap(),
    ]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    let summary = std::fs::read_to_string(out.join("summary.md")).unwrap();
    assert!(
        summary.starts_with("### gapcert audit: the gate passes"),
        "{summary}"
    );
    let document: serde_json::Value =
        serde_json::from_str(&std::fs::read_to_string(&extra).unwrap()).unwrap();
    assert_eq!(document["summary"]["gate"], "pass");
    // `--gate refuted` passed through: the demo has a refuted claim, so it fails.
    let output = gate(&["fixtures/demo/runs.csv", "--gate", "refuted"]);
    assert_eq!(output.status.code(), Some(1), "{}", stderr(&output));
    // Bad input: exit 2, no new summary.
    std::fs::remove_file(out.join("summary.md")).unwrap();
    let output = gate(&["fixtures/demo/runs.csv", "--confidence", "2"]);
    assert_eq!(output.status.code(), Some(2));
    assert!(!out.join("summary.md").exists());
}
