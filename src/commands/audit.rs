//! `gapcert audit` and `gapcert demo`: read, audit, report, gate.

use std::io::{self, IsTerminal, Write};
use std::path::{Path, PathBuf};

use gapcert::audit::{GateResult, RunResult};
use gapcert::engine::{PreparedAudit, StreamLimits};
use gapcert::ingest::{Discovery, FileIdentity, SkippedFile, SkippedRow};
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
    let reports: Vec<(&Path, ReportFile)> = flags
        .reports
        .iter()
        .map(|path| report_file(path).map(|kind| (path.as_path(), kind)))
        .collect::<Result<_, _>>()?;
    let outputs: Vec<(&str, &Path)> = [
        ("--output", flags.output.as_deref()),
        ("--certificate", flags.certificate.as_deref()),
        ("--html", flags.html.as_deref()),
        ("--claims-output", flags.claims_output.as_deref()),
    ]
    .into_iter()
    .filter_map(|(flag, path)| path.map(|path| (flag, path)))
    .chain(reports.iter().map(|(path, _)| ("--report", *path)))
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
    let progress = Progress::start(terminal, "reading logs");
    let prepared = prepare_checked(&spec, &request, terminal, &progress)?;
    // One audit, one sink: the runs are kept only when an output needs them all.
    let format = request.format;
    let only_this_output =
        flags.html.is_none() && flags.certificate.is_none() && reports.is_empty();
    let audited = if format.streams() && only_this_output {
        progress.auditing(prepared.runs());
        let started = std::time::Instant::now();
        let streamed = stream_runs(prepared, flags, &request, terminal, &progress);
        gapcert::timing::phase("audit + write", started);
        streamed
    } else if format.shows_a_selection() && only_this_output {
        let keep = request
            .presentation
            .top
            .unwrap_or(gapcert::report::text::DEFAULT_SHOWN);
        prepared
            .keep_worst(&request.audit, keep, &request.presentation.only)
            .map(|doc| (doc, false))
    } else {
        prepared.collect(&request.audit).map(|doc| (doc, false))
    };
    progress.finish();
    let (doc, written) = audited?;
    let outputs = Outputs {
        claims_format,
        reports: &reports,
        report_written: written,
    };
    write_outputs(&doc, &spec, flags, &request, &outputs, terminal)?;
    Ok(outcome(doc.summary.gate, &spec, &request))
}

/// What a `--report` file holds: a report format, or the HTML page.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
enum ReportFile {
    Format(OutputFormat),
    Html,
}

/// The content of a `--report` file, from its extension.
fn report_file(path: &Path) -> Result<ReportFile, Error> {
    if let Some(format) = super::settings::format_of_extension(path) {
        return Ok(ReportFile::Format(format));
    }
    let extension = path
        .extension()
        .and_then(|e| e.to_str())
        .map(str::to_ascii_lowercase);
    match extension.as_deref() {
        Some("html" | "htm") => Ok(ReportFile::Html),
        _ => Err(Error::Usage(format!(
            "--report {}: name the file for the report it should hold: .json, .ndjson, .jsonl, .csv, .parquet, .md, .xml (JUnit) or .html (the page)",
            path.display()
        ))),
    }
}

/// The files an audit writes besides its main report, and whether that was
/// streamed already.
struct Outputs<'a> {
    claims_format: Option<OutputFormat>,
    reports: &'a [(&'a Path, ReportFile)],
    report_written: bool,
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

/// Writes every output asked for from the audit's document: the certificate, the
/// HTML page, the claims, each `--report`, and the report itself unless it was
/// streamed already.
fn write_outputs(
    doc: &AuditDocument,
    spec: &Source,
    flags: &AuditFlags,
    request: &AuditRequest,
    outputs: &Outputs<'_>,
    terminal: Terminal,
) -> Result<(), Error> {
    if let Some(path) = &flags.certificate {
        let paths: Vec<String> = match spec {
            Source::Found(discovery) => discovery
                .given
                .iter()
                .map(|p| p.display().to_string())
                .collect(),
            Source::Demo => Vec::new(),
        };
        gapcert::certificate::write_certificate(path, doc, &paths)?;
    }
    if let Some(path) = &flags.html {
        write_file(path, |out| report::html::write_html(doc, out))?;
    }
    if let (Some(path), Some(format)) = (&flags.claims_output, outputs.claims_format) {
        write_file(path, |out| {
            report::claims::write_claims(&doc.claims, format, out)
        })?;
    }
    let plain = Presentation {
        color: false,
        width: None,
        ..request.presentation.clone()
    };
    for (path, kind) in outputs.reports {
        write_file(path, |out| match kind {
            ReportFile::Html => report::html::write_html(doc, out),
            ReportFile::Format(format) => report::write_report(doc, *format, out, &plain),
        })?;
    }
    if outputs.report_written {
        return Ok(());
    }
    let started = std::time::Instant::now();
    emit_report(
        doc,
        request.format,
        flags.output.as_deref(),
        &request.presentation,
        terminal,
    )?;
    gapcert::timing::phase("write", started);
    Ok(())
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

/// The first pass of a streamed audit over the logs of `spec`, the check of the
/// settings against the runs, and under `-v` what was skipped; on an error the
/// progress display is closed.
fn prepare_checked(
    spec: &Source,
    request: &AuditRequest,
    terminal: Terminal,
    progress: &Progress,
) -> Result<PreparedAudit<'static>, Error> {
    let report_file = |done, total| progress.file_read(done, total);
    let limits = StreamLimits::default();
    let prepared = match spec {
        Source::Found(discovery) => {
            gapcert::engine::prepare_discovered(discovery, &request.ingest, limits, &report_file)
        }
        Source::Demo => gapcert::engine::prepare(
            &gapcert::demo::sources(),
            &gapcert::demo::claims_sources(),
            &request.ingest,
            limits,
            &report_file,
        ),
    }
    .and_then(|mut prepared| prepared.check(&request.audit).map(|_| prepared));
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

/// An audit whose only output is JSON lines or CSV: the runs are written batch by
/// batch as they are audited ([`gapcert::engine`]), so memory stays bounded; the
/// document returned has the summary, claims and splits but no runs. Returns it with
/// `true` (the report is written).
fn stream_runs(
    prepared: PreparedAudit<'static>,
    flags: &AuditFlags,
    request: &AuditRequest,
    terminal: Terminal,
    progress: &Progress,
) -> Result<(AuditDocument, bool), Error> {
    let format = request.format;
    let explain = request.presentation.explain;
    let mut doc = None;
    let mut prepared = Some(prepared);
    let mut stream = |out: &mut dyn Write| -> io::Result<()> {
        if format == OutputFormat::Csv {
            let kept: Vec<&str> = request.ingest.keep.iter().map(String::as_str).collect();
            report::flat::write_csv_header(&kept, explain, out)?;
        }
        // Lines are formatted on a stage of their own, so this thread only copies
        // bytes out while the next batches are audited and formatted.
        let format_batch = |runs: Vec<RunResult>| {
            let lines = match format {
                OutputFormat::Csv => report::flat::format_csv_rows(&runs, explain),
                _ => report::flat::format_ndjson(&runs, explain),
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
        let Some(prepared) = prepared.take() else {
            return Ok(());
        };
        doc = Some(
            prepared
                .without_splits()
                .stream(&request.audit, explain, &format_batch, &mut sink)
                .map_err(io::Error::other)?,
        );
        Ok(())
    };
    match &flags.output {
        Some(path) => write_file(path, stream)?,
        None if terminal.quiet => {
            stream(&mut io::sink()).map_err(|error| Error::Io(error.to_string()))?
        }
        None => write_stdout(stream)?,
    };
    // Without a document the audit did not finish: that cannot pass.
    doc.map(|doc| (doc, true))
        .ok_or_else(|| Error::Io("the audit did not finish".into()))
}
