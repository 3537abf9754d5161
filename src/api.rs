//! The library's entry points: read logs (and claims files) and audit them into one
//! document, through the one audit engine ([`crate::engine`]) with a sink that keeps
//! every run.
//!
//! These are the calls a program embedding gapcert makes (the command line, the
//! Python package, the tests): each returns a value or an [`Error`], and none of them
//! prints, exits the process or installs a handler. A caller that wants to stream
//! the runs, or keep only some, prepares the audit with [`crate::engine`] itself.

use crate::audit::AuditSettings;
use crate::engine::{self, StreamLimits};
use crate::error::Error;
use crate::ingest::claims::ClaimsSource;
use crate::ingest::{self, IngestSettings, LogSource};
use crate::report::AuditDocument;

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
    engine::prepare_discovered(
        discovery,
        ingest_settings,
        StreamLimits::default(),
        progress,
    )?
    .collect(audit_settings)
}

/// Reads and audits the given sources (files or in-memory logs), with the claims
/// files of `ingest_settings`.
pub fn audit_sources(
    sources: &[LogSource<'_>],
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
) -> Result<AuditDocument, Error> {
    let claims: Vec<ClaimsSource<'static>> = ingest_settings
        .claims_files
        .iter()
        .map(|path| ClaimsSource::Path(path.clone()))
        .collect();
    audit_sources_with_claims(sources, &claims, audit_settings, ingest_settings)
}

/// Reads and audits the given log sources with the given claims sources (the demo's
/// are compiled in).
pub fn audit_sources_with_claims(
    sources: &[LogSource<'_>],
    claims: &[ClaimsSource<'_>],
    audit_settings: &AuditSettings,
    ingest_settings: &IngestSettings,
) -> Result<AuditDocument, Error> {
    engine::prepare(
        sources,
        claims,
        ingest_settings,
        StreamLimits::default(),
        &|_, _| {},
    )?
    .collect(audit_settings)
}
