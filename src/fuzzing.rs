//! Shared body of the fuzz targets in `fuzz/` (and of their regression tests):
//! read arbitrary bytes as a log, audit whatever was read, and render every report.
//! Nothing here may panic, abort or hang, whatever the bytes.

use crate::audit::AuditSettings;
use crate::ingest::{IngestSettings, LogFormat, LogSource};
use crate::report::{self, OutputFormat};

/// Reads `data` as a log of `format` (strictly, then leniently), audits it and renders
/// it in every format into memory.
pub fn exercise(data: &[u8], format: LogFormat) {
    // libFuzzer's hook aborts on any panic, even one the readers catch; use gapcert's
    // own (an uncaught panic still reaches libFuzzer's catch_unwind and is a crash).
    static HOOK: std::sync::Once = std::sync::Once::new();
    HOOK.call_once(|| {
        let _ = std::panic::take_hook();
        crate::install_panic_hook();
    });
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
            ] {
                let mut sink = Vec::new();
                let _ = report::write_report(&doc, output, &mut sink, false);
            }
            let mut sink = Vec::new();
            let _ = report::html::write_html(&doc, &mut sink);
        }
    }
}
