//! Replays the fuzz targets' body (`gapcert::fuzzing::exercise`) on the fixtures, on
//! mutations of them, and on every input saved in `fuzz/regressions/` (inputs that
//! once crashed a fuzz target; the file name's first word is the target). Passing
//! means: no panic, whatever the bytes.

use crate::common;
use gapcert::ingest::LogFormat;

fn format_of(name: &str) -> Option<LogFormat> {
    LogFormat::from_path(std::path::Path::new(name))
}

#[test]
fn fixtures_and_their_truncations_never_panic() {
    let mut files = Vec::new();
    for folder in [
        "fixtures/demo",
        "fixtures/formats",
        "fixtures/bad",
        "fixtures/edge",
        "fixtures/worked",
    ] {
        for entry in std::fs::read_dir(common::root().join(folder)).unwrap() {
            files.push(entry.unwrap().path());
        }
    }
    let mut exercised = 0;
    for path in files {
        let Some(format) = format_of(&path.to_string_lossy()) else {
            continue;
        };
        let bytes = std::fs::read(&path).unwrap();
        gapcert::fuzzing::exercise(&bytes, format);
        // Truncations at a few points, and a byte flipped in the middle.
        for cut in [
            1,
            bytes.len() / 3,
            bytes.len() / 2,
            bytes.len().saturating_sub(1),
        ] {
            gapcert::fuzzing::exercise(&bytes[..cut.min(bytes.len())], format);
        }
        let mut flipped = bytes.clone();
        if !flipped.is_empty() {
            let middle = flipped.len() / 2;
            flipped[middle] ^= 0xA5;
            gapcert::fuzzing::exercise(&flipped, format);
        }
        exercised += 1;
    }
    assert!(exercised >= 20, "only {exercised} fixture files exercised");
}

#[test]
fn saved_fuzz_crashes_stay_fixed() {
    let folder = common::root().join("fuzz/regressions");
    let entries = match std::fs::read_dir(&folder) {
        Ok(entries) => entries,
        Err(error) => {
            common::cannot_run(&format!("cannot read {}: {error}", folder.display()));
            return;
        }
    };
    let mut replayed = 0;
    for entry in entries {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy().to_string();
        let target = name.split(['-', '.']).next().unwrap_or("");
        let bytes = std::fs::read(&path).unwrap();
        match target {
            "claims" => gapcert::fuzzing::exercise_claims(&bytes),
            "certificate" => gapcert::fuzzing::exercise_certificate(&bytes),
            _ => {}
        }
        let format = match target {
            "claims" | "certificate" => {
                replayed += 1;
                continue;
            }
            "ingest_csv" => LogFormat::Csv,
            "ingest_jsonl" => LogFormat::JsonLines,
            "ingest_json" => LogFormat::Json,
            "ingest_parquet" => LogFormat::Parquet,
            "ingest_arrow" => LogFormat::Arrow,
            _ => continue,
        };
        gapcert::fuzzing::exercise(&bytes, format);
        replayed += 1;
    }
    if replayed == 0 {
        common::cannot_run(&format!("no saved fuzz input in {}", folder.display()));
    }
}

/// Found by fuzzing `ingest_arrow`: an Arrow IPC file whose record batch declares a
/// buffer of ~2^48 bytes made polars allocate it, and the allocation failure aborted the
/// process (an abort cannot be caught). Fixed by checking every declared extent against
/// the file before polars reads it (`src/ingest/preflight.rs`). Run in a child process
/// so that a regression cannot take the test binary down.
#[test]
fn forged_arrow_buffer_length_is_an_input_error() {
    let path = "fuzz/regressions/ingest_arrow-forged-buffer-length.arrow";
    assert_input_error(
        path,
        &[
            &format!("{path}: cannot read as Arrow IPC: record batch 0 declares a "),
            "-byte buffer",
        ],
    );
}

/// Found by fuzzing `ingest_parquet`: a data page declaring a negative value count
/// (taken as ~2^64) made polars reserve memory for it, and the allocation failure
/// aborted the process. Fixed by walking the page headers and checking each page's
/// counts against its column chunk and row group before polars decodes anything.
#[test]
fn forged_parquet_value_count_is_an_input_error() {
    let path = "fuzz/regressions/ingest_parquet-forged-value-count.parquet";
    assert_input_error(
        path,
        &[&format!(
            "{path}: cannot read as Parquet: page 1 of column `vc_dim` in row group 0 declares -21 values"
        )],
    );
}

/// Under `--lenient` a file that fails the pre-flight check is skipped and named, with
/// the reason, rather than failing the audit or aborting it.
#[test]
fn forged_files_are_skipped_under_lenient() {
    let output = common::gapcert(&[
        "audit",
        "--lenient",
        "--format",
        "json",
        "fixtures/formats/runs.tsv",
        "fuzz/regressions/ingest_arrow-forged-buffer-length.arrow",
        "fuzz/regressions/ingest_parquet-forged-value-count.parquet",
    ]);
    let err = common::stderr(&output);
    assert!(matches!(output.status.code(), Some(0 | 1)), "{err}");
    let report = common::stdout(&output);
    assert!(
        report.contains("ingest_arrow-forged-buffer-length.arrow")
            && report.contains("ingest_parquet-forged-value-count.parquet")
            && report.contains("-byte buffer")
            && report.contains("declares -21 values"),
        "{report}"
    );
}

/// Found by fuzzing `ingest_parquet`: a malformed Parquet file that polars decodes into
/// a column shorter than the table (12 values for 20 rows); validation indexed past the
/// column's end and panicked. Now a file problem naming the column.
#[test]
fn parquet_column_shorter_than_table_is_an_input_error() {
    let path = "fuzz/regressions/ingest_parquet-short-column.parquet";
    assert_input_error(path, &[path, "holds 12 values but the table has 20 rows"]);
}

/// Audits `path` in a child process (so that a regression cannot take the test binary
/// down) and expects exit 2, no panic, and every fragment in the message.
fn assert_input_error(path: &str, fragments: &[&str]) {
    let output = common::gapcert(&["audit", path]);
    let err = common::stderr(&output);
    assert_eq!(output.status.code(), Some(2), "{err}");
    assert!(!err.contains("panicked"), "{err}");
    for fragment in fragments {
        assert!(err.contains(fragment), "{fragment:?} missing in: {err}");
    }
}

#[test]
fn claims_and_certificate_readers_survive_fixtures_and_their_truncations() {
    // The bodies of the `claims` and `certificate` fuzz targets: the first byte of a
    // claims input picks the format (0: CSV).
    for file in ["fixtures/demo/claims.csv", "fixtures/worked/claims.csv"] {
        let bytes = std::fs::read(common::root().join(file)).unwrap();
        for cut in [0, 1, bytes.len() / 3, bytes.len() / 2, bytes.len()] {
            for selector in 0u8..6 {
                let mut input = vec![selector];
                input.extend_from_slice(&bytes[..cut]);
                gapcert::fuzzing::exercise_claims(&input);
            }
        }
    }
    for file in [
        "fixtures/worked/expected.json",
        "fixtures/worked/expected_claims.json",
    ] {
        let bytes = std::fs::read(common::root().join(file)).unwrap();
        for cut in [0, 1, bytes.len() / 3, bytes.len() / 2, bytes.len()] {
            gapcert::fuzzing::exercise_certificate(&bytes[..cut]);
        }
    }
}
