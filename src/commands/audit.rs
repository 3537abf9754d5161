//! `gapcert audit` and `gapcert demo`: read, audit, report, gate.

use std::io::{self, IsTerminal, Write};
use std::path::{Path, PathBuf};

use gapcert::audit::{GateResult, RunResult};
use gapcert::ingest::{Discovery, FileIdentity, SkippedFile, SkippedRow};
use gapcert::pipeline::StreamLimits;
use gapcert::report::text::printable;
use gapcert::report::{self, AuditDocument, OutputFormat, Presentation};
use gapcert::Error;

use super::outcome::Outcome;
use super::settings::{resolve_audit, AuditRequest};
use super::terminal::{
    check_outputs, remove_stale_temporaries, write_file, write_stdout, Progress, Terminal,
};
use crate::cli::AuditFlags;

/// Where an audit's logs come from.
pub enum SourceSpec {
    Paths(Vec<PathBuf>),
    /// The demo's built-in logs: the gate decides the exit code only when `--gate` is
    /// given explicitly.
    Demo,
}

/// Reads and audits the logs, writes every output asked for, and applies the gate.
pub fn run(spec: &SourceSpec, flags: &AuditFlags, terminal: Terminal) -> Result<Outcome, Error> {
    let request = resolve_audit(flags)?;
    // The logs are found (not read) first, so that every destination can be checked
    // against them before anything is read or written.
    let discovery = match spec {
        SourceSpec::Paths(paths) => Some(gapcert::ingest::discover(paths)?),
        SourceSpec::Demo => None,
    };
    let mut inputs: Vec<(&Path, Option<FileIdentity>)> = discovery
        .iter()
        .flat_map(|d| d.logs.iter().map(|log| (log.path.as_path(), log.identity)))
        .collect();
    let map_file_identity = flags.map_file.as_deref().and_then(|path| {
        std::fs::metadata(path)
            .ok()
            .map(|m| (path, FileIdentity::of(&m)))
    });
    inputs.extend(map_file_identity);
    for path in &flags.claims {
        if let Ok(metadata) = std::fs::metadata(path) {
            inputs.push((path.as_path(), FileIdentity::of(&metadata)));
        }
    }
    let outputs: Vec<(&str, &Path)> = [
        ("--output", flags.output.as_deref()),
        ("--certificate", flags.certificate.as_deref()),
        ("--html", flags.html.as_deref()),
        ("--claims-output", flags.claims_output.as_deref()),
    ]
    .into_iter()
    .filter_map(|(flag, path)| path.map(|path| (flag, path)))
    .collect();
    check_outputs(&outputs, &inputs)?;
    let output_paths: Vec<&Path> = outputs.iter().map(|(_, path)| *path).collect();
    remove_stale_temporaries(&output_paths, terminal);
    let spec = match (&discovery, spec) {
        (Some(discovery), _) => Source::Found(discovery),
        (None, _) => Source::Demo,
    };
    if request.format.is_binary() && flags.output.is_none() && io::stdout().is_terminal() {
        return Err(Error::Usage(
            "--format parquet writes binary data: add --output FILE (or redirect standard output)"
                .into(),
        ));
    }
    let claims_format = flags
        .claims_output
        .as_deref()
        .map(claims_output_format)
        .transpose()?;
    // Claims need the runs they name: an audit with claims (the demo has a release
    // note) is held in memory.
    let has_claims = !flags.claims.is_empty() || matches!(spec, Source::Demo);
    let only_this_output = flags.html.is_none() && flags.certificate.is_none() && !has_claims;
    let gate = if request.format.streams() && only_this_output {
        run_streaming(&spec, flags, &request, terminal)?
    } else if request.format.shows_a_selection() && only_this_output {
        run_keeping_worst(&spec, flags, &request, terminal)?
    } else {
        run_in_memory(&spec, flags, &request, claims_format, terminal)?
    };
    Ok(outcome(gate, &spec, &request))
}

/// The format of `--claims-output`, from its extension.
fn claims_output_format(path: &Path) -> Result<OutputFormat, Error> {
    let extension = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase);
    match extension.as_deref() {
        Some("ndjson" | "jsonl") => Ok(OutputFormat::Ndjson),
        Some("csv") => Ok(OutputFormat::Csv),
        Some("parquet") => Ok(OutputFormat::Parquet),
        _ => Err(Error::Usage(format!(
            "--claims-output {}: name the file .ndjson, .csv or .parquet (the format follows the extension)",
            path.display()
        ))),
    }
}

/// The logs of an audit, found.
enum Source<'a> {
    Found(&'a Discovery),
    Demo,
}

/// The exit code's outcome: the gate decides, except for a demo without `--gate`.
fn outcome(gate: GateResult, spec: &Source, request: &AuditRequest) -> Outcome {
    match (spec, gate) {
        (Source::Demo, _) if !request.gate_given => Outcome::Pass,
        (_, GateResult::Pass) => Outcome::Pass,
        (_, GateResult::Fail) => Outcome::Fail,
    }
}

/// An audit held in memory as one document (every format but streamed JSON lines
/// and CSV).
fn run_in_memory(
    spec: &Source,
    flags: &AuditFlags,
    request: &AuditRequest,
    claims_format: Option<OutputFormat>,
    terminal: Terminal,
) -> Result<GateResult, Error> {
    let progress = Progress::start(terminal, "reading logs");
    let result = match spec {
        Source::Found(discovery) => gapcert::audit_discovered(
            discovery,
            &request.audit,
            &request.ingest,
            &|done, total| progress.file_read(done, total),
        ),
        Source::Demo => gapcert::api::audit_sources_with_claims(
            &gapcert::demo::sources(),
            &gapcert::demo::claims_sources(),
            &request.audit,
            &request.ingest,
        ),
    };
    progress.finish();
    let doc = result?;
    list_skipped(terminal, &doc.skipped_files, &doc.skipped_rows, &doc.notes);

    if let Some(path) = &flags.certificate {
        let paths: Vec<String> = match spec {
            Source::Found(discovery) => discovery
                .given
                .iter()
                .map(|p| p.display().to_string())
                .collect(),
            Source::Demo => Vec::new(),
        };
        gapcert::certificate::write_certificate(path, &doc, &paths)?;
    }
    if let Some(path) = &flags.html {
        write_file(path, |out| report::html::write_html(&doc, out))?;
    }
    if let (Some(path), Some(format)) = (&flags.claims_output, claims_format) {
        write_file(path, |out| {
            report::claims::write_claims(&doc.claims, format, out)
        })?;
    }
    let started = std::time::Instant::now();
    emit_report(
        &doc,
        request.format,
        flags.output.as_deref(),
        &request.presentation,
        terminal,
    )?;
    gapcert::timing::phase("write", started);
    Ok(doc.summary.gate)
}

fn emit_report(
    doc: &AuditDocument,
    format: OutputFormat,
    output: Option<&Path>,
    presentation: &Presentation,
    terminal: Terminal,
) -> Result<(), Error> {
    match output {
        Some(path) => write_file(path, |out| {
            let plain = Presentation {
                color: false,
                width: None,
                ..presentation.clone()
            };
            report::write_report(doc, format, out, &plain)
        }),
        None if terminal.quiet => Ok(()),
        None => write_stdout(|out| report::write_report(doc, format, out, presentation)),
    }
}

/// With `-v`, names every skipped file and row on stderr, and what reading noticed.
fn list_skipped(terminal: Terminal, files: &[SkippedFile], rows: &[SkippedRow], notes: &[String]) {
    if !terminal.verbose || terminal.quiet {
        return;
    }
    for note in notes {
        eprintln!("note: {}", printable(note));
    }
    for skipped in files {
        eprintln!(
            "skipped {}: {}",
            printable(&skipped.path),
            printable(&skipped.reason)
        );
    }
    for skipped in rows {
        eprintln!(
            "skipped {}: {}",
            printable(&skipped.source),
            printable(&skipped.reasons.join("; "))
        );
    }
}

/// An audit whose only output is a table or Markdown: streamed like JSON lines, but
/// only the runs the report shows are kept (`--only`, `--top`, at most 1,000 by
/// default), so a long audit is fast and small in memory.
fn run_keeping_worst(
    spec: &Source,
    flags: &AuditFlags,
    request: &AuditRequest,
    terminal: Terminal,
) -> Result<GateResult, Error> {
    let progress = Progress::start(terminal, "reading logs");
    let prepared = prepare_checked(spec, request, terminal, &progress)?;
    let keep = request
        .presentation
        .top
        .unwrap_or(gapcert::report::text::DEFAULT_SHOWN);
    let doc = prepared
        .audit_keeping_worst(
            &request.audit,
            &request.ingest,
            keep,
            &request.presentation.only,
        )
        .map_err(|error| Error::Io(error.to_string()));
    progress.finish();
    let doc = doc?;
    emit_report(
        &doc,
        request.format,
        flags.output.as_deref(),
        &request.presentation,
        terminal,
    )?;
    Ok(doc.summary.gate)
}

/// The first pass of a streamed audit over the logs of `spec`, the check of the
/// settings against the runs, and under `-v` what was skipped; on an error the
/// progress display is closed.
fn prepare_checked(
    spec: &Source,
    request: &AuditRequest,
    terminal: Terminal,
    progress: &Progress,
) -> Result<gapcert::pipeline::PreparedAudit<'static>, Error> {
    let report_file = |done, total| progress.file_read(done, total);
    let limits = StreamLimits::default();
    let prepared = match spec {
        Source::Found(discovery) => {
            gapcert::pipeline::prepare_discovered(discovery, &request.ingest, limits, &report_file)
        }
        Source::Demo => gapcert::pipeline::prepare(
            &gapcert::demo::sources(),
            &request.ingest,
            limits,
            &report_file,
        ),
    }
    .and_then(|prepared| prepared.check(&request.audit).map(|_| prepared));
    let prepared = match prepared {
        Ok(prepared) => prepared,
        Err(error) => {
            progress.finish();
            return Err(error);
        }
    };
    list_skipped(
        terminal,
        &prepared.skipped_files,
        &prepared.skipped_rows,
        &prepared.notes,
    );
    Ok(prepared)
}

/// An audit whose only output is JSON lines or CSV: streamed batch by batch
/// ([`gapcert::pipeline`]), so memory stays bounded and the output is the same as the
/// in-memory audit's.
fn run_streaming(
    spec: &Source,
    flags: &AuditFlags,
    request: &AuditRequest,
    terminal: Terminal,
) -> Result<GateResult, Error> {
    let format = request.format;
    let progress = Progress::start(terminal, "reading logs");
    let prepared = prepare_checked(spec, request, terminal, &progress)?;
    progress.auditing(prepared.runs());
    let started = std::time::Instant::now();
    let mut summary = None;
    let stream = |out: &mut dyn Write| -> io::Result<()> {
        if format == OutputFormat::Csv {
            let kept: Vec<&str> = request.ingest.keep.iter().map(String::as_str).collect();
            report::flat::write_csv_header(&kept, out)?;
        }
        // Lines are formatted on a stage of their own, so this thread only copies
        // bytes out while the next batches are audited and formatted.
        let format_batch = |runs: Vec<RunResult>| {
            let lines = match format {
                OutputFormat::Csv => report::flat::format_csv_rows(&runs),
                _ => report::flat::format_ndjson(&runs),
            };
            (runs.len(), lines)
        };
        // A reader that stops early (`| head`) ends the output, not the audit: the
        // gate still needs every run.
        let mut closed = false;
        let mut sink = |(runs, buffers): (usize, Vec<io::Result<Vec<u8>>>)| -> io::Result<()> {
            progress.audited(runs);
            if closed {
                return Ok(());
            }
            let written = buffers
                .into_iter()
                .try_for_each(|buffer| out.write_all(&buffer?));
            match written {
                Err(error) if error.kind() == io::ErrorKind::BrokenPipe => {
                    closed = true;
                    Ok(())
                }
                other => other,
            }
        };
        summary = Some(prepared.audit_through(&request.audit, false, &format_batch, &mut sink)?);
        Ok(())
    };
    let written = match &flags.output {
        Some(path) => write_file(path, stream),
        None if terminal.quiet => {
            stream(&mut io::sink()).map_err(|error| Error::Io(error.to_string()))
        }
        None => write_stdout(stream),
    };
    progress.finish();
    written?;
    gapcert::timing::phase("audit + write", started);
    // Without a summary the audit did not finish: that cannot pass.
    Ok(summary.map_or(GateResult::Fail, |s| s.gate))
}
