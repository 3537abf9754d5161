//! The library's entry points: read logs (and claims files) and audit them into one
//! document.
//!
//! These are the calls a program embedding gapcert makes (the command line, the
//! Python package, the tests): each returns a value or an [`Error`], and none of them
//! prints, exits the process or installs a handler.

use crate::audit::claims::evaluate_claims;
use crate::audit::splits::split_entries;
use crate::audit::{audit_runs_cancellable, summarize, AuditSettings};
use crate::error::Error;
use crate::ingest::claims::{read_claims, ClaimsRead, ClaimsSource};
use crate::ingest::{self, IngestOutcome, IngestSettings, LogSource};
use crate::report::{self, AuditDocument, DocumentSettings, ToolInfo, CAUTIONS};

/// Audits already-ingested runs (and the claims read from claims files) and
/// assembles the document.
pub fn audit_outcome(
    outcome: IngestOutcome,
    claims: ClaimsRead,
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
) -> Result<AuditDocument, Error> {
    let started = std::time::Instant::now();
    let mut inputs = outcome.runs;
    let copies_set_aside = outcome.copies_set_aside + crate::run::set_aside_copies(&mut inputs);
    let (runs, delta) = audit_runs_cancellable(
        inputs,
        claims.claims.len() as u64,
        audit_settings,
        &ingest_settings.cancel,
    )?;
    crate::timing::phase("audit", started);
    // Every problem at once: the claims files' own, then those of the joins.
    let mut problems = claims.problems;
    let claim_results = match evaluate_claims(&claims.claims, &runs, audit_settings, delta) {
        Ok(results) => results,
        Err(more) => {
            problems.extend(more);
            Vec::new()
        }
    };
    if !problems.is_empty() {
        return Err(Error::Input(problems));
    }
    let splits = split_entries(&runs, audit_settings, delta);
    let mut summary = summarize(&runs, audit_settings);
    for claim in &claim_results {
        summary.count_claim(claim.verdict);
    }
    summary.apply_gate(audit_settings.gate);
    summary.rows_skipped = outcome.skipped_rows.len() + outcome.rows_in_skipped_files;
    summary.copies_set_aside = copies_set_aside;
    summary.rows_read = runs.len() + summary.rows_skipped + copies_set_aside;
    summary.files_skipped = outcome.skipped_files.len();
    Ok(AuditDocument {
        tool: ToolInfo::current(),
        generated_at: report::document::now_rfc3339(),
        settings: DocumentSettings::new(audit_settings, ingest_settings),
        inputs: outcome.inputs,
        runs,
        claims: claim_results,
        claim_files: claims.inputs,
        splits,
        summary,
        skipped_rows: outcome.skipped_rows,
        skipped_files: outcome.skipped_files,
        cautions: CAUTIONS.iter().map(|c| c.to_string()).collect(),
        notes: outcome.notes,
    })
}

/// Reads and audits the logs at `paths` (files or folders), with the claims files of
/// `ingest_settings`.
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
/// files, say to keep outputs from replacing them, before any is read), with the
/// claims files of `ingest_settings`.
pub fn audit_discovered(
    discovery: &ingest::Discovery,
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
    progress: ingest::FileProgress<'_>,
) -> Result<AuditDocument, Error> {
    let started = std::time::Instant::now();
    let outcome = ingest::read_discovered(discovery, ingest_settings, progress);
    crate::timing::phase("ingest", started);
    let claims = read_claims(
        &claims_files(ingest_settings),
        ingest_settings.percent,
        crate::ingest::formats::Delimited::of(ingest_settings),
    );
    audit_outcome_of(outcome, claims, audit_settings, ingest_settings)
}

/// Reads and audits the given sources (files or in-memory logs), with the claims
/// files of `ingest_settings`.
pub fn audit_sources(
    sources: &[LogSource<'_>],
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
) -> Result<AuditDocument, Error> {
    audit_sources_with_claims(
        sources,
        &claims_files(ingest_settings),
        audit_settings,
        ingest_settings,
    )
}

/// Reads and audits the given log sources with the given claims sources (the demo's
/// are compiled in).
pub fn audit_sources_with_claims(
    sources: &[LogSource<'_>],
    claims: &[ClaimsSource<'_>],
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
) -> Result<AuditDocument, Error> {
    let outcome = ingest::read_sources(sources, ingest_settings);
    let claims = read_claims(
        claims,
        ingest_settings.percent,
        crate::ingest::formats::Delimited::of(ingest_settings),
    );
    audit_outcome_of(outcome, claims, audit_settings, ingest_settings)
}

/// The claims files of `settings`, as sources.
fn claims_files(settings: &IngestSettings) -> Vec<ClaimsSource<'static>> {
    settings
        .claims_files
        .iter()
        .map(|path| ClaimsSource::Path(path.clone()))
        .collect()
}

/// Audits when both the logs and the claims files could be read; otherwise fails
/// with the problems of both, so a user sees them all at once.
fn audit_outcome_of(
    outcome: Result<IngestOutcome, Error>,
    claims: Result<ClaimsRead, Error>,
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
) -> Result<AuditDocument, Error> {
    match (outcome, claims) {
        (Ok(outcome), Ok(claims)) => {
            audit_outcome(outcome, claims, audit_settings, ingest_settings)
        }
        (Err(Error::Input(mut problems)), Err(Error::Input(more))) => {
            problems.extend(more);
            Err(Error::Input(problems))
        }
        (Err(error), _) | (_, Err(error)) => Err(error),
    }
}
