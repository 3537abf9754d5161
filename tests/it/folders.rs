//! Experiment folders as teams keep them (issue: experiment folders): nested JSON,
//! mixed logs, gapcert's own outputs, copies, ambiguous columns, spreadsheet
//! exports, and messages that name the real cause. Every folder is generated in a
//! temporary directory; the runs in them are invented. Each test failed on the build
//! before (`GAPCERT_BIN=<older gapcert> cargo test --release --test it folders`).

use std::path::{Path, PathBuf};

use polars::prelude::*;
use serde_json::Value;

use crate::common::{root, run_in, text};

/// Runs gapcert in `dir` with `--format json` and parses the document.
fn json_in(dir: &Path, args: &[&str]) -> Value {
    let mut all = args.to_vec();
    all.extend(["--format", "json"]);
    let output = run_in(dir, &all);
    serde_json::from_slice(&output.stdout).unwrap_or_else(|error| {
        panic!(
            "{args:?}: no JSON ({error}), exit {:?}: {}",
            output.status.code(),
            text(&output.stderr)
        )
    })
}

/// Asserts exit 2 and returns standard error.
fn fails(dir: &Path, args: &[&str]) -> String {
    let output = run_in(dir, args);
    assert_eq!(
        output.status.code(),
        Some(2),
        "{args:?}: {}{}",
        text(&output.stdout),
        text(&output.stderr)
    );
    text(&output.stderr)
}

fn write(dir: &Path, name: &str, contents: &str) -> PathBuf {
    let path = dir.join(name);
    std::fs::create_dir_all(path.parent().unwrap()).unwrap();
    std::fs::write(&path, contents).unwrap();
    path
}

/// The error of auditing `target` with the held-out size mapped to `metrics.val.n` and
/// the held-out accuracy to `accuracy_path` (the nested logs below).
fn fails_mapping(dir: &Path, target: &str, accuracy_path: &str) -> String {
    let accuracy = format!("holdout_accuracy={accuracy_path}");
    fails(
        dir,
        &[
            "audit",
            target,
            "--map",
            &accuracy,
            "--map",
            "holdout_n=metrics.val.n",
        ],
    )
}

fn run_named<'a>(doc: &'a Value, name: &str) -> &'a Value {
    doc["runs"]
        .as_array()
        .unwrap()
        .iter()
        .find(|r| r["run"] == name)
        .unwrap_or_else(|| panic!("no run {name}"))
}

/// Invented sweep output: what a training script writes per run, metrics nested.
fn nested_sweep(dir: &Path) {
    for (run, acc, lr) in [("sweep-a", 0.93, 0.1), ("sweep-b", 0.95, 0.01)] {
        write(
            dir,
            &format!("sweep/{run}/metrics.json"),
            &format!(
                r#"{{"run": "{run}", "metrics": {{"val": {{"acc": {acc}, "n": 5000, "hist": [1, 2]}}}}, "config": {{"lr": {lr}, "holdout": "val-2026"}}}}"#
            ),
        );
    }
}

#[test]
fn dotted_paths_reach_into_nested_json() {
    let dir = tempfile::tempdir().unwrap();
    nested_sweep(dir.path());
    let doc = json_in(
        dir.path(),
        &[
            "audit",
            "sweep",
            "--map",
            "holdout_accuracy=metrics.val.acc",
            "--map",
            "holdout_n=metrics.val.n",
            "--map",
            "holdout_set=config.holdout",
            "--claim-accuracy",
            "0.9",
            "--gate",
            "never",
        ],
    );
    let a = run_named(&doc, "sweep-a");
    assert_eq!(a["holdout_n"], 5000);
    assert_eq!(a["holdout_misclassified"], 350);
    assert_eq!(a["holdout_set"], "val-2026");
    // Both runs were compared on one split: K counts them together.
    assert_eq!(a["candidates"], 2);

    // A path that lands on an object names it and its fields.
    let err = fails_mapping(dir.path(), "sweep", "metrics.val");
    assert!(err.contains("`metrics.val` is an object"), "{err}");
    assert!(err.contains("metrics.val.acc"), "{err}");
    // A path that lands on an array says so, with the file and row.
    let err = fails_mapping(dir.path(), "sweep", "metrics.val.hist");
    assert!(
        err.contains("metrics.json:1") && err.contains("JSON list"),
        "{err}"
    );
    // An absent path lists the file's columns, dotted.
    let err = fails_mapping(dir.path(), "sweep", "metrics.test.acc");
    assert!(
        err.contains("no column `metrics.test.acc`") && err.contains("metrics.val.acc"),
        "{err}"
    );
}

/// Parquet and Arrow logs written by a script that keeps its metrics in nested
/// records (struct columns), as the JSON sweep above nests objects (invented runs).
fn nested_frame() -> DataFrame {
    let n = Series::new("n".into(), [4000i64, 4000]);
    let acc = Series::new("acc".into(), [0.96, 0.94]);
    let val = StructChunked::from_series("val".into(), 2, [n, acc].iter())
        .unwrap()
        .into_series();
    let metrics = StructChunked::from_series("metrics".into(), 2, [val].iter())
        .unwrap()
        .into_series();
    DataFrame::new(
        2,
        vec![
            Series::new("run".into(), ["nested-1", "nested-2"]).into_column(),
            metrics.into_column(),
            Series::new("claimed_accuracy".into(), [0.9, 0.9]).into_column(),
        ],
    )
    .unwrap()
}

#[test]
fn dotted_paths_reach_into_parquet_and_arrow_struct_columns() {
    let dir = tempfile::tempdir().unwrap();
    let mut frame = nested_frame();
    let parquet = std::fs::File::create(dir.path().join("nested.parquet")).unwrap();
    ParquetWriter::new(parquet).finish(&mut frame).unwrap();
    let arrow = std::fs::File::create(dir.path().join("nested.arrow")).unwrap();
    IpcWriter::new(arrow).finish(&mut frame).unwrap();
    for file in ["nested.parquet", "nested.arrow"] {
        let doc = json_in(
            dir.path(),
            &[
                "audit",
                file,
                "--map",
                "holdout_accuracy=metrics.val.acc",
                "--map",
                "holdout_n=metrics.val.n",
                "--gate",
                "never",
            ],
        );
        let run = run_named(&doc, "nested-2");
        assert_eq!(run["holdout_n"], 4000, "{file}");
        assert_eq!(run["holdout_misclassified"], 240, "{file}");
        // A path that stops at a struct names it and its fields, as for JSON objects.
        let err = fails_mapping(dir.path(), file, "metrics.val");
        assert!(
            err.contains("`metrics.val` is an object") && err.contains("metrics.val.acc"),
            "{file}: {err}"
        );
        // An absent path lists the dotted columns and the closest one.
        let err = fails_mapping(dir.path(), file, "metrics.val.ac");
        assert!(
            err.contains("did you mean `metrics.val.acc`?"),
            "{file}: {err}"
        );
    }
}

/// A notebook export with its own names (percentages) and a Parquet log with the
/// canonical names (fractions), on one shared split.
fn mixed_folder(dir: &Path, notebook_in_percent: bool) {
    let (a, b, claim) = if notebook_in_percent {
        ("94.5", "95.5", "90")
    } else {
        ("0.945", "0.955", "0.9")
    };
    write(
        dir,
        "mixed/notebook-export.csv",
        &format!(
            "run,n_val,val_acc,claimed_accuracy,holdout_set\nnb-1,3000,{a},{claim},s1\nnb-2,3000,{b},{claim},s1\n"
        ),
    );
    let mut frame = df!(
        "run" => ["pq-1", "pq-2"],
        "holdout_n" => [3000i64, 3000],
        "holdout_error_rate" => [0.05, 0.04],
        "claimed_accuracy" => [0.9, 0.9],
        "holdout_set" => ["s1", "s1"],
    )
    .unwrap();
    let file = std::fs::File::create(dir.join("mixed/runs.parquet")).unwrap();
    ParquetWriter::new(file).finish(&mut frame).unwrap();
}

#[test]
fn a_mapping_applies_only_to_files_with_the_mapped_column() {
    let dir = tempfile::tempdir().unwrap();
    mixed_folder(dir.path(), false);
    let args = [
        "audit",
        "mixed",
        "--map",
        "holdout_n=n_val",
        "--map",
        "holdout_accuracy=val_acc",
        "--gate",
        "never",
    ];
    let doc = json_in(dir.path(), &args);
    assert_eq!(doc["runs"].as_array().unwrap().len(), 4);
    // K is counted across both files.
    for run in ["nb-1", "pq-1"] {
        assert_eq!(run_named(&doc, run)["candidates"], 4, "{run}");
    }
    assert_eq!(run_named(&doc, "nb-1")["holdout_misclassified"], 165);
    // Under -v the Parquet file is said to use its own column.
    let mut verbose = args.to_vec();
    verbose.push("-v");
    let err = text(&run_in(dir.path(), &verbose).stderr);
    assert!(
        err.contains("runs.parquet") && err.contains("read from its own column `holdout_n`"),
        "{err}"
    );
}

#[test]
fn map_file_sections_rename_and_scale_per_file() {
    let dir = tempfile::tempdir().unwrap();
    mixed_folder(dir.path(), true);
    write(
        dir.path(),
        "map.json",
        r#"{"files": [{"match": "notebook-*.csv", "map": {"holdout_n": "n_val", "holdout_accuracy": "val_acc"}, "percent": true}]}"#,
    );
    let doc = json_in(
        dir.path(),
        &[
            "audit",
            "mixed",
            "--map-file",
            "map.json",
            "--gate",
            "never",
        ],
    );
    assert_eq!(doc["runs"].as_array().unwrap().len(), 4);
    let nb = run_named(&doc, "nb-1");
    assert!((nb["holdout_error_rate"].as_f64().unwrap() - 0.055).abs() < 1e-12);
    assert!((nb["claim_error_rate"].as_f64().unwrap() - 0.1).abs() < 1e-12);
    let pq = run_named(&doc, "pq-1");
    assert!((pq["holdout_error_rate"].as_f64().unwrap() - 0.05).abs() < 1e-12);
    assert_eq!(pq["candidates"], 4);
    // --percent for the whole folder would misread the Parquet file: an error.
    let err = fails(
        dir.path(),
        &[
            "audit",
            "mixed",
            "--map",
            "holdout_n=n_val",
            "--map",
            "holdout_accuracy=val_acc",
            "--percent",
        ],
    );
    assert!(
        err.contains("runs.parquet") && err.contains("holds fractions"),
        "{err}"
    );
}

#[test]
fn own_reports_and_certificates_are_not_read_as_logs() {
    let dir = tempfile::tempdir().unwrap();
    let exp = dir.path().join("exp");
    std::fs::create_dir_all(&exp).unwrap();
    std::fs::copy(root().join("fixtures/demo/runs.csv"), exp.join("runs.csv")).unwrap();
    let audit = |args: &[&str]| {
        let mut all = vec!["audit", "exp", "--gate", "never"];
        all.extend(args);
        let output = run_in(dir.path(), &all);
        assert_eq!(
            output.status.code(),
            Some(0),
            "{args:?}: {}",
            text(&output.stderr)
        );
        output
    };
    audit(&[
        "-o",
        "exp/audit.csv",
        "--certificate",
        "exp/audit.cert.json",
    ]);
    audit(&["-o", "exp/audit.json"]);
    audit(&["-o", "exp/audit.ndjson"]);
    audit(&["-o", "exp/audit.parquet"]);
    audit(&["--format", "csv", "-o", "exp/renamed-report.txt.csv"]);
    let output = audit(&["-v", "--format", "json"]);
    let doc: Value = serde_json::from_slice(&output.stdout).unwrap();
    assert_eq!(doc["summary"]["runs"], 21);
    let err = text(&output.stderr);
    for name in [
        "audit.csv",
        "audit.cert.json",
        "audit.json",
        "audit.ndjson",
        "audit.parquet",
        "renamed-report.txt.csv",
    ] {
        assert!(err.contains(&format!("exp/{name}")), "{name}: {err}");
    }
    assert!(err.contains("not a log"), "{err}");
    // The certificate was written before the later reports; verify leaves them out.
    let output = run_in(dir.path(), &["verify", "exp/audit.cert.json"]);
    assert_eq!(
        output.status.code(),
        Some(0),
        "{}{}",
        text(&output.stdout),
        text(&output.stderr)
    );
}

#[test]
fn copies_of_runs_count_once_and_repeated_identifiers_are_flagged() {
    let dir = tempfile::tempdir().unwrap();
    let demo = std::fs::read_to_string(root().join("fixtures/demo/runs.csv")).unwrap();
    let single = json_in(
        &root(),
        &["audit", "fixtures/demo/runs.csv", "--gate", "never"],
    );
    write(dir.path(), "logs/runs.csv", &demo);
    write(dir.path(), "logs/runs (copy).csv", &demo);
    // Re-saved with other line ends: other bytes, the same runs.
    write(dir.path(), "logs/resaved.csv", &demo.replace('\n', "\r\n"));
    let doc = json_in(dir.path(), &["audit", "logs", "--gate", "never"]);
    assert_eq!(doc["summary"]["runs"], 21);
    assert_eq!(doc["summary"]["copies_set_aside"], 42);
    assert_eq!(doc["summary"]["rows_read"], 63);
    for (run, alone) in doc["runs"]
        .as_array()
        .unwrap()
        .iter()
        .zip(single["runs"].as_array().unwrap())
    {
        assert_eq!(run["candidates"], alone["candidates"], "{}", run["run"]);
        assert_eq!(run["error_upper_bound"], alone["error_upper_bound"]);
        assert_eq!(run["copies"].as_array().map(Vec::len), Some(2), "{run}");
    }
    // Streamed (JSON lines) the same runs count once too.
    let output = run_in(
        dir.path(),
        &["audit", "logs", "--format", "ndjson", "--gate", "never"],
    );
    assert_eq!(text(&output.stdout).lines().count(), 21);
    let summary = text(&run_in(dir.path(), &["audit", "logs", "--gate", "never"]).stdout);
    assert!(
        summary.contains("42 copies of runs read elsewhere set aside"),
        "{summary}"
    );

    // One identifier, two different runs: both stay, both flagged.
    write(
        dir.path(),
        "repeated.csv",
        "run,holdout_n,holdout_misclassified,claimed_accuracy\nkw-a,1000,40,0.9\nkw-a,1000,45,0.9\n",
    );
    let doc = json_in(dir.path(), &["audit", "repeated.csv", "--gate", "never"]);
    let runs = doc["runs"].as_array().unwrap();
    assert_eq!(runs.len(), 2);
    for run in runs {
        assert!(
            run["findings"]
                .as_array()
                .unwrap()
                .iter()
                .any(|f| f["code"] == "run_id_repeated"),
            "{run}"
        );
    }
}

#[test]
fn two_columns_for_one_field_and_duplicate_keys_are_errors() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "cases.csv",
        "run,holdout_n,HOLDOUT_N,holdout_misclassified\na,1000,2000,40\n",
    );
    let err = fails(dir.path(), &["audit", "cases.csv"]);
    assert!(
        err.contains("cases.csv") && err.contains("`holdout_n`") && err.contains("`HOLDOUT_N`"),
        "{err}"
    );
    write(
        dir.path(),
        "mapped.csv",
        "run,n_val,holdout_n,holdout_misclassified\na,1000,2000,40\n",
    );
    let err = fails(
        dir.path(),
        &["audit", "mapped.csv", "--map", "holdout_n=n_val"],
    );
    assert!(
        err.contains("`n_val`") && err.contains("`holdout_n`"),
        "{err}"
    );
    write(
        dir.path(),
        "twice.jsonl",
        "{\"run\":\"a\",\"holdout_n\":1000,\"holdout_misclassified\":4}\n{\"run\":\"b\",\"holdout_n\":1000,\"holdout_n\":2000,\"holdout_misclassified\":4}\n",
    );
    let err = fails(dir.path(), &["audit", "twice.jsonl"]);
    assert!(
        err.contains("twice.jsonl:2") && err.contains("`holdout_n` is written twice"),
        "{err}"
    );
}

#[test]
fn spreadsheet_exports_read_with_separator_and_decimal_comma() {
    let dir = tempfile::tempdir().unwrap();
    // A European spreadsheet export: byte-order mark, semicolons, decimal commas.
    write(
        dir.path(),
        "export.csv",
        "\u{feff}run;holdout_n;holdout_error_rate;claimed_accuracy\nkw-eu-1;2000;0,045;0,9\nkw-eu-2;2000;0,035;0,9\n",
    );
    let err = fails(dir.path(), &["audit", "export.csv"]);
    assert!(err.contains("export.csv:1"), "{err}");
    assert!(
        err.contains("--separator ';'") && err.contains("--decimal-comma"),
        "{err}"
    );
    let doc = json_in(
        dir.path(),
        &[
            "audit",
            "export.csv",
            "--separator",
            ";",
            "--decimal-comma",
            "--gate",
            "never",
        ],
    );
    assert_eq!(run_named(&doc, "kw-eu-1")["holdout_misclassified"], 90);
    assert_eq!(run_named(&doc, "kw-eu-2")["holdout_error_rate"], 0.035);
    // A malformed row of an ordinary CSV is named by its row.
    write(
        dir.path(),
        "ragged.csv",
        "run,holdout_n,holdout_misclassified\na,1000,4\nb,1000,5,extra\nc,1000,6\n",
    );
    let err = fails(dir.path(), &["audit", "ragged.csv"]);
    assert!(err.contains("ragged.csv:2"), "{err}");
    assert!(
        !err.contains("ragged.csv:1:") && !err.contains("ragged.csv:3"),
        "{err}"
    );
}

#[test]
fn messages_name_the_real_cause() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "nan.jsonl",
        "{\"run\":\"a\",\"holdout_n\":1000,\"holdout_misclassified\":4}\n{\"run\":\"b\",\"holdout_n\":1000,\"holdout_error_rate\":NaN}\n",
    );
    let err = fails(dir.path(), &["audit", "nan.jsonl"]);
    assert!(
        err.contains("nan.jsonl:2") && err.contains("invalid JSON") && err.contains("NaN"),
        "{err}"
    );
    assert!(!err.contains("missing"), "{err}");

    write(
        dir.path(),
        "lines.json",
        "{\"run\":\"a\",\"holdout_n\":1000,\"holdout_misclassified\":4}\n{\"run\":\"b\",\"holdout_n\":1000,\"holdout_misclassified\":5}\n",
    );
    let err = fails(dir.path(), &["audit", "lines.json"]);
    assert!(
        err.contains(".jsonl") && err.contains("lines.json"),
        "{err}"
    );

    write(
        dir.path(),
        "huge.csv",
        "run,holdout_n,holdout_misclassified\na,1e30,4\n",
    );
    let err = fails(dir.path(), &["audit", "huge.csv"]);
    assert!(
        err.contains("huge.csv:1") && err.contains("too large"),
        "{err}"
    );
    assert!(!err.contains("not a whole number"), "{err}");
    assert!(
        err.contains("1 problem(s)"),
        "one cause, one problem: {err}"
    );

    write(
        dir.path(),
        "notebook.csv",
        "run,n_val,holdout_misclassified\na,1000,4\n",
    );
    let err = fails(
        dir.path(),
        &["audit", "notebook.csv", "--map", "holdout_n=nval"],
    );
    assert!(err.contains("did you mean `n_val`"), "{err}");
    assert!(err.contains("run, n_val, holdout_misclassified"), "{err}");
}

#[test]
fn kept_columns_reach_every_output() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "runs.csv",
        "run,holdout_n,holdout_misclassified,claimed_accuracy,git_commit,dataset_version\nkw-a,1000,40,0.9,abc123,v3\nkw-b,1000,30,0.9,,v4\n",
    );
    let keep = ["--keep", "git_commit,dataset_version", "--gate", "never"];
    let with = |args: &[&str]| -> Vec<String> {
        let mut all = vec!["audit", "runs.csv"];
        all.extend(keep);
        all.extend(args);
        all.into_iter().map(String::from).collect()
    };
    let json_args = with(&[]);
    let doc = json_in(
        dir.path(),
        &json_args.iter().map(String::as_str).collect::<Vec<_>>(),
    );
    let a = run_named(&doc, "kw-a");
    assert_eq!(a["kept"]["git_commit"], "abc123");
    assert_eq!(a["kept"]["dataset_version"], "v3");
    assert_eq!(run_named(&doc, "kw-b")["kept"]["git_commit"], Value::Null);

    for (name, needle) in [
        ("out.csv", "abc123,v3"),
        (
            "out.ndjson",
            "\"git_commit\":\"abc123\",\"dataset_version\":\"v3\"",
        ),
        ("out.md", "git\\_commit = abc123, dataset\\_version = v3"),
    ] {
        let args = with(&["-o", name]);
        let output = run_in(
            dir.path(),
            &args.iter().map(String::as_str).collect::<Vec<_>>(),
        );
        assert_eq!(output.status.code(), Some(0), "{}", text(&output.stderr));
        let written = std::fs::read_to_string(dir.path().join(name)).unwrap();
        assert!(written.contains(needle), "{name}: {written}");
    }
    let header = std::fs::read_to_string(dir.path().join("out.csv")).unwrap();
    assert!(header
        .lines()
        .next()
        .unwrap()
        .ends_with("copies,git_commit,dataset_version"));
    let args = with(&["-o", "out.parquet"]);
    run_in(
        dir.path(),
        &args.iter().map(String::as_str).collect::<Vec<_>>(),
    );
    let frame = ParquetReader::new(std::fs::File::open(dir.path().join("out.parquet")).unwrap())
        .finish()
        .unwrap();
    let column = frame.column("git_commit").unwrap().str().unwrap().clone();
    assert_eq!(column.get(0).or(column.get(1)), Some("abc123"));
    let table = text(
        &run_in(
            dir.path(),
            &with(&[]).iter().map(String::as_str).collect::<Vec<_>>(),
        )
        .stdout,
    );
    assert!(table.contains("git_commit = abc123"), "{table}");

    // A column no log has is a slip; a column gapcert writes itself cannot be kept.
    let err = fails(dir.path(), &["audit", "runs.csv", "--keep", "git_comit"]);
    assert!(err.contains("--keep git_comit"), "{err}");
    let err = fails(dir.path(), &["audit", "runs.csv", "--keep", "source"]);
    assert!(err.contains("--keep `source`"), "{err}");
}

#[test]
fn output_format_follows_the_output_extension() {
    let dir = tempfile::tempdir().unwrap();
    std::fs::copy(
        root().join("fixtures/demo/runs.csv"),
        dir.path().join("runs.csv"),
    )
    .unwrap();
    let output = run_in(
        dir.path(),
        &["audit", "runs.csv", "-o", "report.csv", "--gate", "never"],
    );
    assert_eq!(output.status.code(), Some(0), "{}", text(&output.stderr));
    let written = std::fs::read_to_string(dir.path().join("report.csv")).unwrap();
    assert!(written.starts_with("run,source,family,"), "{written}");
    let err = fails(
        dir.path(),
        &[
            "audit",
            "runs.csv",
            "--format",
            "table",
            "-o",
            "report2.csv",
        ],
    );
    assert!(
        err.contains("--format table") && err.contains("report2.csv"),
        "{err}"
    );
    assert!(!dir.path().join("report2.csv").exists());
}

#[test]
fn a_folder_of_many_csv_logs_does_not_nest_reads_on_one_stack() {
    // 1,500 small CSVs: read on rayon's pool, each polars read waited for its own pool
    // while the worker started the next file, until the stack overflowed (the build
    // before aborted every time on this folder).
    let dir = tempfile::tempdir().unwrap();
    for file in 0..1500 {
        let mut log =
            String::from("run,holdout_n,holdout_misclassified,claimed_accuracy,holdout_set\n");
        for row in 0..20 {
            log.push_str(&format!(
                "r{file}-{row},1000,{},0.9,s{}\n",
                20 + (file * 7 + row * 3) % 60,
                file % 7
            ));
        }
        std::fs::write(dir.path().join(format!("log-{file:04}.csv")), log).unwrap();
    }
    for format in ["json", "ndjson"] {
        let output = run_in(
            dir.path(),
            &["audit", ".", "--format", format, "--gate", "never"],
        );
        assert_eq!(
            output.status.code(),
            Some(0),
            "{format}: {}",
            text(&output.stderr)
        );
        if format == "ndjson" {
            assert_eq!(text(&output.stdout).lines().count(), 30_000);
        }
    }
}

/// A list column mapped to a number is one problem of the file, named with its type;
/// before, every row also said that the column was empty.
#[test]
fn a_list_column_mapped_to_a_number_is_one_problem() {
    let dir = tempfile::tempdir().unwrap();
    let mut frame = df!(
        "run" => ["l-1", "l-2", "l-3"],
        "holdout_error_rate" => [0.05, 0.04, 0.03],
    )
    .unwrap();
    let sizes = Series::new(
        "sizes".into(),
        [
            Series::new("".into(), [1000i64, 10]),
            Series::new("".into(), [2000i64]),
            Series::new("".into(), [3000i64]),
        ],
    );
    frame.with_column(sizes.into_column()).unwrap();
    let file = std::fs::File::create(dir.path().join("lists.parquet")).unwrap();
    ParquetWriter::new(file).finish(&mut frame).unwrap();
    let err = fails(
        dir.path(),
        &["audit", "lists.parquet", "--map", "holdout_n=sizes"],
    );
    assert!(err.contains("column sizes has type list"), "{err}");
    assert!(!err.contains("is empty"), "{err}");
    assert!(err.contains("1 problem(s) found"), "{err}");
}
