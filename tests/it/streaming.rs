//! The audit engine (src/engine.rs: two passes, batch by batch) gives exactly
//! the results of the in-memory audit, whatever the batch size and whether the first
//! pass keeps the runs; and the parallel audit gives bit-identical results to a
//! single-threaded one. Results are compared as serialised JSON, whose floats round
//! trip exactly (serde_json `float_roundtrip`), so equality here is bit equality.

use crate::common;
use std::path::{Path, PathBuf};

use gapcert::audit::{AuditSettings, RunResult, Summary};
use gapcert::engine::{self, StreamLimits};
use gapcert::ingest::IngestSettings;
use polars::prelude::*;
use rand::{Rng, SeedableRng};

fn fixture(path: &str) -> PathBuf {
    common::root().join("fixtures").join(path)
}

fn streamed(
    paths: &[PathBuf],
    audit: &AuditSettings,
    ingest: &IngestSettings,
    limits: StreamLimits,
    messages: bool,
) -> (Vec<RunResult>, Summary) {
    let prepared = engine::prepare_paths(paths, ingest, limits, &|_, _| {}).expect("valid logs");
    let mut runs = Vec::new();
    let mut batches = 0;
    let doc = prepared
        .stream(audit, messages, &|batch| batch, &mut |batch| {
            batches += 1;
            assert!(!batch.is_empty() || batches == 1, "empty batch written");
            runs.extend(batch);
            Ok(())
        })
        .expect("audit");
    (runs, doc.summary)
}

fn json(runs: &[RunResult]) -> String {
    serde_json::to_string(runs).expect("serialise")
}

fn ndjson(runs: &[RunResult]) -> Vec<u8> {
    let mut out = Vec::new();
    gapcert::report::flat::write_ndjson(runs, false, &mut out).expect("write");
    out
}

/// Every limit worth trying: one run per batch with nothing kept, a few runs per
/// batch with some kept, and the defaults.
fn limits() -> Vec<StreamLimits> {
    vec![
        StreamLimits {
            batch_rows: 1,
            hold_runs: 0,
        },
        StreamLimits {
            batch_rows: 3,
            hold_runs: 7,
        },
        StreamLimits {
            batch_rows: 5,
            hold_runs: usize::MAX,
        },
        StreamLimits::default(),
    ]
}

fn assert_same_as_in_memory(paths: &[PathBuf], audit: &AuditSettings, ingest: &IngestSettings) {
    assert_same_with_limits(paths, audit, ingest, &limits());
}

/// Streamed with each of `limits`, with and without finding messages, the audit
/// equals the in-memory one.
fn assert_same_with_limits(
    paths: &[PathBuf],
    audit: &AuditSettings,
    ingest: &IngestSettings,
    limits: &[StreamLimits],
) {
    let doc = gapcert::audit_paths(paths, audit, ingest).expect("valid logs");
    assert!(!doc.runs.is_empty());
    for &limit in limits {
        let (runs, summary) = streamed(paths, audit, ingest, limit, true);
        assert_eq!(json(&runs), json(&doc.runs), "{paths:?} with {limit:?}");
        assert_eq!(summary, doc.summary, "{paths:?} with {limit:?}");
        // Codes only (what `--format ndjson|csv` uses): the same flat output.
        let (codes_only, _) = streamed(paths, audit, ingest, limit, false);
        assert!(codes_only
            .iter()
            .flat_map(|r| &r.findings)
            .all(|f| f.message.is_empty()));
        assert_eq!(
            ndjson(&codes_only),
            ndjson(&doc.runs),
            "{paths:?} with {limit:?}"
        );
    }
}

/// A CSV log rewritten as Parquet with `group_rows` rows per row group, so batches
/// follow row groups.
fn parquet_copy(csv: &Path, group_rows: usize, folder: &Path) -> PathBuf {
    let mut df = CsvReadOptions::default()
        .with_has_header(true)
        .try_into_reader_with_file_path(Some(csv.to_path_buf()))
        .expect("open csv")
        .finish()
        .expect("read csv");
    let path = folder.join("runs.parquet");
    let file = std::fs::File::create(&path).expect("create parquet");
    ParquetWriter::new(file)
        .with_row_group_size(Some(group_rows))
        .finish(&mut df)
        .expect("write parquet");
    path
}

#[test]
fn streamed_demo_equals_in_memory_audit() {
    let paths = [fixture("demo/runs.csv")];
    let ingest = IngestSettings::default();
    assert_same_as_in_memory(&paths, &AuditSettings::default(), &ingest);
    let familywise = AuditSettings {
        familywise: true,
        ..AuditSettings::default()
    };
    assert_same_as_in_memory(&paths, &familywise, &ingest);
    let same_holdout = AuditSettings {
        same_holdout: true,
        ..AuditSettings::default()
    };
    assert_same_as_in_memory(
        &[fixture("demo/runs_one_split.csv")],
        &same_holdout,
        &ingest,
    );
}

#[test]
fn streamed_folder_of_every_format_equals_in_memory_audit() {
    // Six files holding the same runs: K counts rows across all of them.
    assert_same_as_in_memory(
        &[fixture("formats"), fixture("demo/runs.csv")],
        &AuditSettings::default(),
        &IngestSettings::default(),
    );
}

#[test]
fn streamed_copies_are_set_aside_as_in_memory() {
    // Identical files, a re-saved copy (other bytes, the same runs) and a repeated
    // identifier with other values: streamed with nothing held, copies are found by
    // key; held, by comparing runs. Both equal the in-memory audit.
    let dir = tempfile::tempdir().unwrap();
    let demo = std::fs::read_to_string(fixture("demo/runs.csv")).unwrap();
    std::fs::write(dir.path().join("runs.csv"), &demo).unwrap();
    std::fs::write(dir.path().join("runs (copy).csv"), &demo).unwrap();
    std::fs::write(dir.path().join("resaved.csv"), demo.replace('\n', "\r\n")).unwrap();
    let mut lines: Vec<&str> = demo.lines().collect();
    // The first run again with one more error: same identifier, other values.
    let changed = lines[1].replacen(",511,", ",512,", 1);
    assert_ne!(changed, lines[1]);
    lines.truncate(2);
    lines.push(&changed);
    std::fs::write(dir.path().join("extra.csv"), lines.join("\n") + "\n").unwrap();
    let paths = [dir.path().to_path_buf()];
    let doc = gapcert::audit_paths(
        &paths,
        &AuditSettings::default(),
        &IngestSettings::default(),
    )
    .expect("valid logs");
    assert_eq!(doc.summary.runs, 22);
    assert_eq!(doc.summary.copies_set_aside, 21 * 2 + 1);
    assert!(doc.runs.iter().filter(|run| run.copies.len() >= 2).count() == 21);
    let repeated: Vec<&str> = doc
        .runs
        .iter()
        .filter(|run| {
            run.findings
                .iter()
                .any(|f| f.code.as_str() == "run_id_repeated")
        })
        .map(|run| run.source.as_str())
        .collect();
    assert_eq!(repeated.len(), 2, "{repeated:?}");
    assert_same_as_in_memory(
        &paths,
        &AuditSettings::default(),
        &IngestSettings::default(),
    );
}

#[test]
fn streamed_parquet_row_groups_equal_in_memory_audit() {
    let folder = tempfile::tempdir().expect("temporary folder");
    for group_rows in [1, 4, 7, 1000] {
        let parquet = parquet_copy(&fixture("demo/runs.csv"), group_rows, folder.path());
        assert_same_as_in_memory(
            &[parquet],
            &AuditSettings::default(),
            &IngestSettings::default(),
        );
    }
}

#[test]
fn streamed_lenient_audit_skips_the_same_rows_and_files() {
    let paths = [
        fixture("bad/several_bad_rows.csv"),
        fixture("demo/runs.csv"),
        fixture("bad/missing_holdout_n.csv"),
    ];
    let ingest = IngestSettings {
        lenient: true,
        ..IngestSettings::default()
    };
    let doc = gapcert::audit_paths(&paths, &AuditSettings::default(), &ingest).expect("lenient");
    assert!(!doc.skipped_rows.is_empty() && !doc.skipped_files.is_empty());
    for limit in limits() {
        let prepared = engine::prepare_paths(&paths, &ingest, limit, &|_, _| {}).expect("lenient");
        assert_eq!(prepared.skipped_rows, doc.skipped_rows, "{limit:?}");
        assert_eq!(prepared.skipped_files, doc.skipped_files, "{limit:?}");
        assert_eq!(prepared.inputs, doc.inputs, "{limit:?}");
    }
    assert_same_as_in_memory(&paths, &AuditSettings::default(), &ingest);
}

#[test]
fn streamed_bad_input_fails_before_any_batch_is_audited() {
    let paths = [
        fixture("demo/runs.csv"),
        fixture("bad/several_bad_rows.csv"),
    ];
    for limit in limits() {
        match engine::prepare_paths(&paths, &IngestSettings::default(), limit, &|_, _| {}) {
            Ok(_) => panic!("bad rows accepted with {limit:?}"),
            Err(error) => {
                let text = error.to_string();
                assert!(text.contains("several_bad_rows.csv:"), "{text}");
            }
        }
    }
}

/// An invented sweep log of `rows` runs: random sizes, counts, claims, families and
/// shared held-out splits (seeded).
fn invented_sweep(rows: usize, path: &Path) {
    let mut rng = rand::rngs::StdRng::seed_from_u64(20261202);
    let families = ["linear,8,", "vc,,12", "ray,,", "box,3,", "mystery,,"];
    let mut text = String::from("run,family,dim,vc_dim,train_n,train_error_rate,holdout_n,holdout_misclassified,holdout_set,claimed_accuracy\n");
    for i in 0..rows {
        let n: u64 = 10u64.pow(rng.gen_range(2..6)) * rng.gen_range(1..10);
        let k = rng.gen_range(0..=n / 10);
        let family = families[rng.gen_range(0..families.len())];
        let train_n = rng.gen_range(100..1_000_000);
        let train_rate: f64 = rng.gen_range(0.0..0.2);
        let split = rng.gen_range(0..40);
        let claim: f64 = rng.gen_range(0.85..0.999);
        text.push_str(&format!(
            "sweep-{i},{family},{train_n},{train_rate:.5},{n},{k},split-{split},{claim:.4}\n"
        ));
    }
    std::fs::write(path, text).expect("write log");
}

#[test]
fn streamed_sweep_equals_in_memory_audit() {
    let (_folder, path) = sweep_log(3000);
    let limits = [
        StreamLimits {
            batch_rows: 257,
            hold_runs: 0,
        },
        StreamLimits {
            batch_rows: 1000,
            hold_runs: 2000,
        },
    ];
    assert_same_with_limits(
        &[path],
        &AuditSettings::default(),
        &IngestSettings::default(),
        &limits,
    );
}

/// An invented sweep log of `rows` runs in a temporary folder (kept alive by the
/// returned guard).
fn sweep_log(rows: usize) -> (tempfile::TempDir, PathBuf) {
    let folder = tempfile::tempdir().expect("temporary folder");
    let path = folder.path().join("sweep.csv");
    invented_sweep(rows, &path);
    (folder, path)
}

/// Runs `work` on a rayon pool of `threads` threads.
fn with_threads<T: Send>(threads: usize, work: impl FnOnce() -> T + Send) -> T {
    rayon::ThreadPoolBuilder::new()
        .num_threads(threads)
        .build()
        .expect("thread pool")
        .install(work)
}

#[test]
fn parallel_audit_is_bit_identical_to_single_threaded() {
    let (_folder, path) = sweep_log(5000);
    let paths = [path];
    let audit = AuditSettings::default();
    let ingest = IngestSettings::default();
    let audit_with = |threads: usize| {
        with_threads(threads, || {
            gapcert::audit_paths(&paths, &audit, &ingest).expect("valid log")
        })
    };
    let single = audit_with(1);
    let parallel = audit_with(4);
    assert_eq!(single.runs.len(), 5000);
    assert_eq!(json(&single.runs), json(&parallel.runs));
    assert_eq!(single.summary, parallel.summary);
    // And the flat writer: lines formatted in parallel, written in order.
    let write = |threads: usize| with_threads(threads, || ndjson(&single.runs));
    assert_eq!(write(1), write(4));
}

#[test]
fn hand_written_json_lines_equal_serde_output() {
    let (_folder, path) = sweep_log(2000);
    let mut paths = vec![path, fixture("demo/runs.csv"), fixture("formats")];
    paths.extend([fixture("edge/mixed_case.csv")]);
    let doc = gapcert::audit_paths(
        &paths,
        &AuditSettings::default(),
        &IngestSettings::default(),
    )
    .expect("valid logs");
    let mut runs = doc.runs;
    // Hostile and unusual text: quotes, backslashes, control characters, non-ASCII.
    runs[0].run = "a \"quoted\" \\ run\n\t\u{7}é😀".to_string();
    runs[0].holdout_set = Some("</script>\u{0}".to_string());
    runs[1].run = "\u{8}\u{c}\r\u{1f}\u{7f}/\"\"\\".to_string();
    runs[1].family = Some("\u{1}x\u{1b}[31m".to_string());
    runs[2].source = "dir/ä.csv:3".to_string();
    runs[0].logged_at = None;
    runs[1].growth_ln = Some(f64::NAN);
    runs[1].vc_bound = Some(f64::INFINITY);
    for explain in [false, true] {
        let mut serde = Vec::new();
        gapcert::report::flat::write_ndjson_serde(&runs, explain, &mut serde).expect("write");
        let mut ours = Vec::new();
        gapcert::report::flat::write_ndjson(&runs, explain, &mut ours).expect("write");
        assert_eq!(
            String::from_utf8(ours).unwrap(),
            String::from_utf8(serde).unwrap()
        );
    }
}

/// A binary (not string) text column with one cell that is not UTF-8: each cell is
/// converted on its own (the invalid bytes become U+FFFD), so the other cells keep
/// their text and the table reads the same whole and in batches. Found by fuzzing
/// (fuzz/regressions/ingest_arrow-binary-not-utf8.arrow): polars' cast of the whole
/// column turned every cell into null.
#[test]
fn binary_text_column_reads_cell_by_cell() {
    let folder = tempfile::tempdir().expect("temporary folder");
    let splits: Vec<&[u8]> = vec![b"north", b"north", b"\xff\xfe", b"south"];
    let mut df = df!(
        "run" => ["a", "b", "c", "d"],
        "holdout_n" => [100i64, 200, 300, 400],
        "holdout_misclassified" => [1i64, 2, 3, 4],
        "holdout_set" => splits,
    )
    .expect("frame");
    let path = folder.path().join("binary.arrow");
    IpcWriter::new(std::fs::File::create(&path).expect("create"))
        .finish(&mut df)
        .expect("write arrow");
    let paths = [path];
    let doc = gapcert::audit_paths(
        &paths,
        &AuditSettings::default(),
        &IngestSettings::default(),
    )
    .expect("valid log");
    let splits: Vec<Option<&str>> = doc.runs.iter().map(|r| r.holdout_set.as_deref()).collect();
    assert_eq!(
        splits,
        [
            Some("north"),
            Some("north"),
            Some("\u{fffd}\u{fffd}"),
            Some("south")
        ]
    );
    assert_eq!(
        doc.runs[0].candidates, 2,
        "the two north runs share a split"
    );
    assert_same_as_in_memory(
        &paths,
        &AuditSettings::default(),
        &IngestSettings::default(),
    );
}

/// Claims reach every sink: streamed in any batch size, kept or read again, kept
/// worst or collected, the claims, their summary counts and the split entries equal
/// those of the collected audit (before the one engine, a streamed audit silently
/// dropped the claims).
#[test]
fn every_sink_decides_the_same_claims_and_splits() {
    let paths = [fixture("demo/runs.csv")];
    let ingest = IngestSettings {
        claims_files: vec![fixture("demo/claims.csv")],
        ..IngestSettings::default()
    };
    for audit in [
        AuditSettings::default(),
        AuditSettings {
            familywise: true,
            ..AuditSettings::default()
        },
    ] {
        let doc = gapcert::audit_paths(&paths, &audit, &ingest).expect("valid logs");
        assert!(doc.claims.len() >= 5, "the demo's claims were read");
        assert!(doc.summary.claims == doc.claims.len());
        for limit in limits() {
            let streamed = engine::prepare_paths(&paths, &ingest, limit, &|_, _| {})
                .expect("valid logs")
                .stream(&audit, false, &|batch| batch.len(), &mut |_| Ok(()))
                .expect("audit");
            assert_eq!(streamed.claims, doc.claims, "{limit:?}");
            assert_eq!(streamed.splits, doc.splits, "{limit:?}");
            assert_eq!(streamed.summary, doc.summary, "{limit:?}");
            assert!(streamed.runs.is_empty());
            let worst = engine::prepare_paths(&paths, &ingest, limit, &|_, _| {})
                .expect("valid logs")
                .keep_worst(&audit, 3, &[])
                .expect("audit");
            assert_eq!(worst.claims, doc.claims, "{limit:?}");
            assert_eq!(worst.splits, doc.splits, "{limit:?}");
            assert_eq!(worst.summary, doc.summary, "{limit:?}");
            assert_eq!(worst.runs.len(), 3);
        }
    }
}

/// A claim that names no run fails the audit at the check, before the second pass
/// hands any run to a sink, whether the runs were held or are read again.
#[test]
fn a_bad_claim_fails_before_any_run_is_written() {
    let folder = tempfile::tempdir().expect("temporary folder");
    let claims = folder.path().join("claims.csv");
    std::fs::write(
        &claims,
        "claim,kind,run,value\nc1,accuracy,no-such-run,0.9\n",
    )
    .expect("write claims");
    let ingest = IngestSettings {
        claims_files: vec![claims],
        ..IngestSettings::default()
    };
    for limit in limits() {
        let mut prepared =
            engine::prepare_paths(&[fixture("demo/runs.csv")], &ingest, limit, &|_, _| {})
                .expect("valid logs");
        let error = prepared
            .check(&AuditSettings::default())
            .expect_err("a claim on no run");
        assert!(error.to_string().contains("no-such-run"), "{error}");
    }
}

/// A batch of results must stay under glibc's largest dynamic mmap threshold
/// (32 MiB), or every batch is a fresh mapping whose pages fault in again (batches of
/// 65,536 results of 536 bytes did: 530,000 page faults per million runs against
/// 367,000 with batches of 32,768); this also keeps the per-run record from growing
/// unnoticed.
#[test]
fn a_batch_of_results_stays_under_the_mmap_threshold() {
    let size = std::mem::size_of::<RunResult>();
    let batch = StreamLimits::default().batch_rows;
    assert!(size <= 560, "RunResult grew to {size} bytes");
    assert!(size * batch < 32 << 20, "{batch} results of {size} bytes");
}
