//! gapcert audits machine-learning run logs and certifies, or refuses to certify, the
//! accuracy they claim.
//!
//! Data flows one way: [`ingest`] reads logs into validated runs, [`audit`] evaluates
//! each run with the pure mathematics of [`theory`], and [`report`] renders the result.
//!
//! ```
//! use gapcert::audit::{AuditSettings, Verdict};
//! use gapcert::ingest::{IngestSettings, LogFormat, LogSource};
//!
//! // An invented log: 12 errors in 2,000 held-out examples, claiming 98 % accuracy.
//! let log = b"run,holdout_n,holdout_misclassified,claimed_accuracy\nexample,2000,12,0.98\n";
//! let sources = [LogSource::Memory("example.csv", log, LogFormat::Csv)];
//! let doc = gapcert::audit_sources(&sources, &AuditSettings::default(), &IngestSettings::default())
//!     .expect("a valid log");
//! let run = &doc.runs[0];
//! // Exact one-sided 95 % upper bound on the true error (Clopper–Pearson): about 1.0 %.
//! assert!(run.error_upper_bound > 0.006 && run.error_upper_bound < 0.02);
//! assert_eq!(run.verdict, Verdict::Certified);
//!
//! // The same evidence cannot support 99.5 %.
//! assert!(gapcert::theory::binomial::upper_bound(12, 2000, 0.05) > 0.005);
//! ```

pub mod app;
pub mod audit;
pub mod certificate;
pub mod cli;
pub mod demo;
pub mod fuzzing;
pub mod ingest;
pub mod pipeline;
pub mod report;
pub mod theory;

use audit::{audit_runs_owned, summarize, AuditSettings};
use ingest::{IngestError, IngestOutcome, IngestSettings, LogSource};
use report::{AuditDocument, DocumentSettings, ToolInfo, CAUTIONS};

/// Audits already-ingested runs and assembles the document.
pub fn audit_outcome(
    outcome: IngestOutcome,
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
) -> AuditDocument {
    let started = std::time::Instant::now();
    let runs = audit_runs_owned(outcome.runs, audit_settings);
    timing("audit", started);
    let mut summary = summarize(&runs, audit_settings.gate);
    summary.rows_skipped = outcome.skipped_rows.len() + outcome.rows_in_skipped_files;
    summary.rows_read = runs.len() + summary.rows_skipped;
    summary.files_skipped = outcome.skipped_files.len();
    AuditDocument {
        tool: ToolInfo::current(),
        generated_at: report::document::now_rfc3339(),
        settings: DocumentSettings::new(audit_settings, ingest_settings),
        inputs: outcome.inputs,
        runs,
        summary,
        skipped_rows: outcome.skipped_rows,
        skipped_files: outcome.skipped_files,
        cautions: CAUTIONS.iter().map(|c| c.to_string()).collect(),
    }
}

/// Reads and audits the logs at `paths` (files or folders).
pub fn audit_paths(
    paths: &[std::path::PathBuf],
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
) -> Result<AuditDocument, IngestError> {
    audit_paths_reporting(paths, audit_settings, ingest_settings, &|_, _| {})
}

/// [`audit_paths`], reporting each file read to `progress` (files read, files in all).
pub fn audit_paths_reporting(
    paths: &[std::path::PathBuf],
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
    progress: ingest::FileProgress<'_>,
) -> Result<AuditDocument, IngestError> {
    let started = std::time::Instant::now();
    let outcome = ingest::read_paths_reporting(paths, ingest_settings, progress)?;
    timing("ingest", started);
    Ok(audit_outcome(outcome, audit_settings, ingest_settings))
}

/// Reads and audits the given sources (files or in-memory logs).
pub fn audit_sources(
    sources: &[LogSource<'_>],
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
) -> Result<AuditDocument, IngestError> {
    let outcome = ingest::read_sources(sources, ingest_settings)?;
    Ok(audit_outcome(outcome, audit_settings, ingest_settings))
}

/// With `GAPCERT_TIMING` set, prints how long a phase took on stderr (for profiling
/// the benchmark: read, math and writing separately).
pub fn timing(phase: &str, started: std::time::Instant) {
    if std::env::var_os("GAPCERT_TIMING").is_some() {
        let (cpu, faults) = process_usage();
        eprintln!(
            "timing: {phase} {:.3} s (process so far: CPU {cpu:.3} s, {faults} page faults)",
            started.elapsed().as_secs_f64(),
        );
    }
}

/// User plus system CPU seconds and minor page faults of the whole process so far
/// (for `GAPCERT_TIMING`).
fn process_usage() -> (f64, i64) {
    // SAFETY: getrusage only writes the struct it is given.
    let usage = unsafe {
        let mut usage: libc::rusage = std::mem::zeroed();
        if libc::getrusage(libc::RUSAGE_SELF, &mut usage) != 0 {
            return (f64::NAN, -1);
        }
        usage
    };
    let seconds = |t: libc::timeval| t.tv_sec as f64 + t.tv_usec as f64 * 1e-6;
    (
        seconds(usage.ru_utime) + seconds(usage.ru_stime),
        usage.ru_minflt,
    )
}

/// Installs a panic hook that stays silent while a guarded reader runs (its panic is
/// caught and reported as an input problem) and otherwise prints the standard message.
pub fn install_panic_hook() {
    let default_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        if ingest::formats::GUARDED_READERS.load(std::sync::atomic::Ordering::SeqCst) == 0 {
            default_hook(info);
        }
    }));
}
