//! The library's entry points: read logs and audit them into one document.
//!
//! These are the calls a program embedding gapcert makes (the command line, the
//! Python package, the tests): each returns a value or an [`Error`], and none of them
//! prints, exits the process or installs a handler.

use crate::audit::{audit_runs_checked, summarize, AuditSettings};
use crate::error::Error;
use crate::ingest::{self, IngestOutcome, IngestSettings, LogSource};
use crate::report::{self, AuditDocument, DocumentSettings, ToolInfo, CAUTIONS};

/// Audits already-ingested runs and assembles the document.
pub fn audit_outcome(
    outcome: IngestOutcome,
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
) -> Result<AuditDocument, Error> {
    let started = std::time::Instant::now();
    let runs = audit_runs_checked(outcome.runs, audit_settings)?;
    crate::timing::phase("audit", started);
    let mut summary = summarize(&runs, audit_settings);
    summary.rows_skipped = outcome.skipped_rows.len() + outcome.rows_in_skipped_files;
    summary.rows_read = runs.len() + summary.rows_skipped;
    summary.files_skipped = outcome.skipped_files.len();
    Ok(AuditDocument {
        tool: ToolInfo::current(),
        generated_at: report::document::now_rfc3339(),
        settings: DocumentSettings::new(audit_settings, ingest_settings),
        inputs: outcome.inputs,
        runs,
        summary,
        skipped_rows: outcome.skipped_rows,
        skipped_files: outcome.skipped_files,
        cautions: CAUTIONS.iter().map(|c| c.to_string()).collect(),
    })
}

/// Reads and audits the logs at `paths` (files or folders).
pub fn audit_paths(
    paths: &[std::path::PathBuf],
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
) -> Result<AuditDocument, Error> {
    audit_paths_reporting(paths, audit_settings, ingest_settings, &|_, _| {})
}

/// [`audit_paths`], reporting each file read to `progress` (files read, files in all).
pub fn audit_paths_reporting(
    paths: &[std::path::PathBuf],
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
    progress: ingest::FileProgress<'_>,
) -> Result<AuditDocument, Error> {
    audit_discovered(
        &ingest::discover(paths)?,
        audit_settings,
        ingest_settings,
        progress,
    )
}

/// Reads and audits the logs `discovery` found (so that a caller can look at the
/// files, say to keep outputs from replacing them, before any is read).
pub fn audit_discovered(
    discovery: &ingest::Discovery,
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
    progress: ingest::FileProgress<'_>,
) -> Result<AuditDocument, Error> {
    let started = std::time::Instant::now();
    let outcome = ingest::read_discovered(discovery, ingest_settings, progress)?;
    crate::timing::phase("ingest", started);
    audit_outcome(outcome, audit_settings, ingest_settings)
}

/// Reads and audits the given sources (files or in-memory logs).
pub fn audit_sources(
    sources: &[LogSource<'_>],
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
) -> Result<AuditDocument, Error> {
    let outcome = ingest::read_sources(sources, ingest_settings)?;
    audit_outcome(outcome, audit_settings, ingest_settings)
}
