//! Robustness: hostile text in every output format, no row lost under `--lenient`,
//! atomic output files (bad input, missing folders, full disks, signals), and extreme
//! values that must work or fail with a clear message — never a panic or a hang.
//!
//! Every test writes its inputs into a temporary folder; nothing here touches fixtures.

use std::collections::{BTreeMap, BTreeSet};
use std::fs;
use std::io::Write;
use std::path::{Path, PathBuf};
use std::process::{Command, Stdio};
use std::time::{Duration, Instant};

use crate::common::{cannot_run, gapcert_deadline, parse_csv_text, Finished};
use gapcert::audit::{audit_run, AuditSettings, HoldoutBound, RunContext, RunResult, Verdict};
use gapcert::ingest::{IngestSettings, LogFormat, LogSource};
use gapcert::report::escape::escape_markdown;
use gapcert::report::flat::{write_csv, FLAT_COLUMNS};
use gapcert::report::markdown::write_markdown;
use gapcert::report::AuditDocument;
use gapcert::run::{ClaimForm, RunInput};
use serde_json::Value;

const DEADLINE: Duration = Duration::from_secs(60);

fn write(dir: &Path, name: &str, text: &str) -> PathBuf {
    let path = dir.join(name);
    if let Some(parent) = path.parent() {
        fs::create_dir_all(parent).unwrap();
    }
    fs::write(&path, text).unwrap();
    path
}

fn run(dir: &Path, args: &[&str]) -> Finished {
    let finished = gapcert_deadline(dir, args, DEADLINE);
    finished.assert_no_crash(&format!("gapcert {args:?}"));
    finished
}

fn json_of(finished: &Finished, what: &str) -> Value {
    serde_json::from_slice(&finished.stdout).unwrap_or_else(|error| {
        panic!(
            "{what}: not JSON ({error}); exit {:?}; stderr:\n{}",
            finished.code, finished.stderr
        )
    })
}

/// Names of the entries of a folder (not recursive), sorted.
fn entries(dir: &Path) -> Vec<String> {
    let mut names: Vec<String> = fs::read_dir(dir)
        .unwrap()
        .filter_map(|e| e.ok())
        .map(|e| e.file_name().to_string_lossy().to_string())
        .collect();
    names.sort();
    names
}

fn temporary_files(dir: &Path) -> Vec<String> {
    entries(dir)
        .into_iter()
        .filter(|name| name.contains(".gapcert-") && name.ends_with(".tmp"))
        .collect()
}

/// Control characters other than the line feed that ends a line.
fn control_characters(text: &str) -> Vec<char> {
    text.chars()
        .filter(|&c| c.is_control() && c != '\n')
        .collect()
}

// ---------------------------------------------------------------------------------
// 1. Hostile content in outputs
// ---------------------------------------------------------------------------------

/// Run names that try to break a Markdown table, a terminal table, or a spreadsheet.
const HOSTILE_NAMES: &[&str] = &[
    "a|b",
    "line1\nline2",
    "cr\rreturn",
    "<script>alert(1)</script>",
    "back\\|slash",
    "`code|span`",
    "\u{1b}[31mred\u{1b}[0m",
    "bell\u{7}",
    "[link](javascript:alert(1))",
    "=1+1",
    "-2+3",
    "AT&amp;T &lt;b&gt;",
];

/// A CSV log with one run per hostile name (quoted, doubled quotes).
/// Audits the hostile-names log in `format` (gate never) and returns standard output.
fn audit_hostile_names(format: &str) -> String {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "hostile.csv", &hostile_csv());
    let finished = run(
        dir.path(),
        &[
            "audit",
            "hostile.csv",
            "--format",
            format,
            "--gate",
            "never",
        ],
    );
    assert_eq!(finished.code, Some(0), "{}", finished.stderr);
    String::from_utf8(finished.stdout).unwrap()
}

fn hostile_csv() -> String {
    let mut csv = String::from(
        "run,family,holdout_set,train_n,train_error_rate,holdout_n,holdout_misclassified,claimed_accuracy\n",
    );
    for (index, name) in HOSTILE_NAMES.iter().enumerate() {
        csv.push_str(&format!(
            "\"{}\",ray,\"split|{index}<b>\",1000,0.05,1000,{},0.9\n",
            name.replace('"', "\"\""),
            10 + index * 10
        ));
    }
    csv
}

/// Pipes not escaped by a backslash (a backslash escaped by a backslash does not count).
fn unescaped(line: &str, target: char) -> usize {
    let mut count = 0;
    let mut backslashes = 0;
    for ch in line.chars() {
        if ch == target && backslashes % 2 == 0 {
            count += 1;
        }
        if ch == '\\' {
            backslashes += 1;
        } else {
            backslashes = 0;
        }
    }
    count
}

/// Checks a Markdown report: the table has exactly `runs` rows of nine cells each, no
/// raw HTML and no control characters.
fn assert_markdown_table_intact(markdown: &str, runs: usize) {
    let lines: Vec<&str> = markdown.lines().collect();
    let header = lines
        .iter()
        .position(|l| l.starts_with("| verdict |"))
        .expect("table header");
    let columns = unescaped(lines[header], '|');
    let body: Vec<&str> = lines[header + 2..]
        .iter()
        .take_while(|l| !l.trim().is_empty())
        .copied()
        .collect();
    assert_eq!(
        body.len(),
        runs,
        "one table row per run; the table is:\n{}",
        body.join("\n")
    );
    for line in &body {
        assert!(line.starts_with("| ") && line.ends_with(" |"), "{line:?}");
        assert_eq!(unescaped(line, '|'), columns, "cell count of {line:?}");
        assert_eq!(unescaped(line, '<'), 0, "raw `<` in {line:?}");
        assert_eq!(unescaped(line, '`'), 0, "raw backtick in {line:?}");
        assert_eq!(unescaped(line, '['), 0, "raw `[` in {line:?}");
    }
    assert_eq!(unescaped(markdown, '<'), 0, "raw `<` in:\n{markdown}");
    assert!(
        control_characters(markdown).is_empty(),
        "control characters {:?} in the Markdown",
        control_characters(markdown)
    );
}

#[test]
fn markdown_table_survives_hostile_run_names_end_to_end() {
    let markdown = audit_hostile_names("markdown");
    assert_markdown_table_intact(&markdown, HOSTILE_NAMES.len());
}

#[test]
fn markdown_escape_neutralises_every_ascii_and_control_character() {
    let mut probes: Vec<String> = (0u32..0x80)
        .chain([0x85, 0x9b, 0x2028, 0x2029, 0x202e, 0x2066, 0xfeff])
        .filter_map(char::from_u32)
        .map(|c| format!("x{c}y{c}"))
        .collect();
    probes.extend(HOSTILE_NAMES.iter().map(|s| s.to_string()));
    for probe in &probes {
        let escaped = escape_markdown(probe);
        assert!(
            !escaped.contains(['\n', '\r']),
            "{probe:?} → {escaped:?} keeps a line break"
        );
        assert!(
            control_characters(&escaped).is_empty(),
            "{probe:?} → {escaped:?} keeps a control character"
        );
        assert!(
            !escaped.contains(['\u{202e}', '\u{2066}']),
            "{probe:?} → {escaped:?} keeps a bidirectional override"
        );
        for target in ['|', '<', '>', '`', '[', ']', '*', '_', '&'] {
            assert_eq!(
                unescaped(&escaped, target),
                0,
                "{probe:?} → {escaped:?} leaves `{target}` unescaped"
            );
        }
    }
}

/// A small valid document built through the library, to overwrite fields with hostile
/// text that the ingest would normalise away (tabs, leading whitespace, timestamps).
fn small_document() -> AuditDocument {
    const LOG: &str =
        "run,family,train_n,train_error_rate,holdout_n,holdout_misclassified,claimed_accuracy\n\
r1,ray,1000,0.03,1000,20,0.9\n\
r2,ray,1000,0.01,1000,500,0.9\n\
r3,,,,1000,5,\n";
    let sources = [LogSource::Memory("mem.csv", LOG.as_bytes(), LogFormat::Csv)];
    gapcert::audit_sources(
        &sources,
        &AuditSettings::default(),
        &IngestSettings::default(),
    )
    .expect("valid log")
}

/// What the CSV writer must produce for a text cell (before CSV quoting).
fn guarded(text: &str) -> String {
    if text.starts_with(['=', '+', '-', '@', '\t', '\r']) {
        format!("'{text}")
    } else {
        text.to_string()
    }
}

#[test]
fn markdown_writer_escapes_runs_and_cautions_from_the_library() {
    let mut doc = small_document();
    for (run, name) in doc.runs.iter_mut().zip(HOSTILE_NAMES.iter().skip(1)) {
        run.run = name.to_string();
    }
    let mut out = Vec::new();
    write_markdown(&doc, &mut out, &gapcert::report::Presentation::default()).unwrap();
    let markdown = String::from_utf8(out).unwrap();
    assert_markdown_table_intact(&markdown, doc.runs.len());
}

#[test]
fn csv_neutralises_formulas_in_text_cells_only() {
    const TEXTS: &[&str] = &[
        "=1+1",
        "+1",
        "-1",
        "@SUM(A1)",
        "\tTAB",
        "\rCR",
        "=HYPERLINK(\"http://x\",\"y\")",
        "=",
        "-",
        "'already",
        "a,b",
        "quote\"inside",
        "line1\nline2",
        "plain",
        "  =leading space",
    ];
    let template = small_document().runs;
    let mut runs: Vec<RunResult> = Vec::new();
    for (index, text) in TEXTS.iter().enumerate() {
        let mut r = template[index % template.len()].clone();
        r.run = text.to_string();
        r.source = format!("{text}:{index}");
        r.family = Some(text.to_string());
        r.holdout_set = Some(text.to_string());
        r.logged_at = Some(text.to_string());
        r.observed_gap = Some(-0.01);
        r.certified_gap_max = Some(-1e-300);
        r.train_error_rate = Some(0.02);
        runs.push(r);
    }
    let mut out = Vec::new();
    write_csv(&runs, true, &mut out).unwrap();
    let text = String::from_utf8(out).unwrap();
    let rows = parse_csv_text(&text);
    assert_eq!(rows.len(), runs.len(), "one record per run:\n{text}");
    let text_columns = [
        "run",
        "source",
        "family",
        "holdout_set",
        "logged_at",
        "verdict",
        "explanation",
        "findings",
    ];
    for (row, (r, original)) in rows.iter().zip(runs.iter().zip(TEXTS)) {
        assert_eq!(row["run"], guarded(original), "run {original:?}");
        assert_eq!(row["source"], guarded(&r.source), "source {original:?}");
        assert_eq!(row["family"], guarded(original), "family {original:?}");
        assert_eq!(row["holdout_set"], guarded(original), "holdout_set");
        assert_eq!(row["logged_at"], guarded(original), "logged_at");
        assert_eq!(
            row["observed_gap"], "-0.01",
            "negative numbers stay numeric"
        );
        let tiny: f64 = row["certified_gap_max"].parse().expect("a number");
        assert_eq!(
            tiny, -1e-300,
            "tiny negative numbers stay numeric and exact"
        );
        for column in FLAT_COLUMNS {
            if text_columns.contains(column) {
                continue;
            }
            let cell = &row[*column];
            assert!(
                cell.is_empty() || cell.parse::<f64>().is_ok(),
                "{column} = {cell:?} is not a plain number"
            );
        }
    }
}

#[test]
fn csv_output_guards_names_split_names_and_file_names_end_to_end() {
    let dir = tempfile::tempdir().unwrap();
    // The file name itself starts with `=`: it reaches the `source` column.
    write(
        dir.path(),
        "=evil.csv",
        "run,family,holdout_set,train_n,train_error_rate,holdout_n,holdout_misclassified,claimed_accuracy\n\
\"=cmd|' /C calc'!A0\",\"@unknown\",\"+split\",1000,0.03,1000,20,0.9\n\
\"-1\",ray,\"=x\",1000,0.03,1000,20,0.9\n",
    );
    let finished = run(
        dir.path(),
        &["audit", "=evil.csv", "--format", "csv", "--gate", "never"],
    );
    assert_eq!(finished.code, Some(0), "{}", finished.stderr);
    let rows = parse_csv_text(&String::from_utf8(finished.stdout).unwrap());
    assert_eq!(rows.len(), 2);
    assert_eq!(rows[0]["run"], "'=cmd|' /C calc'!A0");
    assert_eq!(rows[0]["family"], "'@unknown");
    assert_eq!(rows[0]["holdout_set"], "'+split");
    assert_eq!(rows[0]["source"], "'=evil.csv:1");
    assert_eq!(rows[1]["run"], "'-1");
    assert_eq!(rows[1]["holdout_set"], "'=x");
    for row in &rows {
        // Held-out error 0.02 below training error 0.03: a negative gap, as a number.
        let gap: f64 = row["observed_gap"].parse().expect("numeric observed_gap");
        assert!((gap + 0.01).abs() < 1e-12, "{gap}");
    }
}

#[test]
fn table_keeps_one_line_per_run_and_prints_no_control_characters() {
    let table = audit_hostile_names("table");
    let controls = control_characters(&table);
    assert!(
        controls.is_empty(),
        "the table passes control characters {controls:?} to the terminal (escape-sequence injection)"
    );
    // Content lines of the runs' table (the first table; the splits follow) start
    // with the vertical bar; one header + one per run.
    let content_lines = table
        .lines()
        .skip_while(|l| !l.starts_with('┌'))
        .take_while(|l| !l.starts_with('└'))
        .filter(|l| l.starts_with('│'))
        .count();
    assert_eq!(
        content_lines,
        HOSTILE_NAMES.len() + 1,
        "a run name with a line break spreads over several lines:\n{table}"
    );
}

// ---------------------------------------------------------------------------------
// 2. Nothing lost under --lenient
// ---------------------------------------------------------------------------------

/// A Parquet log written through polars: three runs, the second with holdout_n = 0.
fn write_parquet_log(path: &Path) {
    use polars::prelude::*;
    let mut frame = df!(
        "run" => ["p1", "p2", "p3"],
        "holdout_n" => [100i64, 0, 100],
        "holdout_error_rate" => [0.01f64, 0.01, 0.02],
    )
    .unwrap();
    let file = fs::File::create(path).unwrap();
    ParquetWriter::new(file).finish(&mut frame).unwrap();
}

#[test]
fn lenient_audit_accounts_for_every_row_of_every_file() {
    let dir = tempfile::tempdir().unwrap();
    let logs = dir.path().join("logs");
    write(
        &logs,
        "a.csv",
        "run,holdout_n,holdout_error_rate,claimed_accuracy\n\
a1,100,0.01,0.9\n\
a2,100,1.5,0.9\n\
a3,0,0.01,0.9\n\
a4,100,0.02,\n\
a5,abc,0.01,0.9\n\
a6,100,,0.9\n",
    );
    write(
        &logs,
        "b.jsonl",
        "{\"run\":\"b1\",\"holdout_n\":100,\"holdout_error_rate\":0.01}\n\
{\"run\":\"b2\",\"holdout_n\":100,\"holdout_error_rate\":\n\
[1,2]\n\
{\"run\":\"b4\",\"holdout_n\":-5,\"holdout_error_rate\":0.01}\n\
\n\
{\"run\":\"b5\",\"holdout_n\":100,\"holdout_misclassified\":3}\n\
{\"run\":\"b6\",\"holdout_n\":100,\"holdout_misclassified\":300}\n",
    );
    write(
        &logs,
        "c.json",
        "[{\"run\":\"c1\",\"holdout_n\":100,\"holdout_error_rate\":0.2},7,\
{\"run\":\"c3\",\"holdout_n\":100,\"holdout_error_rate\":\"x\"},\
{\"run\":\"c4\",\"holdout_n\":100,\"holdout_accuracy\":0.9,\"holdout_error_rate\":0.5},\
{\"run\":\"c5\",\"holdout_n\":100,\"holdout_error_rate\":0.05,\"holdout_set\":{\"nested\":1}},\
{\"run\":\"c6\",\"holdout_n\":100.0,\"holdout_error_rate\":0.05,\"logged_at\":\"2024-01-02\"}]",
    );
    write(
        &logs,
        "sub/d.tsv",
        "run\tholdout_n\tholdout_accuracy\n\
d1\t100\t0.99\n\
d2\t100\t-0.5\n",
    );
    write_parquet_log(&logs.join("e.parquet"));
    write(&logs, "notes.txt", "not a log");
    let expected_rows: BTreeMap<&str, usize> = [
        ("logs/a.csv", 6),
        ("logs/b.jsonl", 6),
        ("logs/c.json", 6),
        ("logs/sub/d.tsv", 2),
        ("logs/e.parquet", 3),
    ]
    .into_iter()
    .collect();

    let finished = run(
        dir.path(),
        &[
            "audit",
            "logs",
            "--lenient",
            "--format",
            "json",
            "--gate",
            "never",
        ],
    );
    assert_eq!(finished.code, Some(0), "{}", finished.stderr);
    let doc = json_of(&finished, "lenient audit");
    let summary = &doc["summary"];
    let runs = summary["runs"].as_u64().unwrap();
    let skipped = summary["rows_skipped"].as_u64().unwrap();
    let read = summary["rows_read"].as_u64().unwrap();
    let total: usize = expected_rows.values().sum();
    assert_eq!(read, runs + skipped, "rows_read = runs + rows_skipped");
    assert_eq!(read as usize, total, "every row of every file was read");
    assert_eq!(summary["files_skipped"], 1, "notes.txt");

    let mut seen: BTreeMap<String, &str> = BTreeMap::new();
    for r in doc["runs"].as_array().unwrap() {
        let source = r["source"].as_str().unwrap().to_string();
        assert!(
            seen.insert(source.clone(), "run").is_none(),
            "{source} twice"
        );
    }
    for s in doc["skipped_rows"].as_array().unwrap() {
        let source = s["source"].as_str().unwrap().to_string();
        assert!(
            !s["reasons"].as_array().unwrap().is_empty(),
            "{source}: skipped without a reason"
        );
        assert!(
            seen.insert(source.clone(), "skipped").is_none(),
            "{source} twice"
        );
    }
    let mut expected = BTreeSet::new();
    for (file, rows) in &expected_rows {
        for row in 1..=*rows {
            expected.insert(format!("{file}:{row}"));
        }
    }
    let seen_sources: BTreeSet<String> = seen.keys().cloned().collect();
    assert_eq!(
        seen_sources, expected,
        "every input row appears once, as a run or a skipped row"
    );
    for input in doc["inputs"].as_array().unwrap() {
        let path = input["path"].as_str().unwrap();
        assert_eq!(
            input["rows"].as_u64().unwrap() as usize,
            expected_rows[path],
            "{path}: rows"
        );
    }
    // Spot checks: the good rows are runs, the bad ones skipped.
    for good in [
        "logs/a.csv:1",
        "logs/a.csv:4",
        "logs/b.jsonl:5",
        "logs/c.json:1",
    ] {
        assert_eq!(seen[good], "run", "{good}");
    }
    for bad in [
        "logs/a.csv:2",
        "logs/b.jsonl:2",
        "logs/c.json:2",
        "logs/e.parquet:2",
    ] {
        assert_eq!(seen[bad], "skipped", "{bad}");
    }
}

// ---------------------------------------------------------------------------------
// 3. Atomic outputs
// ---------------------------------------------------------------------------------

#[test]
fn failed_audit_leaves_existing_outputs_untouched() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "bad.csv",
        "run,holdout_n,holdout_error_rate\nr1,100,1.7\n",
    );
    let old = "OLD CONTENT\n";
    for name in ["out.json", "out.html", "out.cert.json"] {
        write(dir.path(), name, old);
    }
    let before = entries(dir.path());
    let finished = run(
        dir.path(),
        &[
            "audit",
            "bad.csv",
            "--format",
            "json",
            "--output",
            "out.json",
            "--html",
            "out.html",
            "--certificate",
            "out.cert.json",
        ],
    );
    assert_eq!(finished.code, Some(2));
    assert!(finished.stderr.contains("bad.csv:1"), "{}", finished.stderr);
    for name in ["out.json", "out.html", "out.cert.json"] {
        assert_eq!(
            fs::read_to_string(dir.path().join(name)).unwrap(),
            old,
            "{name}"
        );
    }
    assert_eq!(entries(dir.path()), before, "no file added or removed");
}

#[test]
fn output_into_a_missing_folder_fails_and_creates_nothing() {
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "good.csv",
        "run,holdout_n,holdout_error_rate,claimed_accuracy\nr1,1000,0.01,0.9\n",
    );
    for flag in ["--output", "--html", "--certificate"] {
        let finished = run(
            dir.path(),
            &[
                "audit",
                "good.csv",
                "--format",
                "json",
                flag,
                "missing/sub/out",
            ],
        );
        assert_eq!(finished.code, Some(2), "{flag}");
        assert!(
            finished.stderr.contains("missing/sub/out") && finished.stderr.contains("cannot write"),
            "{flag}: {}",
            finished.stderr
        );
        assert!(finished.stdout.is_empty(), "{flag}: nothing on stdout");
        assert_eq!(entries(dir.path()), ["good.csv"], "{flag}: nothing created");
    }
}

#[test]
fn failing_command_writes_no_output_file_at_all() {
    // The certificate is written first, then the HTML page fails: exit 2, but is the
    // certificate of a failed command left behind?
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "good.csv",
        "run,holdout_n,holdout_error_rate,claimed_accuracy\nr1,1000,0.01,0.9\n",
    );
    let finished = run(
        dir.path(),
        &[
            "audit",
            "good.csv",
            "--certificate",
            "audit.cert.json",
            "--html",
            "missing/report.html",
            "--output",
            "audit.json",
            "--format",
            "json",
        ],
    );
    assert_eq!(finished.code, Some(2));
    assert_eq!(
        entries(dir.path()),
        ["good.csv"],
        "a command that exits 2 leaves no output files"
    );
}

#[test]
fn dev_full_as_output_fails_with_a_clear_message() {
    if !Path::new("/dev/full").exists() {
        cannot_run("no /dev/full here");
        return;
    }
    let dir = tempfile::tempdir().unwrap();
    write(
        dir.path(),
        "good.csv",
        "run,holdout_n,holdout_error_rate,claimed_accuracy\nr1,1000,0.01,0.9\n",
    );
    for format in ["json", "csv", "table", "markdown", "parquet", "ndjson"] {
        let finished = run(
            dir.path(),
            &[
                "audit",
                "good.csv",
                "--format",
                format,
                "--output",
                "/dev/full",
            ],
        );
        assert_eq!(finished.code, Some(2), "{format}: {}", finished.stderr);
        assert!(
            finished.stderr.contains("/dev/full")
                && finished.stderr.to_lowercase().contains("no space"),
            "{format}: {}",
            finished.stderr
        );
    }
    // Standard output redirected to a full device.
    let output = Command::new(crate::common::binary())
        .args(["audit", "good.csv", "--format", "json"])
        .current_dir(dir.path())
        .stdout(fs::File::options().write(true).open("/dev/full").unwrap())
        .stderr(Stdio::piped())
        .output()
        .unwrap();
    let err = String::from_utf8_lossy(&output.stderr);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(
        err.contains("standard output") && !err.contains("panicked"),
        "{err}"
    );
}

/// Unmounts a tmpfs when dropped.
struct Mounted(PathBuf);

impl Drop for Mounted {
    fn drop(&mut self) {
        let _ = Command::new("umount").arg(&self.0).status();
    }
}

/// Writes a CSV log of `rows` valid runs (a few families, shared splits, claims).
fn write_big_log(path: &Path, rows: usize) {
    let file = fs::File::create(path).unwrap();
    let mut out = std::io::BufWriter::new(file);
    writeln!(
        out,
        "run,family,dim,train_n,train_error_rate,holdout_set,holdout_n,holdout_misclassified,claimed_accuracy"
    )
    .unwrap();
    for i in 0..rows {
        writeln!(
            out,
            "run-{i},linear,{},{},0.0{},split-{},{},{},0.9{}",
            1 + i % 50,
            1000 + i % 9000,
            i % 10,
            i / 20,
            500 + i % 5000,
            i % 40,
            i % 10
        )
        .unwrap();
    }
    out.flush().unwrap();
}

#[test]
fn full_tmpfs_fails_cleanly_and_keeps_the_old_file() {
    let dir = tempfile::tempdir().unwrap();
    let disk = dir.path().join("disk");
    fs::create_dir(&disk).unwrap();
    let mounted = Command::new("mount")
        .args(["-t", "tmpfs", "-o", "size=256k", "tmpfs"])
        .arg(&disk)
        .stderr(Stdio::null())
        .status();
    if !matches!(mounted, Ok(status) if status.success()) {
        cannot_run("cannot mount a tmpfs here (not root, or refused by the sandbox)");
        return;
    }
    let _guard = Mounted(disk.clone());
    write_big_log(&dir.path().join("runs.csv"), 5_000);
    fs::write(disk.join("out.ndjson"), "OLD\n").unwrap();
    let finished = run(
        dir.path(),
        &[
            "audit",
            "runs.csv",
            "--format",
            "ndjson",
            "--output",
            "disk/out.ndjson",
            "--gate",
            "never",
        ],
    );
    assert_eq!(finished.code, Some(2), "{}", finished.stderr);
    assert!(
        finished.stderr.contains("disk/out.ndjson")
            && finished.stderr.to_lowercase().contains("no space"),
        "{}",
        finished.stderr
    );
    assert_eq!(
        fs::read_to_string(disk.join("out.ndjson")).unwrap(),
        "OLD\n"
    );
    assert_eq!(entries(&disk), ["out.ndjson"], "temporary file removed");
}

/// Starts an audit that writes a large NDJSON report to `out.ndjson`, waits until its
/// temporary file appears, and sends `signal`.
fn interrupt_while_writing(dir: &Path, signal: &str) -> (Option<i32>, Vec<String>) {
    let mut child = Command::new(crate::common::binary())
        .args([
            "audit",
            "big.csv",
            "--format",
            "ndjson",
            "--output",
            "out.ndjson",
            "--gate",
            "never",
        ])
        .current_dir(dir)
        .stdout(Stdio::null())
        .stderr(Stdio::null())
        .spawn()
        .unwrap();
    let started = Instant::now();
    let mut caught = false;
    while started.elapsed() < DEADLINE {
        if !temporary_files(dir).is_empty() {
            caught = true;
            break;
        }
        if child.try_wait().unwrap().is_some() {
            break;
        }
        std::thread::sleep(Duration::from_micros(500));
    }
    if caught {
        let status = Command::new("kill")
            .args(["-s", signal, &child.id().to_string()])
            .status()
            .unwrap();
        assert!(status.success(), "kill -s {signal}");
    } else {
        let _ = child.kill();
    }
    let status = child.wait().unwrap();
    assert!(
        caught,
        "the audit ended before its temporary file could be seen ({status:?}); use a bigger log"
    );
    #[cfg(unix)]
    let signal_number = std::os::unix::process::ExitStatusExt::signal(&status);
    #[cfg(not(unix))]
    let signal_number = None;
    (signal_number.or(status.code()), temporary_files(dir))
}

#[test]
fn sigterm_and_sigint_while_writing_leave_the_old_file_and_no_stray_temporary() {
    let dir = tempfile::tempdir().unwrap();
    write_big_log(&dir.path().join("big.csv"), 300_000);
    let old = "OLD REPORT\n";
    let mut stray = Vec::new();
    for signal in ["TERM", "INT"] {
        fs::write(dir.path().join("out.ndjson"), old).unwrap();
        let (ended_by, leftovers) = interrupt_while_writing(dir.path(), signal);
        let now = fs::read(dir.path().join("out.ndjson")).unwrap();
        // Either untouched, or (if the rename won the race) the complete new report.
        if now != old.as_bytes() {
            let text = String::from_utf8(now).unwrap();
            assert_eq!(text.lines().count(), 300_000, "SIG{signal}: partial report");
            assert!(text
                .lines()
                .all(|l| serde_json::from_str::<Value>(l).is_ok()));
        }
        if !leftovers.is_empty() {
            stray.push(format!(
                "SIG{signal} (ended by {ended_by:?}): {leftovers:?}"
            ));
            for name in leftovers {
                let _ = fs::remove_file(dir.path().join(name));
            }
        }
    }
    assert!(
        stray.is_empty(),
        "temporary files left in the destination folder after a signal: {stray:?}"
    );
}

// ---------------------------------------------------------------------------------
// 4. Extreme values
// ---------------------------------------------------------------------------------

const I64_MAX: &str = "9223372036854775807";

fn extreme_log() -> String {
    format!(
        "run,family,vc_dim,train_n,train_error_rate,holdout_n,holdout_misclassified,candidates,claimed_accuracy,holdout_set\n\
all-wrong,vc,1000000000000,1000000000000000000,0.01,{I64_MAX},{I64_MAX},{I64_MAX},0.9,s\n\
half,vc,1000000000000,1000000000000000000,0.01,{I64_MAX},4611686018427387903,{I64_MAX},0.4,s\n\
none-wrong,vc,1000000000000,1000000000000000000,0.01,{I64_MAX},0,{I64_MAX},0.99999,t\n\
one-wrong,vc,{I64_MAX},{I64_MAX},0.01,{I64_MAX},1,1,0.99999,\n\
unproven,vc,1000,1000000000000000000,0.2,{I64_MAX},922337203685477580,{I64_MAX},0.9,u\n"
    )
}

fn assert_sane_runs(doc: &Value, what: &str) {
    for r in doc["runs"].as_array().unwrap() {
        let name = r["run"].as_str().unwrap_or("?");
        let number = |field: &str| r[field].as_f64();
        let upper = number("error_upper_bound").unwrap_or(f64::NAN);
        let lower = number("error_lower_bound").unwrap_or(f64::NAN);
        assert!(
            (0.0..=1.0).contains(&upper) && (0.0..=1.0).contains(&lower) && lower <= upper,
            "{what} {name}: bounds {lower} .. {upper}"
        );
        let delta = number("delta").unwrap_or(f64::NAN);
        assert!(delta > 0.0 && delta < 1.0, "{what} {name}: delta {delta}");
        for field in ["binomial_interval", "hoeffding_interval"] {
            let lo = r[field][0].as_f64().unwrap_or(f64::NAN);
            let hi = r[field][1].as_f64().unwrap_or(f64::NAN);
            assert!(
                (0.0..=1.0).contains(&lo) && (0.0..=1.0).contains(&hi) && lo <= hi,
                "{what} {name}: {field} {lo} .. {hi}"
            );
        }
        let claim = number("claim_error_rate");
        match r["verdict"].as_str().unwrap() {
            "certified" => assert!(upper <= claim.unwrap(), "{what} {name}"),
            "refuted" => assert!(lower > claim.unwrap(), "{what} {name}"),
            _ => {}
        }
    }
}

#[test]
fn counts_up_to_i64_max_and_huge_families_audit_or_fail_cleanly() {
    let dir = tempfile::tempdir().unwrap();
    write(dir.path(), "extreme.csv", &extreme_log());
    // One split declared: the split names are renamed out of the way in a copy,
    // since several named splits contradict --same-holdout.
    write(
        dir.path(),
        "extreme_one_split.csv",
        &extreme_log().replacen("holdout_set", "split_note", 1),
    );
    for (log, extra) in [
        ("extreme.csv", vec![]),
        ("extreme.csv", vec!["--confidence", "0.9999999999999999"]),
        ("extreme.csv", vec!["--holdout-bound", "hoeffding"]),
        (
            "extreme.csv",
            vec!["--familywise", "--confidence", "0.9999999999999999"],
        ),
        (
            "extreme_one_split.csv",
            vec![
                "--same-holdout",
                "--tolerance",
                "1e-9",
                "--max-width",
                "1e-300",
            ],
        ),
    ] {
        let mut args = vec!["audit", log, "--format", "json", "--gate", "never"];
        args.extend(extra.iter().copied());
        let finished = run(dir.path(), &args);
        assert_eq!(finished.code, Some(0), "{extra:?}: {}", finished.stderr);
        let doc = json_of(&finished, "extreme");
        assert_eq!(doc["runs"].as_array().unwrap().len(), 5);
        assert_sane_runs(&doc, &format!("{extra:?}"));
        let all_wrong = &doc["runs"][0];
        assert_eq!(all_wrong["verdict"], "refuted", "{extra:?}");
        assert_eq!(all_wrong["candidates"].as_u64(), Some(i64::MAX as u64));
    }
    for format in ["csv", "ndjson", "table", "markdown", "parquet"] {
        let out = format!("out.{format}");
        run(
            dir.path(),
            &["audit", "extreme.csv", "--format", format, "--output", &out],
        );
        assert!(
            fs::metadata(dir.path().join(&out)).unwrap().len() > 100,
            "{format}"
        );
    }
}

#[test]
fn counts_beyond_i64_are_clear_input_errors() {
    let dir = tempfile::tempdir().unwrap();
    for (value, column) in [
        ("9223372036854775808", "holdout_n"),
        ("18446744073709551616", "holdout_n"),
        ("-9223372036854775808", "holdout_n"),
        ("1e30", "holdout_n"),
        ("99999999999999999999999999999999", "candidates"),
        ("1e400", "train_n"),
    ] {
        write(
            dir.path(),
            "big.csv",
            &format!(
                "run,holdout_n,holdout_error_rate,candidates,train_n,train_error_rate\n\
r,{},0.01,{},{},0.01\n",
                if column == "holdout_n" { value } else { "100" },
                if column == "candidates" { value } else { "1" },
                if column == "train_n" { value } else { "100" },
            ),
        );
        let finished = run(dir.path(), &["audit", "big.csv", "--format", "json"]);
        assert_eq!(finished.code, Some(2), "{column} = {value}");
        assert!(
            finished.stderr.contains("big.csv:1") && finished.stderr.contains(column),
            "{column} = {value}: {}",
            finished.stderr
        );
    }
}

#[test]
fn tiny_failure_probabilities_give_finite_bounds() {
    // δ/K down to the smallest subnormal double, through the per-run audit.
    let input = |n: u64, k: u64, claim: Option<f64>| RunInput {
        run: format!("n{n}k{k}"),
        source: "mem:1".into(),
        family_key: Some("vc".into()),
        family: Some(gapcert::theory::growth::Family::Vc {
            vc_dim: 1_000_000_000_000,
        }),
        train_n: Some(1_000_000_000_000_000_000),
        train_error_rate: Some(0.01),
        holdout_n: n,
        holdout_error_rate: k as f64 / n as f64,
        holdout_misclassified: k,
        misclassified_derived: false,
        holdout_set: None,
        candidates: 1,
        claim_error_rate: claim,
        claim_form: claim.map(|_| ClaimForm::ErrorRate),
        logged_at: None,
        copies: Vec::new(),
        id_repeated: false,
        kept: Vec::new(),
    };
    for bound in [HoldoutBound::Binomial, HoldoutBound::Hoeffding] {
        let settings = AuditSettings {
            holdout_bound: bound,
            ..AuditSettings::default()
        };
        for delta in [1e-300, f64::MIN_POSITIVE, 5e-324] {
            for compared in [1, 1_000_000, u64::MAX] {
                for (n, k) in [
                    (1, 0),
                    (1, 1),
                    (10, 3),
                    (1_000_000, 1),
                    (i64::MAX as u64, 0),
                    (i64::MAX as u64, 12345),
                    (i64::MAX as u64, i64::MAX as u64 / 3),
                    (u64::MAX, u64::MAX - 1),
                ] {
                    for claim in [None, Some(0.0), Some(0.3), Some(1.0)] {
                        let context = RunContext {
                            compared,
                            delta,
                            train_needed: None,
                            defer_holdout_needed: false,
                            messages: true,
                            split_size_mismatch: false,
                        };
                        let what =
                            format!("{bound:?} δ={delta:e} K={compared} n={n} k={k} c={claim:?}");
                        let started = Instant::now();
                        let r = audit_run(input(n, k, claim), context, &settings);
                        assert!(started.elapsed() < Duration::from_secs(5), "{what}: slow");
                        for value in [
                            r.error_upper_bound,
                            r.error_lower_bound,
                            r.binomial_interval[0],
                            r.binomial_interval[1],
                            r.hoeffding_interval[0],
                            r.hoeffding_interval[1],
                        ] {
                            assert!((0.0..=1.0).contains(&value), "{what}: {r:?}");
                        }
                        assert!(r.error_lower_bound <= r.error_upper_bound, "{what}");
                        assert!(r.vc_allowance.is_some_and(f64::is_finite), "{what}");
                        match r.verdict {
                            Verdict::Certified => {
                                assert!(r.error_upper_bound <= claim.unwrap(), "{what}")
                            }
                            Verdict::Refuted => {
                                assert!(r.error_lower_bound > claim.unwrap(), "{what}")
                            }
                            Verdict::Unproven => assert!(claim.is_some()),
                            Verdict::NoClaim => assert!(claim.is_none()),
                        }
                    }
                }
            }
        }
    }
}

#[test]
fn calculators_take_extreme_arguments() {
    let dir = tempfile::tempdir().unwrap();
    for args in [
        vec![
            "plan",
            "holdout",
            "--error-rate",
            "0.0299999",
            "--claim-accuracy",
            "0.97",
            "--candidates",
            "18446744073709551615",
            "--confidence",
            "0.9999999999999999",
        ],
        vec![
            "plan",
            "holdout",
            "--error-rate",
            "0",
            "--claim-accuracy",
            "0.9999999999",
            "--candidates",
            "18446744073709551615",
        ],
        vec![
            "plan",
            "train",
            "--family",
            "vc",
            "--vc-dim",
            I64_MAX,
            "--tolerance",
            "1e-12",
        ],
        vec![
            "plan",
            "train",
            "--family",
            "relu_net",
            "--weights",
            I64_MAX,
            "--layers",
            I64_MAX,
            "--units",
            I64_MAX,
            "--tolerance",
            "0.05",
        ],
        vec![
            "growth", "--family", "vc", "--vc-dim", I64_MAX, "--upto", "64",
        ],
        vec![
            "growth", "--family", "finite", "--size", I64_MAX, "--upto", "100",
        ],
    ] {
        run(dir.path(), &args);
    }
}

#[test]
fn growth_table_at_its_largest_allowed_size_finishes() {
    // `--upto` accepts up to 10000; the table prints m_H(N) and 2^N exactly.
    let dir = tempfile::tempdir().unwrap();
    for family in [
        vec!["--family", "ray"],
        vec!["--family", "linear", "--dim", "1000"],
    ] {
        let mut args = vec!["growth"];
        args.extend(family.iter());
        args.extend(["--upto", "10000", "--format", "json"]);
        let finished = gapcert_deadline(dir.path(), &args, Duration::from_secs(15));
        finished.assert_no_crash("growth --upto 10000");
    }
    // One more is refused with a clear message, not attempted.
    let finished = gapcert_deadline(
        dir.path(),
        &["growth", "--family", "ray", "--upto", "10001"],
        Duration::from_secs(15),
    );
    finished.assert_no_crash("growth --upto 10001");
}

#[test]
#[ignore = "heavy (about 20 s alone on 2 cores): cargo test --release --test it robustness -- --ignored"]
fn a_million_runs_sharing_one_split_are_audited_within_a_minute() {
    let dir = tempfile::tempdir().unwrap();
    let rows = 1_000_000;
    {
        let file = fs::File::create(dir.path().join("million.csv")).unwrap();
        let mut out = std::io::BufWriter::new(file);
        writeln!(
            out,
            "holdout_set,holdout_n,holdout_misclassified,claimed_accuracy"
        )
        .unwrap();
        for i in 0..rows {
            // Three kinds of claim: certified, unproven (needs holdout_needed), refuted.
            let claim = ["0.9", "0.985", "0.999"][i % 3];
            writeln!(out, "s,1000,{},{claim}", 5 + i % 7).unwrap();
        }
        out.flush().unwrap();
    }
    let started = Instant::now();
    let finished = run(
        dir.path(),
        &[
            "audit",
            "million.csv",
            "--format",
            "parquet",
            "--output",
            "million.parquet",
            "--gate",
            "never",
        ],
    );
    let elapsed = started.elapsed();
    assert_eq!(finished.code, Some(0), "{}", finished.stderr);
    assert!(elapsed < DEADLINE, "took {elapsed:?}");
    use polars::prelude::*;
    let file = fs::File::open(dir.path().join("million.parquet")).unwrap();
    let frame = ParquetReader::new(file).finish().unwrap();
    assert_eq!(frame.height(), rows);
    let candidates = frame
        .column("candidates")
        .unwrap()
        .as_materialized_series()
        .clone();
    let candidates = candidates.cast(&DataType::UInt64).unwrap();
    let candidates = candidates.u64().unwrap();
    assert_eq!(
        candidates.min(),
        Some(rows as u64),
        "K = 10^6 for every run"
    );
    assert_eq!(candidates.max(), Some(rows as u64));
    eprintln!("a million runs on one split: {elapsed:?}");
}

#[test]
fn a_hundred_thousand_columns_are_read() {
    let dir = tempfile::tempdir().unwrap();
    let junk = 100_000 - 4;
    let mut header = String::from("run,holdout_n");
    for i in 0..junk {
        header.push_str(&format!(",junk{i}"));
    }
    header.push_str(",holdout_error_rate,claimed_accuracy\n");
    let mut text = header;
    for row in 0..3 {
        text.push_str(&format!("r{row},1000"));
        for i in 0..junk {
            text.push_str(if i % 2 == 0 { ",x" } else { "," });
        }
        text.push_str(",0.01,0.95\n");
    }
    write(dir.path(), "wide.csv", &text);
    let finished = run(
        dir.path(),
        &["audit", "wide.csv", "--format", "json", "--gate", "never"],
    );
    assert_eq!(finished.code, Some(0), "{}", finished.stderr);
    let doc = json_of(&finished, "wide");
    assert_eq!(doc["summary"]["runs"], 3);
    assert_eq!(doc["runs"][0]["verdict"], "certified");
    eprintln!("100,000 columns: {:?}", finished.elapsed);
}

#[test]
#[ignore = "heavy (about 7 s and 1 GB alone): cargo test --release --test it robustness -- --ignored"]
fn a_single_line_json_array_of_fifty_megabytes_is_read() {
    one_line_json_array_is_read(50, "parquet");
}

#[test]
#[ignore = "heavy (about 15 s and 1 GB alone): cargo test --release --test it robustness -- --ignored"]
fn a_single_line_json_array_of_two_hundred_megabytes_is_read() {
    // SPEC's extreme case. The records are gathered by column as they are parsed
    // (0.99 GB peak measured, the file itself included), hence ignored by default.
    one_line_json_array_is_read(200, "ndjson");
}

/// Writes a JSON array of `megabytes` MB on one line, audits it into `format`, and
/// checks that every record came out.
fn one_line_json_array_is_read(megabytes: usize, format: &str) {
    let dir = tempfile::tempdir().unwrap();
    let target = megabytes << 20;
    let mut text = String::with_capacity(target + 200);
    text.push('[');
    let mut records = 0usize;
    while text.len() < target {
        if records > 0 {
            text.push(',');
        }
        text.push_str(&format!(
            "{{\"run\":\"r{records}\",\"holdout_set\":\"s{}\",\"holdout_n\":{},\"holdout_misclassified\":{},\"claimed_accuracy\":0.9}}",
            records % 1000,
            1000 + records % 97,
            records % 50
        ));
        records += 1;
    }
    text.push(']');
    write(dir.path(), "one-line.json", &text);
    drop(text);
    let output = format!("out.{format}");
    let finished = run(
        dir.path(),
        &[
            "audit",
            "one-line.json",
            "--format",
            format,
            "--output",
            &output,
            "--gate",
            "never",
        ],
    );
    assert_eq!(finished.code, Some(0), "{}", finished.stderr);
    let written = if format == "parquet" {
        use polars::prelude::*;
        let file = fs::File::open(dir.path().join(&output)).unwrap();
        ParquetReader::new(file).finish().unwrap().height()
    } else {
        fs::read_to_string(dir.path().join(&output))
            .unwrap()
            .lines()
            .count()
    };
    assert_eq!(written, records);
    eprintln!(
        "single-line JSON array of {megabytes} MB, {records} records: {:?}",
        finished.elapsed
    );
}

#[cfg(unix)]
#[test]
fn symbolic_link_loops_in_folders_terminate() {
    let dir = tempfile::tempdir().unwrap();
    let logs = dir.path().join("logs");
    write(
        &logs,
        "a.csv",
        "run,holdout_n,holdout_error_rate\nr1,100,0.01\n",
    );
    // Two links back to the folder: a naive walk visits 2^40 paths before ELOOP.
    std::os::unix::fs::symlink(".", logs.join("loop1")).unwrap();
    std::os::unix::fs::symlink(".", logs.join("loop2")).unwrap();
    let finished = gapcert_deadline(
        dir.path(),
        &["audit", "logs", "--format", "json", "--gate", "never"],
        Duration::from_secs(10),
    );
    finished.assert_no_crash("audit of a folder with symbolic-link loops");
    assert_eq!(finished.code, Some(0), "{}", finished.stderr);
    let doc = json_of(&finished, "symlink loop");
    assert_eq!(doc["summary"]["runs"], 1, "the log is read once");
}

#[cfg(unix)]
#[test]
fn a_fifo_named_like_a_log_does_not_hang_the_audit() {
    let dir = tempfile::tempdir().unwrap();
    let logs = dir.path().join("logs");
    write(
        &logs,
        "a.csv",
        "run,holdout_n,holdout_error_rate\nr1,100,0.01\n",
    );
    let made = Command::new("mkfifo")
        .arg(logs.join("pipe.csv"))
        .status()
        .map(|s| s.success())
        .unwrap_or(false);
    if !made {
        cannot_run("mkfifo is not available");
        return;
    }
    let finished = gapcert_deadline(
        dir.path(),
        &["audit", "logs", "--format", "json", "--gate", "never"],
        Duration::from_secs(5),
    );
    finished.assert_no_crash("audit of a folder holding a FIFO named pipe.csv");
}

/// The flat CSV header is the spec's column list: with `--explain` every column,
/// without it every column but the explanation.
#[test]
fn csv_header_is_the_flat_column_list() {
    let mut out = Vec::new();
    write_csv(&small_document().runs, true, &mut out).unwrap();
    let text = String::from_utf8(out).unwrap();
    assert_eq!(text.lines().next().unwrap(), FLAT_COLUMNS.join(","));
    let mut out = Vec::new();
    write_csv(&small_document().runs, false, &mut out).unwrap();
    let text = String::from_utf8(out).unwrap();
    let without: Vec<&str> = FLAT_COLUMNS
        .iter()
        .copied()
        .filter(|c| *c != "explanation")
        .collect();
    assert_eq!(text.lines().next().unwrap(), without.join(","));
}
