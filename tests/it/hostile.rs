//! Hostile files (issue 24): a log's content cannot drop it from the gate, a link
//! planted in an output folder is never followed, temporaries of killed audits are
//! removed by the next audit, no escape sequence reaches the terminal through an error
//! message, valid files are read (or refused with the right cause), integers in JSON
//! are read exactly, claims files refuse ambiguous columns and are checked in linear
//! time, pathological lines and JSON arrays stay within bounds, and the walk of a
//! folder stays inside it and lists every problem. Every file is generated in a temporary
//! directory; the runs in them are invented. Each test failed on the build before
//! (`GAPCERT_BIN=<older gapcert> cargo test --release --test it hostile`).

use std::path::{Path, PathBuf};
use std::process::Command;
use std::time::{Duration, SystemTime};

use crate::common::{binary, root, run_in, text};

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

/// The members gapcert's JSON documents are recognised by are those it writes (a
/// list that must agree with the writer, checked rather than trusted).
#[test]
fn the_document_members_recognised_are_those_written() {
    use gapcert::report::own_outputs::{DOCUMENT_MEMBERS, OPTIONAL_DOCUMENT_MEMBERS};
    let dir = tempfile::tempdir().unwrap();
    let output = run_in(
        dir.path(),
        &[
            "demo",
            "--format",
            "json",
            "--certificate",
            "demo.cert.json",
        ],
    );
    assert_eq!(output.status.code(), Some(0), "{}", text(&output.stderr));
    let doc: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    let mut members: Vec<&str> = doc
        .as_object()
        .unwrap()
        .keys()
        .map(String::as_str)
        .collect();
    members.sort_unstable();
    let mut expected = DOCUMENT_MEMBERS.to_vec();
    expected.sort_unstable();
    assert_eq!(members, expected);
    assert!(OPTIONAL_DOCUMENT_MEMBERS < DOCUMENT_MEMBERS.len());
    let certificate: serde_json::Value =
        serde_json::from_slice(&std::fs::read(dir.path().join("demo.cert.json")).unwrap()).unwrap();
    let mut members: Vec<&str> = certificate
        .as_object()
        .unwrap()
        .keys()
        .map(String::as_str)
        .collect();
    members.sort_unstable();
    expected.push("certificate");
    expected.sort_unstable();
    assert_eq!(members, expected);
}

// ---------------------------------------------------------------------------------
// Item 2: a planted link never redirects an output.

/// The PID the kernel gave last (in this PID namespace).
fn last_pid() -> u32 {
    std::fs::read_to_string("/proc/sys/kernel/ns_last_pid")
        .ok()
        .and_then(|text| text.trim().parse().ok())
        .unwrap_or_else(std::process::id)
}

#[test]
fn links_planted_at_temporary_names_are_never_followed() {
    let dir = tempfile::tempdir().unwrap();
    let log = write(dir.path(), "runs.csv", PASSING_LOG);
    let victim = write(dir.path(), "victim.txt", "not to be overwritten\n");
    let out = dir.path().join("out");
    std::fs::create_dir_all(&out).unwrap();
    // Links at the names the next few hundred processes would have used.
    let next = last_pid();
    let mut planted = Vec::new();
    for pid in next + 1..next + 400 {
        for target in [&victim, &log] {
            let link = out.join(format!(".audit.csv.gapcert-{pid}.tmp"));
            if std::os::unix::fs::symlink(target, &link).is_ok() {
                planted.push((link, target.clone()));
            }
        }
    }
    let output = run_in(
        dir.path(),
        &[
            "audit",
            "runs.csv",
            "-o",
            "out/audit.csv",
            "--gate",
            "never",
        ],
    );
    assert_eq!(output.status.code(), Some(0), "{}", text(&output.stderr));
    assert_eq!(
        std::fs::read_to_string(&victim).unwrap(),
        "not to be overwritten\n"
    );
    assert_eq!(std::fs::read_to_string(&log).unwrap(), PASSING_LOG);
    let written = out.join("audit.csv");
    let metadata = std::fs::symlink_metadata(&written).unwrap();
    assert!(metadata.file_type().is_file(), "{metadata:?}");
    assert!(std::fs::read_to_string(&written)
        .unwrap()
        .starts_with("run,source,"));
    for (link, target) in planted {
        assert_eq!(std::fs::read_link(&link).unwrap(), target, "{link:?}");
    }
}

#[test]
fn the_temporary_has_a_random_name_naming_its_process() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("out.bin");
    let mut seen = Vec::new();
    for _ in 0..2 {
        gapcert::report::write_atomically(&path, |out| {
            let entries: Vec<String> = std::fs::read_dir(dir.path())
                .unwrap()
                .map(|entry| entry.unwrap().file_name().to_string_lossy().to_string())
                .filter(|name| name.starts_with(".out.bin."))
                .collect();
            assert_eq!(entries.len(), 1, "{entries:?}");
            let name = &entries[0];
            assert_eq!(
                gapcert::report::atomic::temporary_name_owner(name),
                Some(std::process::id()),
                "{name}"
            );
            let prefix = format!(".out.bin.gapcert-{}-", std::process::id());
            let random = name
                .strip_prefix(&prefix)
                .and_then(|rest| rest.strip_suffix(".tmp"))
                .unwrap_or_else(|| panic!("{name}"));
            assert!(random.len() >= 6, "{name}");
            seen.push(name.clone());
            out.write_all(b"written")
        })
        .unwrap();
    }
    assert_ne!(seen[0], seen[1], "each temporary gets a fresh name");
    assert_eq!(std::fs::read(&path).unwrap(), b"written");
    let left: Vec<_> = std::fs::read_dir(dir.path()).unwrap().collect();
    assert_eq!(left.len(), 1, "no temporary is left behind");
}

// ---------------------------------------------------------------------------------
// Item 3: temporaries of killed audits are removed by the next audit.

/// A PID above the kernel's largest (2^22), so never a live process.
const DEAD_PID: u32 = 4_194_999;

fn backdate(path: &Path, age: Duration) {
    let file = std::fs::OpenOptions::new().write(true).open(path).unwrap();
    file.set_modified(SystemTime::now() - age).unwrap();
}

#[test]
fn temporaries_of_killed_audits_are_removed_by_the_next_audit() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "runs.csv", PASSING_LOG);
    let out = dir.path().join("out");
    let hour = Duration::from_secs(3600);
    // A process that has ended: its PID is gone from /proc (unless reused at once).
    let mut child = Command::new("true").spawn().unwrap();
    let ended = child.id();
    child.wait().unwrap();
    let dead = [
        format!(".audit.csv.gapcert-{DEAD_PID}-Ab3dEf9h.tmp"),
        format!(".other.parquet.gapcert-{ended}-zZ09azAZ.tmp"),
        // As earlier versions named them.
        format!(".audit.csv.gapcert-{DEAD_PID}.tmp"),
    ];
    let alive = format!(".audit.csv.gapcert-{}-Ab3dEf9h.tmp", std::process::id());
    let kept = [
        alive.clone(),
        // Not gapcert's names.
        format!(".audit.csv.other-{DEAD_PID}-Ab3dEf9h.tmp"),
        format!("audit.csv.gapcert-{DEAD_PID}-Ab3dEf9h.tmp"),
        format!(".audit.csv.gapcert-{DEAD_PID}-Ab3d.Ef9h.tmp"),
        format!(".audit.csv.gapcert-x{DEAD_PID}-Ab3dEf9h.tmp"),
        "notes.tmp".to_string(),
    ];
    for name in dead.iter().chain(&kept) {
        write(&out, name, "partial output");
        backdate(&out.join(name), hour);
    }
    // A dead writer's temporary written to a moment ago is left for a minute (a
    // writer in another PID namespace may still be at it).
    let recent = format!(".recent.csv.gapcert-{DEAD_PID}-Ab3dEf9h.tmp");
    write(&out, &recent, "partial output");
    // A link at a gapcert name is not gapcert's: neither it nor its target goes.
    let target = write(dir.path(), "target.txt", "keep me");
    let link = out.join(format!(".link.csv.gapcert-{DEAD_PID}-Ab3dEf9h.tmp"));
    std::os::unix::fs::symlink(&target, &link).unwrap();

    let output = run_in(
        dir.path(),
        &[
            "audit",
            "runs.csv",
            "-o",
            "out/audit.csv",
            "--gate",
            "never",
        ],
    );
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(0), "{err}");
    for name in &dead {
        assert!(!out.join(name).exists(), "{name} should be removed");
    }
    for name in kept.iter().chain([&recent]) {
        assert!(out.join(name).exists(), "{name} should stay");
    }
    assert!(std::fs::symlink_metadata(&link).is_ok());
    assert_eq!(std::fs::read_to_string(&target).unwrap(), "keep me");
    assert!(
        err.contains("removed 3 temporary file(s) left by interrupted audits in")
            && err.contains("out"),
        "{err}"
    );
    // Nothing left to remove: nothing said.
    let output = run_in(
        dir.path(),
        &[
            "audit",
            "runs.csv",
            "-o",
            "out/audit.csv",
            "--gate",
            "never",
        ],
    );
    assert!(
        !text(&output.stderr).contains("removed"),
        "{}",
        text(&output.stderr)
    );
}

#[test]
fn temporary_names_are_recognised_exactly() {
    use gapcert::report::atomic::temporary_name_owner as owner;
    assert_eq!(owner(".a.csv.gapcert-123-AbC09x.tmp"), Some(123));
    assert_eq!(owner(".a.csv.gapcert-123.tmp"), Some(123));
    assert_eq!(owner(".x.gapcert-1.csv.gapcert-77-q.tmp"), Some(77));
    for name in [
        "a.csv.gapcert-123-AbC09x.tmp",
        ".a.csv.gapcert-123-AbC09x.tmpx",
        ".a.csv.gapcert--AbC09x.tmp",
        ".a.csv.gapcert-12a-AbC09x.tmp",
        ".a.csv.gapcert-123-Ab/C.tmp",
        ".a.csv.gapcert-123-.tmp",
        "..gapcert-123-AbC09x.tmp",
        ".a.csv.gapcert-99999999999-AbC09x.tmp",
    ] {
        assert_eq!(owner(name), None, "{name}");
    }
}

// ---------------------------------------------------------------------------------
// Item 8: escape sequences in file names and cells never reach the terminal.

/// Control characters a terminal acts on: ESC (CSI, OSC 8 links), BEL, and the
/// 8-bit CSI.
fn has_terminal_controls(text: &str) -> bool {
    text.chars().any(|c| c.is_control() && c != '\n')
}

#[test]
fn error_messages_escape_terminal_sequences() {
    let dir = tempfile::tempdir().unwrap();
    let hostile_name =
        "runs\u{1b}]8;;https://example.invalid/\u{7}click\u{1b}]8;;\u{7}\u{1b}[2J.csv";
    // A file name with an OSC 8 link and a screen clear, holding a bad cell with a
    // colour sequence.
    write(
        dir.path(),
        hostile_name,
        "run,holdout_n,holdout_misclassified,claimed_accuracy\nhx\u{1b}[31mred,many\u{1b}[5m,3,0.9\n",
    );
    let output = run_in(dir.path(), &["audit", hostile_name]);
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(!has_terminal_controls(&err), "{err:?}");
    assert!(err.contains('\u{FFFD}'), "{err:?}");
    assert!(err.contains("holdout_n"), "{err:?}");

    // A claims file whose cell names a run that does not exist.
    write(dir.path(), "runs.csv", PASSING_LOG);
    write(
        dir.path(),
        "claims.csv",
        "claim,kind,run,value\nc\u{1b}[1m1,accuracy,hx\u{1b}]8;;http://x\u{7}nope,0.9\n",
    );
    let output = run_in(dir.path(), &["audit", "runs.csv", "--claims", "claims.csv"]);
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(!has_terminal_controls(&err), "{err:?}");

    // A path that does not exist, and an argument clap echoes back.
    let missing = "missing\u{1b}[2J.csv";
    let output = run_in(dir.path(), &["audit", missing]);
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(!has_terminal_controls(&err), "{err:?}");
    assert!(err.contains("missing\u{FFFD}[2J.csv"), "{err:?}");
    let output = run_in(dir.path(), &["audit", "runs.csv", "--gate", "x\u{1b}[2J"]);
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(!has_terminal_controls(&err), "{err:?}");
}

// ---------------------------------------------------------------------------------
// Item 4: valid files rejected with the wrong cause.

#[test]
fn a_json_lines_file_of_one_broken_record_names_the_json_error() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "cut.jsonl",
        "{\"run\":\"a\",\"holdout_n\":1000,\"holdout_misclass\n",
    );
    let output = run_in(dir.path(), &["audit", "cut.jsonl"]);
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(err.contains("cut.jsonl:1: invalid JSON"), "{err}");
    assert!(!err.contains("missing"), "{err}");
}

#[test]
fn decimal_columns_are_named_with_their_type() {
    // Written by pyarrow 26 (decimal128 columns): one unused, one holding the claims.
    for (file, column, kind) in [
        ("decimal-unused.parquet", "cost_usd", "decimal(10, 2)"),
        ("decimal-unused.arrow", "cost_usd", "decimal128(10, 2)"),
        (
            "decimal-accuracy.parquet",
            "claimed_accuracy",
            "decimal(4, 2)",
        ),
        (
            "decimal-accuracy.arrow",
            "claimed_accuracy",
            "decimal128(4, 2)",
        ),
    ] {
        let path = root().join("fixtures/hostile").join(file);
        let output = run_in(&root(), &["audit", path.to_str().unwrap()]);
        let err = text(&output.stderr);
        assert_eq!(output.status.code(), Some(2), "{err}");
        assert!(
            err.contains(&format!("`{column}` ({kind})")),
            "{file}: {err}"
        );
        assert!(!err.contains("malformed"), "{file}: {err}");
    }
}

// ---------------------------------------------------------------------------------
// Item 5: integers beyond 2^53 in JSON lines.

#[test]
fn json_integers_are_read_exactly_and_only_the_huge_cell_is_reported() {
    let dir = tempfile::tempdir().unwrap();
    let record = |run: &str, n: &str, k: &str| {
        format!(
            "{{\"run\":\"{run}\",\"holdout_n\":{n},\"holdout_misclassified\":{k},\"claimed_accuracy\":0.9}}\n"
        )
    };
    let log = [
        record("exact", "9007199254740993", "1"),
        record("one-too-many", "9007199254740992", "9007199254740993"),
        record("huge", "123456789012345678901234567890", "1"),
        record("largest", "9223372036854775807", "1"),
    ]
    .concat();
    write(dir.path(), "big.jsonl", &log);
    let output = run_in(dir.path(), &["audit", "big.jsonl"]);
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(err.contains("big.jsonl:2: holdout_misclassified"), "{err}");
    assert!(err.contains("big.jsonl:3: holdout_n"), "{err}");
    assert!(err.contains("2 problem(s)"), "{err}");
    assert!(!err.contains("big.jsonl:1"), "{err}");
    assert!(!err.contains("big.jsonl:4"), "{err}");

    // The skipped rows carry claims, so the gate fails (issue 23); the runs read
    // are what matters here.
    let output = run_in(
        dir.path(),
        &["audit", "big.jsonl", "--lenient", "--format", "json"],
    );
    assert_eq!(output.status.code(), Some(1), "{}", text(&output.stderr));
    let doc: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    let runs = doc["runs"].as_array().unwrap();
    let names: Vec<&str> = runs.iter().map(|r| r["run"].as_str().unwrap()).collect();
    assert_eq!(names, ["exact", "largest"]);
    assert_eq!(runs[0]["holdout_n"].as_u64(), Some(9_007_199_254_740_993));
    assert_eq!(runs[1]["holdout_n"].as_u64(), Some(i64::MAX as u64));
}

// ---------------------------------------------------------------------------------
// Item 6: claims files.

#[test]
fn a_claims_file_with_two_value_columns_is_refused() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "runs.csv", PASSING_LOG);
    write(
        dir.path(),
        "claims.csv",
        "claim,kind,run,value,VALUE\nc1,accuracy,hx-fine,0.5,0.9999\n",
    );
    let output = run_in(dir.path(), &["audit", "runs.csv", "--claims", "claims.csv"]);
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(err.contains("`value` and `VALUE`"), "{err}");
}

#[test]
fn duplicate_claim_identifiers_are_found_in_linear_time() {
    // 100,000 claims on one run, the last two sharing an identifier: the check that
    // scanned every earlier claim per claim took about a minute.
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "runs.csv", PASSING_LOG);
    let mut claims = String::from("claim,kind,run,value\n");
    for index in 0..100_000 {
        claims.push_str(&format!("c{index},accuracy,hx-fine,0.5\n"));
    }
    claims.push_str("c99999,accuracy,hx-fine,0.5\n");
    write(dir.path(), "claims.csv", &claims);
    let started = std::time::Instant::now();
    let output = run_in(dir.path(), &["audit", "runs.csv", "--claims", "claims.csv"]);
    let elapsed = started.elapsed();
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(
        err.contains("claims.csv:100001: the claim identifier `c99999`"),
        "{err}"
    );
    assert!(elapsed < Duration::from_secs(20), "{elapsed:?}");
}

// ---------------------------------------------------------------------------------
// Item 7: size and shape limits.

#[test]
fn a_pathologically_long_csv_line_is_an_input_error_named_by_row() {
    // 64 MB in one cell took 9 s in the CSV splitter; the limit is 1 MiB a line.
    let dir = tempfile::tempdir().unwrap();
    let mut log = String::from("run,holdout_n,holdout_misclassified,claimed_accuracy,notes\n");
    log.push_str("fine,1000,5,0.9,short\n");
    log.push_str("long,1000,5,0.9,");
    log.push_str(&"x".repeat(64 << 20));
    log.push('\n');
    write(dir.path(), "long.csv", &log);
    let started = std::time::Instant::now();
    let output = run_in(dir.path(), &["audit", "long.csv"]);
    let elapsed = started.elapsed();
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(
        err.contains("long.csv:2: line 3 is 67108880 bytes long"),
        "{err}"
    );
    assert!(elapsed < Duration::from_secs(5), "{elapsed:?}");
}

#[test]
fn a_json_array_is_read_record_by_record() {
    // 200,000 runs in one JSON array, each with a long notes field (about 60 MB): the
    // reader keeps one copy of the cells, not a map of keys per record. The bound
    // is generous here; fuzz/README.md and the README give the measured figures.
    let dir = tempfile::tempdir().unwrap();
    let notes = "n".repeat(200);
    let mut log = String::from("[");
    for index in 0..200_000 {
        if index > 0 {
            log.push(',');
        }
        log.push_str(&format!(
            "{{\"run\":\"r{index}\",\"holdout_n\":1000,\"holdout_misclassified\":5,\"claimed_accuracy\":0.9,\"notes\":\"{notes}\"}}"
        ));
    }
    log.push(']');
    write(dir.path(), "runs.json", &log);
    let output = Command::new("/usr/bin/time")
        .arg("-f")
        .arg("max-rss-kb=%M")
        .arg(binary())
        .args(["audit", "runs.json", "--format", "csv", "-o", "out.csv"])
        .current_dir(dir.path())
        .output();
    let Ok(output) = output else {
        return; // no /usr/bin/time here
    };
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(0), "{err}");
    let rss_kb: u64 = err
        .lines()
        .find_map(|line| line.strip_prefix("max-rss-kb="))
        .and_then(|value| value.trim().parse().ok())
        .expect("max resident size");
    // The file is 50 MB; the records as maps took about 8.8 times the file.
    let file_kb = log.len() as u64 / 1024;
    assert!(rss_kb < file_kb * 5, "{rss_kb} kB for a {file_kb} kB array");
}

// ---------------------------------------------------------------------------------
// Item 9: walking the file system.

#[cfg(unix)]
#[test]
fn links_to_folders_outside_the_audited_folder_are_not_followed() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "exp/a/runs.csv", PASSING_LOG);
    write(
        dir.path(),
        "elsewhere/refuted.jsonl",
        &format!("{FAILING_RUN}\n"),
    );
    std::os::unix::fs::symlink("/", dir.path().join("exp/root")).unwrap();
    std::os::unix::fs::symlink(dir.path().join("elsewhere"), dir.path().join("exp/out")).unwrap();
    // A link inside the tree is followed (once: the folder is read once).
    std::os::unix::fs::symlink(dir.path().join("exp/a"), dir.path().join("exp/same")).unwrap();
    let started = std::time::Instant::now();
    let output = run_in(dir.path(), &["audit", "exp", "--format", "json"]);
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(0), "{err}");
    assert!(started.elapsed() < Duration::from_secs(20));
    let doc: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    assert_eq!(doc["runs"].as_array().unwrap().len(), 1);
    let skipped = doc["skipped_files"].to_string();
    assert!(
        skipped.contains("exp/root") && skipped.contains("not followed"),
        "{skipped}"
    );
    assert!(skipped.contains("exp/out"), "{skipped}");
}

// ---------------------------------------------------------------------------------
// Item 10: every problem of a folder, with row and column.

#[test]
fn a_non_utf8_cell_is_named_by_row_and_column() {
    let dir = tempfile::tempdir().unwrap();
    let path = dir.path().join("latin1.csv");
    std::fs::write(
        &path,
        b"run,holdout_n,holdout_misclassified,claimed_accuracy,notes\nok,1000,5,0.9,fine\ncafe,1000,5,0.9,caf\xe9\n",
    )
    .unwrap();
    let output = run_in(dir.path(), &["audit", "latin1.csv"]);
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(
        err.contains("latin1.csv:2: column `notes`: byte 0xe9"),
        "{err}"
    );

    write(dir.path(), "runs.csv", PASSING_LOG);
    std::fs::write(
        dir.path().join("claims.csv"),
        b"claim,kind,run,value\nc1,accuracy,hx-fine,0.\xff9\n",
    )
    .unwrap();
    let output = run_in(dir.path(), &["audit", "runs.csv", "--claims", "claims.csv"]);
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(
        err.contains("claims.csv:1: column `value`: byte 0xff"),
        "{err}"
    );
}

#[test]
fn every_empty_file_of_a_folder_is_listed() {
    let dir = tempfile::tempdir().unwrap();
    for index in 1..=6 {
        write(dir.path(), &format!("exp/empty-{index}.csv"), "");
    }
    write(dir.path(), "exp/fine.csv", PASSING_LOG);
    let output = run_in(dir.path(), &["audit", "exp"]);
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    for index in 1..=6 {
        assert!(
            err.contains(&format!("empty-{index}.csv: the file is empty")),
            "{err}"
        );
    }
}

#[cfg(unix)]
#[test]
fn a_dangling_link_is_called_a_broken_link() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "exp/fine.csv", PASSING_LOG);
    std::os::unix::fs::symlink("/nonexistent/runs.csv", dir.path().join("exp/gone.csv")).unwrap();
    let output = run_in(dir.path(), &["audit", "exp", "--format", "json"]);
    assert_eq!(output.status.code(), Some(0), "{}", text(&output.stderr));
    let doc: serde_json::Value = serde_json::from_slice(&output.stdout).unwrap();
    let skipped = doc["skipped_files"].to_string();
    assert!(
        skipped.contains("gone.csv") && skipped.contains("a broken link"),
        "{skipped}"
    );
    let output = run_in(dir.path(), &["audit", "exp/gone.csv"]);
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(err.contains("a broken link"), "{err}");
}

#[cfg(unix)]
#[test]
fn a_folder_that_cannot_be_listed_is_one_problem_among_the_others() {
    use std::os::unix::fs::PermissionsExt;
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "exp/locked/runs.csv", PASSING_LOG);
    write(dir.path(), "exp/empty.csv", "");
    write(dir.path(), "exp/fine.csv", PASSING_LOG);
    let locked = dir.path().join("exp/locked");
    std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o000)).unwrap();
    let output = if std::fs::read_dir(&locked).is_err() {
        run_in(dir.path(), &["audit", "exp"])
    } else {
        // Running as root, for whom nothing is locked: the audit runs as `nobody`
        // (util-linux's setpriv), from a copy of the binary it can reach.
        let Some(setpriv) = ["/usr/bin/setpriv", "/bin/setpriv"]
            .into_iter()
            .find(|p| Path::new(p).exists())
        else {
            std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o755)).unwrap();
            crate::common::cannot_run("running as root without setpriv to drop privileges");
            return;
        };
        let copy = dir.path().join("gapcert");
        std::fs::copy(binary(), &copy).unwrap();
        std::fs::set_permissions(dir.path(), std::fs::Permissions::from_mode(0o755)).unwrap();
        for sub in ["exp", "exp/empty.csv", "exp/fine.csv"] {
            let mode = if sub == "exp" { 0o755 } else { 0o644 };
            std::fs::set_permissions(dir.path().join(sub), std::fs::Permissions::from_mode(mode))
                .unwrap();
        }
        Command::new(setpriv)
            .args(["--reuid=65534", "--regid=65534", "--clear-groups"])
            .arg(&copy)
            .args(["audit", "exp"])
            .current_dir(dir.path())
            .env("NO_COLOR", "1")
            .output()
            .expect("run gapcert as nobody")
    };
    std::fs::set_permissions(&locked, std::fs::Permissions::from_mode(0o755)).unwrap();
    let err = text(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(err.contains("locked: cannot list this folder"), "{err}");
    assert!(err.contains("empty.csv: the file is empty"), "{err}");
}
