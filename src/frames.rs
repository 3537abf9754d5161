//! Audits for front ends that hold logs and results as frames (the Python package):
//! logs from files and from memory in one audit, the runs as Arrow batch by batch,
//! and the row orders the reports show.
//!
//! The runs go out as they are audited, one Arrow IPC file per batch, formatted on
//! the engine's counting stage ([`PreparedAudit::stream`]): no document of every run
//! is built, and the frames carry codes and numbers; the sentences (`explanation`,
//! the finding messages) only when asked (SPEC §7). The columns are those of the flat
//! formats ([`flat::runs_frame`]); `tests/it/frames.rs` checks that the batches
//! together equal the frame of the collected document.

use std::io;

use polars::prelude::*;

use crate::audit::claims::ClaimResult;
use crate::audit::{AuditSettings, RunResult};
use crate::engine::{self, PreparedAudit, StreamLimits};
use crate::error::Error;
use crate::ingest::claims::ClaimsSource;
use crate::ingest::{self, Discovery, FileProgress, IngestSettings, LogSource};
use crate::report::{flat, AuditDocument};

/// The first pass over the logs `discovery` found (first, in its order) and the
/// in-memory logs `memory` (after them), with the claims `claims`: one audit, as
/// [`engine::prepare_discovered`] makes of files alone (files of other types found in
/// folders are listed as skipped, and the summary counts them).
pub fn prepare_mixed<'a>(
    discovery: Option<&Discovery>,
    memory: &[LogSource<'a>],
    claims: &[ClaimsSource<'_>],
    settings: &IngestSettings,
    limits: StreamLimits,
    progress: FileProgress<'_>,
) -> Result<PreparedAudit<'a>, Error> {
    let mut sources: Vec<LogSource<'a>> = discovery
        .iter()
        .flat_map(|d| d.logs.iter())
        .map(|log| LogSource::Path(log.path.clone(), log.format))
        .collect();
    sources.extend(memory.iter().cloned());
    if sources.is_empty() {
        return Err(Error::Usage("no logs given".into()));
    }
    let mut prepared = engine::prepare(&sources, claims, settings, limits, progress)?;
    if let Some(discovery) = discovery {
        prepared
            .skipped_files
            .extend(ingest::not_log_files(discovery));
    }
    Ok(prepared)
}

/// The name of the finding sentences' column of an explained frame.
pub const FINDING_MESSAGES: &str = "finding_messages";

/// The runs as a frame with the flat columns: without `explanation` unless `explain`,
/// which also adds [`FINDING_MESSAGES`] (the findings' sentences, in the order of the
/// codes in `findings`) after `findings`.
pub fn runs_frame(runs: &[RunResult], explain: bool) -> PolarsResult<DataFrame> {
    let mut frame = flat::runs_frame(runs, explain)?;
    if !explain {
        return Ok(frame);
    }
    let sentences: usize = runs.iter().map(|run| run.findings.len()).sum();
    let mut messages =
        ListStringChunkedBuilder::new(FINDING_MESSAGES.into(), runs.len(), sentences);
    for run in runs {
        messages.append_values_iter(run.findings.iter().map(|f| f.message.as_str()));
    }
    let messages = messages.finish().into_series();
    let at = frame
        .get_column_index("findings")
        .map_or(frame.width(), |at| at + 1);
    frame.insert_column(at, messages.into())?;
    Ok(frame)
}

/// A frame as an Arrow IPC file (uncompressed).
pub fn ipc_file(frame: &mut DataFrame) -> io::Result<Vec<u8>> {
    let mut bytes = Vec::new();
    IpcWriter::new(&mut bytes)
        .finish(frame)
        .map_err(io::Error::other)?;
    Ok(bytes)
}

/// Audits every run of `prepared`, handing on each batch as an Arrow IPC file of
/// [`runs_frame`] (findings as codes unless `explain`): the parts, in input order
/// (at least one, so that a frame of no runs still has its columns), and the
/// document without runs (summary, claims, splits).
pub fn audit_to_arrow(
    prepared: PreparedAudit<'_>,
    audit_settings: &AuditSettings,
    explain: bool,
) -> Result<(AuditDocument, Vec<Vec<u8>>), Error> {
    let mut parts: Vec<Vec<u8>> = Vec::new();
    let transform = |batch: Vec<RunResult>| -> io::Result<Vec<u8>> {
        let mut frame = runs_frame(&batch, explain).map_err(io::Error::other)?;
        // The batch's results are freed here, on the counting stage, not on the
        // caller's thread.
        drop(batch);
        ipc_file(&mut frame)
    };
    let document = prepared.stream(audit_settings, explain, &transform, &mut |part| {
        parts.push(part?);
        Ok(())
    })?;
    if parts.is_empty() {
        let mut frame = runs_frame(&[], explain).map_err(|e| Error::Io(e.to_string()))?;
        parts.push(ipc_file(&mut frame).map_err(|e| Error::Io(e.to_string()))?);
    }
    Ok((document, parts))
}

/// Row numbers of `claims`, worst first, in the order of every report
/// ([`crate::report::claims::claims_worst_first`]).
pub fn claim_rows_worst_first(claims: &[ClaimResult]) -> Vec<usize> {
    let start = claims.as_ptr() as usize;
    let size = std::mem::size_of::<ClaimResult>().max(1);
    crate::report::claims::claims_worst_first(claims)
        .into_iter()
        .map(|claim| (claim as *const ClaimResult as usize - start) / size)
        .collect()
}
