//! The calculator commands and terminal manners, end to end.
//! Sample sizes are checked against `fixtures/reference/sample_sizes.csv`, computed
//! by brute force from the definitions with mpmath (scripts/reference_values.py).

use crate::common::{gapcert, gapcert_json, stderr, stdout};

#[test]
fn growth_table_for_the_plane_perceptron() {
    // Cover 1965: 2·Σ_{i≤2} C(N−1, i) = 2, 4, 8, 14, 22, 32 (common practice, SPEC §5b).
    let (code, doc) = gapcert_json(&[
        "growth", "--family", "linear", "--dim", "2", "--upto", "6", "--format", "json",
    ]);
    assert_eq!(code, 0);
    let growth: Vec<u64> = doc["rows"]
        .as_array()
        .unwrap()
        .iter()
        .map(|r| r["growth"].as_u64().unwrap())
        .collect();
    assert_eq!(growth, [2, 4, 8, 14, 22, 32]);
    assert_eq!(doc["break_point"], 4);
    assert_eq!(doc["vc_dim"], 3);
    let table = stdout(&gapcert(&[
        "growth", "--family", "linear", "--dim", "2", "--upto", "6",
    ]));
    for value in ["14", "22", "32", "break point"] {
        assert!(table.contains(value), "{table}");
    }
}

#[test]
fn growth_beyond_u64_is_a_decimal_string() {
    let (_, doc) = gapcert_json(&[
        "growth", "--family", "ray", "--upto", "70", "--format", "json",
    ]);
    let last = &doc["rows"][69];
    assert_eq!(last["n"], 70);
    assert_eq!(last["growth"], 71);
    assert_eq!(
        last["two_to_n"], "1180591620717411303424",
        "2^70 as a string"
    );
}

#[test]
fn growth_svg_marks_the_break_point() {
    let dir = tempfile::tempdir().unwrap();
    let svg = dir.path().join("growth.svg");
    let output = gapcert(&[
        "growth",
        "--family",
        "box",
        "--dim",
        "2",
        "--upto",
        "12",
        "--svg",
        svg.to_str().unwrap(),
        "--quiet",
    ]);
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    let text = std::fs::read_to_string(&svg).unwrap();
    assert!(
        text.starts_with("<svg") || text.contains("<svg"),
        "not an SVG"
    );
    assert!(text.contains("break point"), "break point not labelled");
}

#[test]
fn plan_holdout_matches_reference_sample_sizes() {
    // (error rate, claimed error, confidence, candidates) → reference rows with
    // alpha = (1 − confidence)/candidates.
    for (rate, claim_error, confidence, candidates, binomial, hoeffding) in [
        ("0", "0.01", "0.95", "1", 299u64, 14979u64),
        ("0.03", "0.05", "0.95", "1", 361, 3745),
        ("0.03", "0.05", "0.95", "4", 596, 5478),
        ("0.2", "0.25", "0.99", "1", 415, 922),
        ("0.001", "0.005", "0.95", "1", 947, 93617),
    ] {
        let accuracy = format!("{}", 1.0 - claim_error.parse::<f64>().unwrap());
        let (code, doc) = gapcert_json(&[
            "plan",
            "holdout",
            "--error-rate",
            rate,
            "--claim-accuracy",
            &accuracy,
            "--confidence",
            confidence,
            "--candidates",
            candidates,
            "--format",
            "json",
        ]);
        assert_eq!(code, 0);
        assert_eq!(
            doc["holdout_needed_binomial"], binomial,
            "{rate} vs {claim_error}"
        );
        assert_eq!(
            doc["holdout_needed_hoeffding"], hoeffding,
            "{rate} vs {claim_error}"
        );
    }
}

#[test]
fn plan_holdout_sentence_shows_the_claimed_error_without_float_noise() {
    // 1.0 − 0.97 is 0.030000000000000027 in binary floating point; the claim is the
    // decimal complement, 0.03 (src/ingest/decimal.rs), in the sentence as in the
    // JSON. Only the wording is checked here; the sizes are checked against the
    // reference table in the test above.
    let plan = [
        "plan",
        "holdout",
        "--error-rate",
        "0.02",
        "--claim-accuracy",
        "0.97",
    ];
    let text = stdout(&gapcert(&plan));
    assert!(
        text.contains(
            "To certify accuracy ≥ 0.97 (error ≤ 0.03) at an observed error rate of 0.02"
        ),
        "{text}"
    );
    let (code, doc) = gapcert_json(&[&plan[..], &["--format", "json"]].concat());
    assert_eq!(code, 0);
    assert_eq!(doc["claim_error_rate"].as_f64(), Some(0.03));
}

#[test]
fn plan_train_matches_reference_sample_sizes() {
    for (args, expected) in [
        (
            vec!["--family", "vc", "--vc-dim", "3", "--tolerance", "0.05"],
            127_824u64,
        ),
        (
            vec!["--family", "linear", "--dim", "2", "--tolerance", "0.2"],
            4521,
        ),
        (vec!["--family", "ray", "--tolerance", "0.5"], 350),
        (
            vec!["--family", "finite", "--size", "1000", "--tolerance", "0.2"],
            2258,
        ),
    ] {
        let mut all = vec!["plan", "train"];
        all.extend(args.iter());
        all.extend(["--format", "json"]);
        let (code, doc) = gapcert_json(&all);
        assert_eq!(code, 0);
        assert_eq!(doc["train_needed"], expected, "{args:?}");
        assert!(
            doc["vc_allowance_at_train_needed"].as_f64().unwrap()
                <= doc["tolerance"].as_f64().unwrap()
        );
    }
}

#[test]
fn calculators_reject_bad_arguments_with_exit_2() {
    for args in [
        vec![
            "plan",
            "holdout",
            "--error-rate",
            "1.5",
            "--claim-accuracy",
            "0.9",
        ],
        vec![
            "plan",
            "holdout",
            "--error-rate",
            "0.1",
            "--claim-accuracy",
            "0.9",
            "--confidence",
            "1",
        ],
        vec!["plan", "train", "--family", "linear", "--tolerance", "0.1"],
        vec![
            "plan",
            "train",
            "--family",
            "nonesuch",
            "--tolerance",
            "0.1",
        ],
        vec!["growth", "--family", "linear", "--dim", "-3"],
        vec!["audit"],
        vec!["audit", "fixtures/demo/runs.csv", "--confidence", "95"],
        vec!["audit", "fixtures/demo/runs.csv", "--map", "nonsense"],
        vec!["audit", "fixtures/demo/runs.csv", "--map", "not_a_column=x"],
    ] {
        let output = gapcert(&args);
        assert_eq!(
            output.status.code(),
            Some(2),
            "{args:?}: {}",
            stderr(&output)
        );
        assert!(!stderr(&output).contains("panicked"), "{args:?}");
        assert!(!stderr(&output).trim().is_empty(), "{args:?}: no message");
    }
}

#[test]
fn families_lists_every_family_with_a_source() {
    let (code, doc) = gapcert_json(&["families", "--format", "json"]);
    assert_eq!(code, 0);
    let keys: Vec<&str> = doc
        .as_array()
        .unwrap()
        .iter()
        .map(|f| f["key"].as_str().unwrap())
        .collect();
    for key in [
        "ray",
        "interval",
        "linear",
        "box",
        "stump",
        "finite",
        "tree",
        "vc",
        "relu_net",
        "threshold_net",
    ] {
        assert!(keys.contains(&key), "{key}");
    }
    for family in doc.as_array().unwrap() {
        assert!(!family["source"].as_str().unwrap().is_empty());
    }
}

#[test]
fn quiet_prints_nothing_and_pipes_get_no_progress_output() {
    let output = gapcert(&["demo", "--quiet"]);
    assert_eq!(output.status.code(), Some(0));
    assert!(stdout(&output).is_empty() && stderr(&output).is_empty());
    // stderr is a pipe here: no progress bar, no colour codes.
    let output = gapcert(&["demo"]);
    assert!(stderr(&output).is_empty(), "{}", stderr(&output));
    assert!(
        !stdout(&output).contains('\u{1b}'),
        "colour codes in piped output"
    );
}

#[test]
fn verbose_lists_skipped_files() {
    let output = gapcert(&["audit", "fixtures/edge/mixed", "-v"]);
    assert!(
        stderr(&output).contains("README.txt"),
        "{}",
        stderr(&output)
    );
}
