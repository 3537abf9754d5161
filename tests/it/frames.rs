//! The library functions behind the Python package's frames and outputs
//! (src/frames.rs, src/outputs.rs): the runs streamed as Arrow batch by batch equal
//! the frame of the collected document, with sentences only when asked; files and
//! in-memory logs make one audit whose summary counts the files skipped in folders;
//! claims are ordered as every report orders them; an output never replaces an input;
//! a certificate records the folder the audit ran in.

use crate::common;
use std::path::PathBuf;

use gapcert::audit::AuditSettings;
use gapcert::engine::StreamLimits;
use gapcert::ingest::claims::ClaimsSource;
use gapcert::ingest::{IngestSettings, LogFormat, LogSource};
use gapcert::outputs::InputFiles;
use gapcert::{frames, ingest};
use polars::prelude::*;

fn fixture(path: &str) -> PathBuf {
    common::root().join("fixtures").join(path)
}

/// Small batches, so that the demo's 21 runs make several parts.
const SMALL: StreamLimits = StreamLimits {
    batch_rows: 4,
    hold_runs: 2_000_000,
};

fn demo_claims() -> Vec<ClaimsSource<'static>> {
    vec![ClaimsSource::Path(fixture("demo/claims.csv"))]
}

fn read_parts(parts: &[Vec<u8>]) -> DataFrame {
    let mut all: Option<DataFrame> = None;
    for part in parts {
        let frame = IpcReader::new(std::io::Cursor::new(part.clone()))
            .finish()
            .expect("an Arrow IPC file");
        match &mut all {
            None => all = Some(frame),
            Some(all) => {
                all.vstack_mut(&frame).expect("same columns");
            }
        }
    }
    all.expect("at least one part")
}

#[test]
fn streamed_arrow_parts_equal_the_frame_of_the_collected_document() {
    let discovery = ingest::discover(&[fixture("demo/runs.csv")]).unwrap();
    let ingest = IngestSettings::default();
    let audit = AuditSettings::default();
    let claims = demo_claims();
    for explain in [false, true] {
        let prepared =
            frames::prepare_mixed(Some(&discovery), &[], &claims, &ingest, SMALL, &|_, _| {})
                .unwrap();
        let (doc, parts) = frames::audit_to_arrow(prepared, &audit, explain).unwrap();
        assert!(parts.len() > 1, "one part per batch");
        assert!(doc.runs.is_empty(), "no document of every run is built");
        let streamed = read_parts(&parts);

        let prepared =
            frames::prepare_mixed(Some(&discovery), &[], &claims, &ingest, SMALL, &|_, _| {})
                .unwrap();
        let collected = prepared.collect(&audit).unwrap();
        let expected = frames::runs_frame(&collected.runs, explain).unwrap();
        assert!(streamed.equals_missing(&expected), "explain={explain}");
        assert_eq!(doc.summary, collected.summary);
        assert_eq!(doc.claims, collected.claims);
        assert_eq!(doc.splits, collected.splits);
    }
}

#[test]
fn sentences_are_in_the_frame_only_when_asked() {
    let doc = gapcert::audit_paths(
        &[fixture("demo/runs.csv")],
        &AuditSettings::default(),
        &IngestSettings::default(),
    )
    .unwrap();
    let codes = frames::runs_frame(&doc.runs, false).unwrap();
    let names: Vec<&str> = codes
        .get_column_names()
        .iter()
        .map(|n| n.as_str())
        .collect();
    let flat: Vec<&str> = gapcert::report::flat::FLAT_COLUMNS
        .iter()
        .copied()
        .filter(|name| *name != "explanation")
        .collect();
    assert_eq!(names, flat);

    let explained = frames::runs_frame(&doc.runs, true).unwrap();
    let names: Vec<&str> = explained
        .get_column_names()
        .iter()
        .map(|n| n.as_str())
        .collect();
    let at = |name: &str| names.iter().position(|n| *n == name).unwrap();
    assert_eq!(at(frames::FINDING_MESSAGES), at("findings") + 1);
    let explanation = explained.column("explanation").unwrap().str().unwrap();
    for (row, run) in doc.runs.iter().enumerate() {
        assert_eq!(explanation.get(row), Some(run.explanation.as_str()));
        let messages = explained
            .column(frames::FINDING_MESSAGES)
            .unwrap()
            .list()
            .unwrap()
            .get_as_series(row)
            .unwrap();
        let messages: Vec<&str> = messages.str().unwrap().iter().flatten().collect();
        let expected: Vec<&str> = run.findings.iter().map(|f| f.message.as_str()).collect();
        assert_eq!(messages, expected, "{}", run.run);
    }
    assert!(doc.runs.iter().any(|run| !run.findings.is_empty()));

    let empty = frames::runs_frame(&[], true).unwrap();
    assert_eq!(empty.height(), 0);
    assert_eq!(empty.width(), gapcert::report::flat::FLAT_COLUMNS.len() + 1);
}

#[test]
fn files_and_frames_make_one_audit_that_counts_the_files_skipped() {
    // A folder holding a README (skipped) and two logs, then a log in memory.
    let discovery = ingest::discover(&[fixture("edge/mixed")]).unwrap();
    assert!(!discovery.skipped_files.is_empty());
    let memory = std::fs::read(fixture("worked/runs.csv")).unwrap();
    let sources = [LogSource::Memory("frame", &memory, LogFormat::Csv)];
    let prepared = frames::prepare_mixed(
        Some(&discovery),
        &sources,
        &[],
        &IngestSettings::default(),
        StreamLimits::default(),
        &|_, _| {},
    )
    .unwrap();
    let doc = prepared.collect(&AuditSettings::default()).unwrap();
    assert_eq!(doc.summary.files_skipped, discovery.skipped_files.len());
    assert_eq!(doc.skipped_files.len(), discovery.skipped_files.len());
    let last = doc.inputs.last().unwrap();
    assert_eq!(last.path, "frame", "files first, then the logs in memory");
    assert!(doc.runs.last().unwrap().source.starts_with("frame:"));

    let files_only = gapcert::audit_paths(
        &[fixture("edge/mixed")],
        &AuditSettings::default(),
        &IngestSettings::default(),
    )
    .unwrap();
    assert_eq!(files_only.skipped_files, doc.skipped_files);

    let nothing = frames::prepare_mixed(
        None,
        &[],
        &[],
        &IngestSettings::default(),
        StreamLimits::default(),
        &|_, _| {},
    );
    assert!(matches!(nothing, Err(gapcert::Error::Usage(_))));
}

#[test]
fn claim_rows_follow_the_reports_order() {
    let ingest = IngestSettings {
        claims_files: vec![fixture("demo/claims.csv")],
        ..IngestSettings::default()
    };
    let doc = gapcert::audit_paths(
        &[fixture("demo/runs.csv")],
        &AuditSettings::default(),
        &ingest,
    )
    .unwrap();
    let rows = frames::claim_rows_worst_first(&doc.claims);
    let ordered = gapcert::report::claims::claims_worst_first(&doc.claims);
    assert_eq!(rows.len(), doc.claims.len());
    for (row, claim) in rows.iter().zip(ordered) {
        assert!(std::ptr::eq(&doc.claims[*row], claim));
    }
    assert!(frames::claim_rows_worst_first(&[]).is_empty());
}

#[test]
fn an_output_never_replaces_an_input() {
    let dir = tempfile::tempdir().unwrap();
    let log = dir.path().join("runs.csv");
    std::fs::copy(fixture("worked/runs.csv"), &log).unwrap();
    let claims = dir.path().join("claims.csv");
    std::fs::copy(fixture("worked/claims.csv"), &claims).unwrap();
    let discovery = ingest::discover(std::slice::from_ref(&log)).unwrap();
    let inputs = InputFiles::of(Some(&discovery), [claims.as_path()]);

    let refused = inputs.check_output("write_html", &log).unwrap_err();
    assert!(refused
        .to_string()
        .contains("which the output would replace"));
    assert!(inputs.check_output("write_html", &claims).is_err());
    // Another name for the same file.
    let alias = dir.path().join("alias.csv");
    std::fs::hard_link(&log, &alias).unwrap();
    assert_eq!(inputs.input_at(&alias), Some(log.as_path()));
    // A new file, and an existing file that is not an input, are fine.
    assert!(inputs
        .check_output("write_html", &dir.path().join("new.html"))
        .is_ok());
    let other = dir.path().join("other.csv");
    std::fs::write(&other, "x").unwrap();
    assert!(inputs.check_output("write_html", &other).is_ok());
}

#[test]
fn a_certificate_records_the_folder_the_audit_ran_in() {
    let dir = tempfile::tempdir().unwrap();
    let doc = gapcert::audit_paths(
        &[fixture("worked/runs.csv")],
        &AuditSettings::default(),
        &IngestSettings::default(),
    )
    .unwrap();
    let paths = vec!["fixtures/worked/runs.csv".to_string()];
    let read = |path: &std::path::Path| -> serde_json::Value {
        serde_json::from_str(&std::fs::read_to_string(path).unwrap()).unwrap()
    };
    let elsewhere = dir.path().join("elsewhere.cert.json");
    gapcert::outputs::write_certificate(&elsewhere, &doc, &paths, Some(&common::root())).unwrap();
    // The certificate names the audit's folder relative to its own.
    let root = read(&elsewhere)["certificate"]["root"]
        .as_str()
        .unwrap()
        .to_string();
    assert_eq!(
        std::fs::canonicalize(dir.path().join(root)).unwrap(),
        std::fs::canonicalize(common::root()).unwrap()
    );
    // Audited here: exactly what certificate::write_certificate writes.
    let here = std::env::current_dir().unwrap();
    let ours = dir.path().join("ours.cert.json");
    let theirs = dir.path().join("theirs.cert.json");
    gapcert::outputs::write_certificate(&ours, &doc, &paths, Some(&here)).unwrap();
    gapcert::certificate::write_certificate(&theirs, &doc, &paths).unwrap();
    assert_eq!(read(&ours), read(&theirs));
}
