//! Replays the fuzz targets' body (`gapcert::fuzzing::exercise`) on the fixtures, on
//! mutations of them, and on every input saved in `fuzz/regressions/` (inputs that
//! once crashed a fuzz target; the file name's first word is the target). Passing
//! means: no panic, whatever the bytes.

mod common;

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
    let Ok(entries) = std::fs::read_dir(&folder) else {
        return;
    };
    for entry in entries {
        let path = entry.unwrap().path();
        let name = path.file_name().unwrap().to_string_lossy().to_string();
        let format = match name.split(['-', '.']).next().unwrap_or("") {
            "ingest_csv" => LogFormat::Csv,
            "ingest_jsonl" => LogFormat::JsonLines,
            "ingest_json" => LogFormat::Json,
            "ingest_parquet" => LogFormat::Parquet,
            "ingest_arrow" => LogFormat::Arrow,
            _ => continue,
        };
        gapcert::fuzzing::exercise(&std::fs::read(&path).unwrap(), format);
    }
}
