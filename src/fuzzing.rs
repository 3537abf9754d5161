//! Shared body of the fuzz targets in `fuzz/` (and of their regression tests):
//! read arbitrary bytes as a log, audit whatever was read, and render every report.
//! Nothing here may panic, abort or hang, whatever the bytes.

use crate::audit::AuditSettings;
use crate::ingest::{IngestSettings, LogFormat, LogSource};
use crate::report::{self, OutputFormat};

/// libFuzzer's hook aborts on any panic, even one the readers catch; use gapcert's
/// own (an uncaught panic still reaches libFuzzer's catch_unwind and is a crash).
fn install_hook() {
    static HOOK: std::sync::Once = std::sync::Once::new();
    HOOK.call_once(|| {
        let _ = std::panic::take_hook();
        crate::ingest::formats::install_panic_hook();
    });
}

/// Reads `data` as a claims file. The first byte picks the format (and whether values
/// are percentages and written with a decimal comma), the rest is the file.
pub fn exercise_claims(data: &[u8]) {
    install_hook();
    let Some((&selector, body)) = data.split_first() else {
        return;
    };
    let format = match selector % 6 {
        0 => LogFormat::Csv,
        1 => LogFormat::Tsv,
        2 => LogFormat::JsonLines,
        3 => LogFormat::Json,
        4 => LogFormat::Parquet,
        _ => LogFormat::Arrow,
    };
    let percent = selector & 0x40 != 0;
    let delimited = crate::ingest::formats::Delimited {
        separator: None,
        decimal_comma: selector & 0x80 != 0,
    };
    let sources = [crate::ingest::claims::ClaimsSource::Memory(
        "fuzz-claims",
        body,
        format,
    )];
    let _ = crate::ingest::claims::read_claims(&sources, percent, delimited);
}

/// Parses `data` as a certificate (the reader `verify` uses), without re-auditing
/// the files it names. The reader takes a path, so the bytes go through a file.
pub fn exercise_certificate(data: &[u8]) {
    install_hook();
    thread_local! {
        static FILE: std::path::PathBuf = std::env::temp_dir().join(format!(
            "gapcert-fuzz-certificate-{}.json",
            std::process::id()
        ));
    }
    FILE.with(|path| {
        if std::fs::write(path, data).is_ok() {
            if let Ok(certificate) = crate::certificate::read_certificate(path) {
                let _ = serde_json::to_vec(&certificate);
            }
        }
    });
}

/// Reads `data` as a log of `format` (strictly, then leniently), audits it and renders
/// it in every format into memory.
pub fn exercise(data: &[u8], format: LogFormat) {
    install_hook();
    // Differential check: numeric columns typed by polars must read like text typed
    // by gapcert, wherever polars accepts every cell.
    if let Some(separator) = match format {
        LogFormat::Csv => Some(b','),
        LogFormat::Tsv => Some(b'\t'),
        _ => None,
    } {
        let [typed, text] = crate::ingest::formats::typed_and_text_readings(data, separator);
        assert!(typed == text, "typed and text readings differ");
    }
    let audit_settings = AuditSettings::default();
    for lenient in [false, true] {
        let ingest_settings = IngestSettings {
            lenient,
            ..IngestSettings::default()
        };
        let sources = [LogSource::Memory("fuzz-input", data, format)];
        if let Ok(doc) = crate::audit_sources(&sources, &audit_settings, &ingest_settings) {
            for output in [
                OutputFormat::Table,
                OutputFormat::Json,
                OutputFormat::Ndjson,
                OutputFormat::Csv,
                OutputFormat::Markdown,
                OutputFormat::Junit,
            ] {
                let mut sink = Vec::new();
                let _ =
                    report::write_report(&doc, output, &mut sink, &report::Presentation::default());
            }
            let mut sink = Vec::new();
            let _ = report::html::write_html(&doc, &mut sink);
            stream_matches(&sources, &ingest_settings, &audit_settings, &doc);
        }
    }
}

/// The streaming audit in tiny batches must write exactly the JSON lines of the
/// in-memory audit (differential check: a mismatch panics, which the fuzzer reports).
fn stream_matches(
    sources: &[LogSource<'_>],
    ingest_settings: &IngestSettings,
    audit_settings: &AuditSettings,
    doc: &report::AuditDocument,
) {
    let limits = crate::engine::StreamLimits {
        batch_rows: 3,
        hold_runs: 0,
    };
    let prepared = crate::engine::prepare(sources, &[], ingest_settings, limits, &|_, _| {})
        .expect("the in-memory audit accepted these logs");
    let mut streamed = Vec::new();
    let summary = prepared
        .stream(audit_settings, false, &|runs| runs, &mut |runs| {
            report::flat::write_ndjson(&runs, false, &mut streamed)
        })
        .expect("writing to memory")
        .summary;
    let mut expected = Vec::new();
    report::flat::write_ndjson(&doc.runs, false, &mut expected).expect("writing to memory");
    assert!(streamed == expected, "streamed JSON lines differ");
    assert_eq!(summary, doc.summary, "streamed summary differs");
}
