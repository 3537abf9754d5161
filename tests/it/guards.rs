//! A gate that user slips cannot open, outputs that cannot destroy inputs, and
//! verdicts that explain themselves (issue: guards). Each test names the slip it
//! protects against; every one of them failed on the build before the guards
//! (`GAPCERT_BIN=<older gapcert> cargo test --release --test it guards` shows it).

use std::path::Path;
use std::process::{Command, Output};

use serde_json::Value;

use crate::common::{binary, gapcert, gapcert_json, root, stderr, stdout};

/// Runs gapcert in `dir` with extra environment variables.
fn gapcert_in(dir: &Path, args: &[&str], env: &[(&str, &str)]) -> Output {
    let mut command = Command::new(binary());
    command.args(args).current_dir(dir).env("NO_COLOR", "1");
    for (name, value) in env {
        command.env(name, value);
    }
    command.output().expect("run gapcert")
}

fn write(dir: &Path, name: &str, text: &str) -> std::path::PathBuf {
    let path = dir.join(name);
    std::fs::write(&path, text).unwrap();
    path
}

/// Invented runs: a 90 % claim on 40 errors in 1,000 (certified) and a 96 % claim on
/// 42 errors in 1,000, whose observed error is already above the claim.
const TWO_RUNS: &str = "run,holdout_n,holdout_misclassified,claimed_accuracy,holdout_set\n\
fine,1000,40,0.9,split-a\n\
over,1000,42,0.96,split-a\n";

#[test]
fn percent_on_a_log_of_fractions_is_an_input_error_not_a_green_gate() {
    // The demo logs hold fractions; read as percentages every claim would be a claim
    // of under 1 % accuracy, and certified.
    let output = gapcert(&["audit", "fixtures/demo/runs.csv", "--percent"]);
    assert_eq!(output.status.code(), Some(2), "{}", stdout(&output));
    let err = stderr(&output);
    assert!(err.contains("fixtures/demo/runs.csv"), "{err}");
    assert!(
        err.contains("holds fractions") && err.contains("--percent"),
        "{err}"
    );
    // The same slip with a claim from the command line.
    let output = gapcert(&[
        "audit",
        "fixtures/edge/percent.csv",
        "--percent",
        "--claim-accuracy",
        "0.95",
    ]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("--claim-accuracy 0.95 reads as 0.95 %"));
}

#[test]
fn claim_accuracy_and_confidence_read_on_the_logs_scale() {
    // Percentages: --confidence 99 and --claim-accuracy 95 are 0.99 and 0.95.
    let (code, doc) = gapcert_json(&[
        "audit",
        "fixtures/edge/percent.csv",
        "--percent",
        "--confidence",
        "99",
        "--claim-accuracy",
        "95",
        "--format",
        "json",
        "--gate",
        "never",
    ]);
    assert_eq!(code, 0);
    assert_eq!(doc["settings"]["confidence"], 0.99);
    assert_eq!(doc["settings"]["claim_accuracy"], 0.95);
    // Fractions: 95 is refused with the way out.
    let output = gapcert(&["audit", "fixtures/demo/runs.csv", "--confidence", "95"]);
    assert_eq!(output.status.code(), Some(2));
    let err = stderr(&output);
    assert!(err.contains("--confidence 95 is outside [0, 1]"), "{err}");
    assert!(err.contains("write 0.95, or pass --percent"), "{err}");
    // The summary says how the claims were read.
    let output = gapcert(&["audit", "fixtures/demo/runs.csv", "--gate", "never"]);
    assert!(stdout(&output).contains("Rates and claims read as fractions."));
    let output = gapcert(&["audit", "fixtures/edge/percent.csv", "--percent"]);
    assert!(stdout(&output).contains("Rates and claims read as percentages."));
}

#[test]
fn a_column_mapped_twice_is_an_error_whichever_way() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "runs.csv",
        "run,n_val,n_train,holdout_misclassified\na,1000,50000,10\n",
    );
    // Twice with --map: before, the last won silently (here the training size).
    let output = gapcert_in(
        dir.path(),
        &[
            "audit",
            "runs.csv",
            "--map",
            "holdout_n=n_val",
            "--map",
            "holdout_n=n_train",
        ],
        &[],
    );
    assert_eq!(output.status.code(), Some(2));
    let err = stderr(&output);
    assert!(
        err.contains("`holdout_n` is mapped twice") && err.contains("n_train"),
        "{err}"
    );
    // --map-file and --map naming the column differently.
    write(dir.path(), "map.json", r#"{"holdout_n": "n_val"}"#);
    let output = gapcert_in(
        dir.path(),
        &[
            "audit",
            "runs.csv",
            "--map-file",
            "map.json",
            "--map",
            "holdout_n=n_train",
        ],
        &[],
    );
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("mapped twice"));
    // The same rename in both is one rename.
    let output = gapcert_in(
        dir.path(),
        &[
            "audit",
            "runs.csv",
            "--map-file",
            "map.json",
            "--map",
            "holdout_n=n_val",
            "--gate",
            "never",
        ],
        &[],
    );
    assert_eq!(output.status.code(), Some(0), "{}", stderr(&output));
    // A key written twice in the map file.
    write(
        dir.path(),
        "twice.json",
        r#"{"holdout_n": "n_val", "holdout_n": "n_train"}"#,
    );
    let output = gapcert_in(
        dir.path(),
        &["audit", "runs.csv", "--map-file", "twice.json"],
        &[],
    );
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("the key `holdout_n` is written twice"));
}

#[test]
fn same_holdout_with_several_named_splits_is_an_error() {
    let output = gapcert(&["audit", "fixtures/demo/runs.csv", "--same-holdout"]);
    assert_eq!(output.status.code(), Some(2));
    let err = stderr(&output);
    assert!(
        err.contains("--same-holdout") && err.contains("9 splits"),
        "{err}"
    );
    // Streamed formats check it too, before writing anything.
    let output = gapcert(&[
        "audit",
        "fixtures/demo/runs.csv",
        "--same-holdout",
        "--format",
        "ndjson",
    ]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stdout(&output).is_empty());
}

#[test]
fn quiet_and_verbose_together_are_a_usage_error() {
    let output = gapcert(&["demo", "-q", "-v"]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("cannot be used with"));
}

#[test]
fn outputs_never_replace_inputs_or_each_other() {
    let dir = tempfile::tempdir().unwrap();
    let log = write(dir.path(), "victim.csv", TWO_RUNS);
    let before = std::fs::read(&log).unwrap();
    for (flag, format) in [
        ("--output", "csv"),
        ("--html", "table"),
        ("--certificate", "table"),
    ] {
        let output = gapcert_in(
            dir.path(),
            &[
                "audit",
                "victim.csv",
                "--format",
                format,
                flag,
                "victim.csv",
            ],
            &[],
        );
        assert_eq!(output.status.code(), Some(2), "{flag}");
        assert!(
            stderr(&output).contains("that is the input"),
            "{flag}: {}",
            stderr(&output)
        );
        assert_eq!(
            std::fs::read(&log).unwrap(),
            before,
            "{flag} replaced the log"
        );
    }
    // Through a folder and another spelling of the path.
    std::fs::create_dir(dir.path().join("logs")).unwrap();
    write(&dir.path().join("logs"), "a.csv", TWO_RUNS);
    let output = gapcert_in(
        dir.path(),
        &["audit", "logs", "-o", "./logs/../logs/a.csv"],
        &[],
    );
    assert_eq!(output.status.code(), Some(2));
    // Through a symbolic link.
    #[cfg(unix)]
    {
        std::os::unix::fs::symlink(&log, dir.path().join("link.csv")).unwrap();
        let output = gapcert_in(
            dir.path(),
            &["audit", "victim.csv", "-o", "link.csv", "--format", "csv"],
            &[],
        );
        assert_eq!(output.status.code(), Some(2));
    }
    // Two outputs to one file.
    let output = gapcert_in(
        dir.path(),
        &[
            "audit",
            "victim.csv",
            "-o",
            "same.json",
            "--format",
            "json",
            "--certificate",
            "same.json",
        ],
        &[],
    );
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("both name"), "{}", stderr(&output));
    assert!(!dir.path().join("same.json").exists());
    assert_eq!(std::fs::read(&log).unwrap(), before);
}

#[test]
fn every_verdict_explains_itself_in_every_format() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "runs.csv", TWO_RUNS);
    let (_, doc) = {
        let output = gapcert_in(
            dir.path(),
            &["audit", "runs.csv", "--format", "json", "--gate", "never"],
            &[],
        );
        (0, serde_json::from_slice::<Value>(&output.stdout).unwrap())
    };
    let over = doc["runs"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["run"] == "over")
        .unwrap();
    assert_eq!(over["verdict"], "unproven");
    let why = over["explanation"].as_str().unwrap();
    assert!(
        why.contains("already at or above the claim, so no held-out size can certify it"),
        "{why}"
    );
    let certifiable = over["certifiable_accuracy"].as_f64().unwrap();
    assert!((certifiable - (1.0 - over["error_upper_bound"].as_f64().unwrap())).abs() < 1e-15);
    // The same sentence in the human-readable formats, and in the flat ones with
    // --explain (without it they carry codes and numbers only).
    for format in ["ndjson", "csv", "markdown", "table"] {
        let output = gapcert_in(
            dir.path(),
            &[
                "audit",
                "runs.csv",
                "--format",
                format,
                "--gate",
                "never",
                "--explain",
            ],
            &[],
        );
        let text = stdout(&output);
        assert!(
            text.contains(why),
            "{format}: the explanation is missing\n{text}"
        );
        assert!(text.contains("certifiable"), "{format}");
    }
    // plan holdout says the same in words.
    let output = gapcert(&[
        "plan",
        "holdout",
        "--error-rate",
        "0.06",
        "--claim-accuracy",
        "0.96",
    ]);
    let text = stdout(&output);
    assert!(
        text.contains("no held-out set, however large, can certify the claim"),
        "{text}"
    );
    assert!(!text.contains("never (the error rate"), "{text}");
}

#[test]
fn the_table_shows_claims_as_accuracy_with_k_and_both_bounds() {
    let output = gapcert_in(&root(), &["demo"], &[("COLUMNS", "200")]);
    let text = stdout(&output);
    // The runs' table starts at its first border (the claims come first).
    let header: String = text
        .lines()
        .skip_while(|l| !l.starts_with('┌'))
        .take(4)
        .collect::<Vec<_>>()
        .join(" ");
    for name in ["claimed", "accuracy", "K", "lower", "upper", "certifiable"] {
        assert!(header.contains(name), "{name} missing: {header}");
    }
    // kw-lin24-bands claims 90 % accuracy: the cell says 90.00%, not the error 10.00%.
    let row = text
        .lines()
        .find(|l| l.starts_with('│') && l.contains("kw-lin24-bands"))
        .unwrap();
    assert!(
        row.contains("90.00%") && row.contains("7.67%") && row.contains("9.42%"),
        "{row}"
    );
    // The interval stays on one line: no cell of it wraps.
    assert!(row.contains("7.59%–9.51%"), "{row}");
    // Finding sentences come with the table.
    assert!(
        text.contains("holdout_reused: 6 models were compared"),
        "{text}"
    );
}

#[test]
fn columns_is_honoured_and_no_line_is_wider() {
    for width in [80usize, 120] {
        let output = gapcert_in(&root(), &["demo"], &[("COLUMNS", &width.to_string())]);
        let text = stdout(&output);
        for line in text.lines() {
            assert!(line.chars().count() <= width, "{width}: {line}");
        }
        assert!(text.contains(&format!("Left out to fit the terminal ({width} columns)")));
    }
    let output = gapcert_in(&root(), &["families"], &[("COLUMNS", "80")]);
    let text = stdout(&output);
    assert!(text.lines().all(|l| l.chars().count() <= 80), "{text}");
    assert!(text.lines().count() < 70, "{} lines", text.lines().count());
    // No word of a family's source is split across lines.
    let (_, families) = gapcert_json(&["families", "--format", "json"]);
    let words: Vec<&str> = text.split_whitespace().collect();
    for family in families.as_array().unwrap() {
        for word in family["source"].as_str().unwrap().split_whitespace() {
            assert!(words.contains(&word), "{word} was split");
        }
    }
}

#[test]
fn only_and_top_choose_the_runs_a_long_audit_shows() {
    let output = gapcert(&["demo", "--only", "unproven,refuted"]);
    let text = stdout(&output);
    // The runs' table rows (the claims section above it names runs too).
    let rows: Vec<&str> = text.lines().filter(|l| l.starts_with('│')).collect();
    let listed = |name: &str| rows.iter().any(|l| l.contains(name));
    assert!(listed("kw-relu-3x80") && listed("kw-lin24-l1"));
    assert!(!listed("kw-lin24-bands"), "{text}");
    assert!(text.contains("Showing 3 of 21 runs"), "{text}");
    let output = gapcert(&[
        "audit",
        "fixtures/demo/runs.csv",
        "--top",
        "2",
        "--format",
        "markdown",
    ]);
    let text = stdout(&output);
    assert_eq!(
        text.lines()
            .filter(|l| l.starts_with("| unproven")
                || l.starts_with("| refuted")
                || l.starts_with("| certified"))
            .count(),
        2
    );
    assert!(text.contains("19 left out"), "{text}");
    // A long audit shows its 1,000 worst runs and says so.
    let dir = tempfile::tempdir().unwrap();
    let mut log = String::from("run,holdout_n,holdout_misclassified,claimed_accuracy\n");
    for i in 0..3000 {
        log.push_str(&format!("r{i},1000,{},0.9\n", 20 + i % 100));
    }
    write(dir.path(), "many.csv", &log);
    let output = gapcert_in(dir.path(), &["audit", "many.csv"], &[]);
    let text = stdout(&output);
    assert!(
        text.contains("Showing 1,000 of 3,000 runs"),
        "{}",
        &text[text.len().saturating_sub(2000)..]
    );
}

#[test]
fn claims_that_look_like_slips_fail_the_gate_unless_allowed() {
    let dir = tempfile::tempdir().unwrap();
    // An error rate written as an accuracy (4 % "accuracy" next to a 3 % error), an
    // accuracy written as an error rate, a low claim, and a held-out size equal to the
    // training size. Each is certified or harmless on its own numbers.
    write(
        dir.path(),
        "slips.csv",
        "run,train_n,holdout_n,holdout_misclassified,claimed_accuracy,claimed_error_rate\n\
error_as_accuracy,50000,2000,60,0.04,\n\
accuracy_as_error,50000,2000,60,,0.96\n\
low_claim,50000,2000,200,0.45,\n\
same_sizes,2000,2000,60,0.9,\n",
    );
    let output = gapcert_in(
        dir.path(),
        &[
            "audit",
            "slips.csv",
            "--format",
            "json",
            "--gate",
            "refuted",
        ],
        &[],
    );
    assert_eq!(
        output.status.code(),
        Some(1),
        "the gate must fail: {}",
        stderr(&output)
    );
    let doc: Value = serde_json::from_slice(&output.stdout).unwrap();
    let codes = |name: &str| -> Vec<String> {
        doc["runs"]
            .as_array()
            .unwrap()
            .iter()
            .find(|r| r["run"] == name)
            .unwrap()["findings"]
            .as_array()
            .unwrap()
            .iter()
            .map(|f| f["code"].as_str().unwrap().to_string())
            .collect()
    };
    assert!(codes("error_as_accuracy").contains(&"claim_looks_like_error_rate".into()));
    assert!(codes("accuracy_as_error").contains(&"claim_looks_like_accuracy".into()));
    assert!(codes("low_claim").contains(&"claim_below_half".into()));
    assert!(codes("same_sizes").contains(&"holdout_n_equals_train_n".into()));
    assert_eq!(doc["summary"]["gate_findings"], 4);
    // Allowed, the gate decides on verdicts alone (all certified or no worse).
    let output = gapcert_in(
        dir.path(),
        &[
            "audit",
            "slips.csv",
            "--gate",
            "refuted",
            "--gate-allow",
            "claim_looks_like_error_rate,claim_looks_like_accuracy",
            "--gate-allow",
            "claim_below_half",
            "--gate-allow",
            "holdout_n_equals_train_n",
        ],
        &[],
    );
    assert_eq!(output.status.code(), Some(0), "{}", stdout(&output));
    // Only these codes can be allowed.
    let output = gapcert_in(
        dir.path(),
        &["audit", "slips.csv", "--gate-allow", "holdout_reused"],
        &[],
    );
    assert_eq!(output.status.code(), Some(2));
}

#[test]
fn values_and_messages_agree_and_family_typos_get_a_suggestion() {
    // theory_vacuous: the value is clipped to 1, and the sentence says so.
    let (_, doc) = gapcert_json(&["demo", "--format", "json"]);
    let relu = doc["runs"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["run"] == "kw-relu-3x80")
        .unwrap();
    assert_eq!(relu["vc_bound"], 1.0);
    let message = relu["findings"]
        .as_array()
        .unwrap()
        .iter()
        .find(|f| f["code"] == "theory_vacuous")
        .unwrap()["message"]
        .as_str()
        .unwrap();
    assert!(message.contains("so the VC bound is 1"), "{message}");
    // The training size it would need, grouped like every other count in a sentence.
    let needed = crate::common::group(relu["train_needed"].as_u64().unwrap());
    assert!(
        message.contains(&format!("need about {needed} training examples")),
        "{message}"
    );
    // A typo in a family key.
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "typo.csv",
        "run,family,leaves,features,train_n,train_error_rate,holdout_n,holdout_misclassified\nt,tre,8,10,5000,0.1,1000,100\n",
    );
    let output = gapcert_in(dir.path(), &["audit", "typo.csv", "--format", "json"], &[]);
    let doc: Value = serde_json::from_slice(&output.stdout).unwrap();
    let message = doc["runs"][0]["findings"][0]["message"]
        .as_str()
        .unwrap()
        .to_string();
    assert!(message.contains("did you mean `tree`?"), "{message}");
    // plan train says the same as the audit about an unknown family.
    let output = gapcert(&["plan", "train", "--family", "tre"]);
    assert_eq!(output.status.code(), Some(2));
    assert!(stderr(&output).contains("did you mean `tree`?"));
    let output = gapcert(&["plan", "train", "--family", "gbm"]);
    assert!(stderr(&output).contains("family `gbm` has no known growth bound"));
}

/// Issue 23, item 4: under `--lenient`, a bad row that carries a claim (its own, or
/// `--claim-accuracy`'s) fails the gate, and every format names it; a bad row without
/// a claim is skipped as before.
#[test]
fn a_skipped_row_with_a_claim_fails_the_gate_in_every_format() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "runs.csv",
        "run,holdout_n,holdout_error_rate,claimed_accuracy\n\
good,1000,0.01,0.95\n\
bad,1000,1.5,0.99\n",
    );
    write(
        dir.path(),
        "unclaimed.csv",
        "run,holdout_n,holdout_error_rate\nfine,1000,0.01\nbroken,1000,1.5\n",
    );
    let json = gapcert_in(
        dir.path(),
        &["audit", "runs.csv", "--lenient", "--format", "json"],
        &[],
    );
    assert_eq!(json.status.code(), Some(1), "{}", stderr(&json));
    let doc: Value = serde_json::from_slice(&json.stdout).unwrap();
    assert_eq!(doc["summary"]["gate"], "fail");
    assert_eq!(doc["summary"]["claims_skipped"], 1);
    assert_eq!(doc["skipped_rows"][0]["source"], "runs.csv:2");
    assert_eq!(doc["skipped_rows"][0]["carries_claim"], true);
    for format in ["table", "markdown"] {
        let output = gapcert_in(
            dir.path(),
            &["audit", "runs.csv", "--lenient", "--format", format],
            &[],
        );
        assert_eq!(output.status.code(), Some(1), "{format}");
        let text = stdout(&output);
        assert!(
            text.contains("carried a claim that could not be audited"),
            "{format}: {text}"
        );
        assert!(text.contains("runs.csv:2"), "{format}: {text}");
    }
    // Without a claim in the row the gate passes; with --claim-accuracy it fails.
    let output = gapcert_in(dir.path(), &["audit", "unclaimed.csv", "--lenient"], &[]);
    assert_eq!(output.status.code(), Some(0), "{}", stdout(&output));
    let output = gapcert_in(
        dir.path(),
        &[
            "audit",
            "unclaimed.csv",
            "--lenient",
            "--claim-accuracy",
            "0.9",
            "--format",
            "json",
        ],
        &[],
    );
    assert_eq!(output.status.code(), Some(1), "{}", stderr(&output));
    let doc: Value = serde_json::from_slice(&output.stdout).unwrap();
    assert_eq!(doc["skipped_rows"][0]["carries_claim"], true);
}

/// A log skipped whole under `--lenient` (here: no held-out size column) fails the
/// gate when it may carry claims: a claim column, a column mapped to one, or
/// `--claim-accuracy`; one without claims is skipped as before. The gate never passes
/// on claims it could not read.
#[test]
fn a_log_skipped_whole_with_claims_fails_the_gate() {
    let dir = tempfile::tempdir().unwrap();
    let good = "run,holdout_n,holdout_error_rate,claimed_accuracy\ngood,1000,0.01,0.95\n";
    write(dir.path(), "good.csv", good);
    write(
        dir.path(),
        "claimed.csv",
        "run,holdout_error_rate,claimed_accuracy\nlost,0.01,0.99\n",
    );
    write(
        dir.path(),
        "mapped.csv",
        "run,holdout_error_rate,promised\nlost,0.01,0.99\n",
    );
    write(
        dir.path(),
        "unclaimed.csv",
        "run,holdout_error_rate\nlost,0.01\n",
    );
    let audit = |logs: &[&str], extra: &[&str]| {
        let mut args = vec!["audit"];
        args.extend(logs);
        args.extend(["--lenient", "--format", "json"]);
        args.extend(extra);
        let output = gapcert_in(dir.path(), &args, &[]);
        let doc: Value = serde_json::from_slice(&output.stdout).unwrap_or(Value::Null);
        (output.status.code(), doc)
    };
    let (code, doc) = audit(&["good.csv", "claimed.csv"], &[]);
    assert_eq!(code, Some(1));
    assert_eq!(doc["summary"]["claims_skipped"], 1);
    assert_eq!(doc["skipped_files"][0]["carries_claims"], true);
    let (code, _) = audit(
        &["good.csv", "mapped.csv"],
        &["--map", "claimed_accuracy=promised"],
    );
    assert_eq!(code, Some(1));
    let (code, doc) = audit(&["good.csv", "unclaimed.csv"], &[]);
    assert_eq!(code, Some(0), "{doc}");
    assert!(doc["skipped_files"][0].get("carries_claims").is_none());
    let (code, _) = audit(&["good.csv", "unclaimed.csv"], &["--claim-accuracy", "0.9"]);
    assert_eq!(code, Some(1));
}
