//! `gapcert.audit`: reading and auditing on a worker thread that Ctrl-C can stop, and
//! the report's views (SPEC §12).
//!
//! The audit result lives in a capsule (an `Arc<AuditHandle>`) that the pure-Python
//! `gapcert.Report` holds; the `report_*` functions take it back and render the
//! document with the library's own writers, so `Report.to_json()` is byte for byte
//! the JSON of `gapcert audit --format json` (but for `generated_at`).

use std::path::{Path, PathBuf};
use std::sync::mpsc::{self, RecvTimeoutError};
use std::sync::Arc;
use std::time::Duration;

use pyo3::prelude::*;
use pyo3::types::{PyBytes, PyCapsule, PyCapsuleMethods, PyDict, PyTuple};

use gapcert::audit::{Gate, HoldoutBound};
use gapcert::error::describe_io_error;
use gapcert::ingest::claims::ClaimsSource;
use gapcert::ingest::{Discovery, FileIdentity, LogFormat, LogSource};
use gapcert::options::AuditOptions;
use gapcert::report::{self, AuditDocument, OutputFormat, Presentation};
use gapcert::{Cancel, Error};

use crate::errors::{internal, IntoPy};

/// The capsule's name: only capsules made here are accepted back.
const CAPSULE: &std::ffi::CStr = c"gapcert._core.AuditResult";

/// An audit's result and what its outputs need.
struct AuditHandle {
    doc: AuditDocument,
    /// The log paths as given (the certificate records them).
    paths: Vec<String>,
    /// The working folder when the audit ran: the paths are relative to it.
    working_dir: Option<PathBuf>,
    /// The files read (logs, claims files, the map file): an output must not replace
    /// one of them.
    inputs: Vec<(PathBuf, FileIdentity)>,
    /// Why no certificate can be written (logs or claims given as frames: `gapcert
    /// verify` could not read them again).
    no_certificate: Option<String>,
}

/// One entry of the `logs` or `claims` list: ("path", path, None) or
/// ("frame", label, Arrow IPC bytes).
type Entry<'py> = (String, String, Option<Bound<'py, PyBytes>>);

/// `audit(logs, claims, options)`.
pub fn audit(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let (logs, claims, options): (Vec<Entry<'_>>, Vec<Entry<'_>>, Bound<'_, PyDict>) =
        args.extract()?;
    let options = audit_options(&options, &claims)?;
    let (audit_settings, mut ingest_settings) = options.resolve().py_err(py)?;
    let cancel = Cancel::default();
    ingest_settings.cancel = cancel.clone();

    let log_paths: Vec<PathBuf> = logs
        .iter()
        .filter(|(kind, _, _)| kind == "path")
        .map(|(_, path, _)| PathBuf::from(path))
        .collect();
    let log_frames: Vec<(&str, &[u8])> = logs
        .iter()
        .filter_map(|(_, label, bytes)| bytes.as_ref().map(|b| (label.as_str(), b.as_bytes())))
        .collect();
    let claims_sources: Vec<ClaimsSource<'_>> = claims
        .iter()
        .map(|(_, value, bytes)| match bytes {
            Some(bytes) => ClaimsSource::Memory(value, bytes.as_bytes(), LogFormat::Arrow),
            None => ClaimsSource::Path(PathBuf::from(value)),
        })
        .collect();
    let claims_in_memory = claims.iter().any(|(_, _, bytes)| bytes.is_some());
    if log_paths.is_empty() && log_frames.is_empty() {
        return Err(Error::Usage("no logs given".into())).py_err(py);
    }

    let working_dir = std::env::current_dir().ok();
    let work = || -> Result<(AuditDocument, Option<Discovery>), Error> {
        let discovery = if log_paths.is_empty() {
            None
        } else {
            Some(gapcert::ingest::discover(&log_paths)?)
        };
        let doc = match &discovery {
            // Files only: exactly what `gapcert audit` does.
            Some(discovery) if log_frames.is_empty() && !claims_in_memory => {
                gapcert::audit_discovered(discovery, &audit_settings, &ingest_settings, &|_, _| {})?
            }
            _ => {
                let mut sources: Vec<LogSource<'_>> = discovery
                    .iter()
                    .flat_map(|d| d.logs.iter())
                    .map(gapcert::ingest::LogFile::source)
                    .collect();
                sources.extend(
                    log_frames
                        .iter()
                        .map(|(label, bytes)| LogSource::Memory(label, bytes, LogFormat::Arrow)),
                );
                let mut doc = gapcert::api::audit_sources_with_claims(
                    &sources,
                    &claims_sources,
                    &audit_settings,
                    &ingest_settings,
                )?;
                // As `audit_discovered` does: files of other types found in folders
                // are listed as skipped.
                if let Some(discovery) = &discovery {
                    doc.skipped_files
                        .extend(gapcert::ingest::not_log_files(discovery));
                    doc.summary.files_skipped = doc.skipped_files.len();
                }
                doc
            }
        };
        Ok((doc, discovery))
    };
    let (doc, discovery) = run_cancellable(py, &cancel, work)?.py_err(py)?;

    let mut inputs: Vec<(PathBuf, FileIdentity)> = discovery
        .iter()
        .flat_map(|d| d.logs.iter())
        .filter_map(|log| log.identity.map(|id| (log.path.clone(), id)))
        .collect();
    let other_inputs = options.claims.iter().chain(options.map_file.iter());
    inputs.extend(other_inputs.filter_map(|path| {
        let metadata = std::fs::metadata(path).ok()?;
        FileIdentity::of(&metadata).map(|id| (path.clone(), id))
    }));
    let no_certificate = if !log_frames.is_empty() || claims_in_memory {
        Some(
            "a certificate records the log and claims files so that `gapcert verify` can read them again, and this audit read a DataFrame; write the frame to a file (for example df.write_parquet(\"runs.parquet\")) and audit that path"
                .to_string(),
        )
    } else {
        None
    };
    let handle = AuditHandle {
        doc,
        paths: discovery
            .map(|d| d.given.iter().map(|p| p.display().to_string()).collect())
            .unwrap_or_default(),
        working_dir,
        inputs,
        no_certificate,
    };
    let capsule = PyCapsule::new_with_value(py, Arc::new(handle), CAPSULE)?;
    Ok(capsule.into_any().unbind())
}

/// The options dict as the library's options (the claims files among `claims`).
/// Options the package does not offer keep the command line's defaults.
#[allow(clippy::needless_update)] // while it offers every one
fn audit_options(options: &Bound<'_, PyDict>, claims: &[Entry<'_>]) -> PyResult<AuditOptions> {
    /// The option `key`, extracted as `$type`.
    macro_rules! get {
        ($key:literal, $type:ty) => {
            match options.get_item($key)? {
                Some(value) => value.extract::<$type>().map_err(|error| {
                    let error: PyErr = error.into();
                    pyo3::exceptions::PyTypeError::new_err(format!("{}: {error}", $key))
                })?,
                None => return Err(internal(concat!("option ", $key, " missing"))),
            }
        };
    }
    let py = options.py();
    let holdout_bound = match get!("holdout_bound", String).as_str() {
        "binomial" => HoldoutBound::Binomial,
        "hoeffding" => HoldoutBound::Hoeffding,
        other => {
            return Err(Error::Usage(format!(
                "holdout_bound {other:?}: choose \"binomial\" or \"hoeffding\""
            )))
            .py_err(py)
        }
    };
    let gate = match get!("gate", String).as_str() {
        "unproven" => Gate::Unproven,
        "refuted" => Gate::Refuted,
        "never" => Gate::Never,
        other => {
            return Err(Error::Usage(format!(
                "gate {other:?}: choose \"unproven\", \"refuted\" or \"never\""
            )))
            .py_err(py)
        }
    };
    Ok(AuditOptions {
        confidence: get!("confidence", Option<f64>),
        holdout_bound,
        claim_accuracy: get!("claim_accuracy", Option<f64>),
        familywise: get!("familywise", bool),
        same_holdout: get!("same_holdout", bool),
        tolerance: get!("tolerance", f64),
        max_width: get!("max_width", f64),
        percent: get!("percent", bool),
        lenient: get!("lenient", bool),
        map: get!("map", Vec<String>),
        map_file: get!("map_file", Option<String>).map(PathBuf::from),
        gate,
        gate_allow: get!("gate_allow", Vec<String>),
        separator: get!("separator", Option<String>),
        decimal_comma: get!("decimal_comma", bool),
        keep: get!("keep", Vec<String>),
        claims: claims
            .iter()
            .filter(|(_, _, bytes)| bytes.is_none())
            .map(|(_, path, _)| PathBuf::from(path))
            .collect(),
        ..AuditOptions::default()
    })
}

/// Runs `work` on a worker thread while this thread waits with the GIL released,
/// taking it back every 100 ms to let Python run its signal handlers: on Ctrl-C
/// (or any exception a handler raises) the audit is cancelled, the worker joined
/// (the library stops at the next file or batch), and the exception raised.
fn run_cancellable<T, F>(py: Python<'_>, cancel: &Cancel, work: F) -> PyResult<T>
where
    T: Send,
    F: FnOnce() -> T + Send,
{
    std::thread::scope(|scope| {
        let (sender, receiver) = mpsc::channel();
        let worker = scope.spawn(move || {
            // The receiver is gone only when the caller has given up waiting.
            let _ = sender.send(work());
        });
        let mut receiver = receiver;
        loop {
            let (back, received) = py.detach(move || {
                let received = receiver.recv_timeout(Duration::from_millis(100));
                (receiver, received)
            });
            receiver = back;
            match received {
                Ok(value) => {
                    py.detach(|| worker.join())
                        .map_err(|panic| internal(panic_message(&panic)))?;
                    return Ok(value);
                }
                Err(RecvTimeoutError::Disconnected) => {
                    // The worker ended without a result: it panicked.
                    let message = match py.detach(|| worker.join()) {
                        Err(panic) => panic_message(&panic),
                        Ok(()) => "the audit ended without a result".to_string(),
                    };
                    return Err(internal(message));
                }
                Err(RecvTimeoutError::Timeout) => {}
            }
            if let Err(interrupt) = py.check_signals() {
                cancel.cancel();
                let _ = py.detach(|| worker.join());
                return Err(interrupt);
            }
        }
    })
}

fn panic_message(panic: &Box<dyn std::any::Any + Send>) -> String {
    if let Some(text) = panic.downcast_ref::<&str>() {
        format!("panic: {text}")
    } else if let Some(text) = panic.downcast_ref::<String>() {
        format!("panic: {text}")
    } else {
        "panic".to_string()
    }
}

/// The handle in the first argument's capsule.
fn handle(args: &Bound<'_, PyTuple>) -> PyResult<Arc<AuditHandle>> {
    let capsule = args.get_item(0)?;
    let capsule = capsule
        .cast::<PyCapsule>()
        .map_err(|_| pyo3::exceptions::PyTypeError::new_err("expected a gapcert audit result"))?;
    let pointer = capsule.pointer_checked(Some(CAPSULE))?;
    // SAFETY: a capsule named CAPSULE is made only by `audit` above, with
    // `PyCapsule::new_with_value(Arc<AuditHandle>)`, so the pointer is to a live
    // `Arc<AuditHandle>` for as long as the capsule (held by `args`) lives; the Arc
    // is cloned, never moved out.
    let shared = unsafe { pointer.cast::<Arc<AuditHandle>>().as_ref() };
    Ok(Arc::clone(shared))
}

fn text(py: Python<'_>, value: String) -> PyResult<Py<PyAny>> {
    Ok(value.into_pyobject(py)?.into_any().unbind())
}

/// `report_json(report)`: the document as `gapcert audit --format json` writes it.
pub fn report_json(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let handle = handle(args)?;
    let bytes = py
        .detach(|| {
            let mut out = Vec::new();
            report::write_report(
                &handle.doc,
                OutputFormat::Json,
                &mut out,
                &Presentation::default(),
            )
            .map(|_| out)
        })
        .map_err(|error| internal(error.to_string()))?;
    text(
        py,
        String::from_utf8(bytes).map_err(|error| internal(error.to_string()))?,
    )
}

/// `report_summary(report)`: the summary as JSON.
pub fn report_summary(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let handle = handle(args)?;
    let json =
        serde_json::to_string(&handle.doc.summary).map_err(|error| internal(error.to_string()))?;
    text(args.py(), json)
}

/// `report_summary_line(report)`: the summary sentence under the table.
pub fn report_summary_line(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let handle = handle(args)?;
    text(args.py(), report::text::summary_line(&handle.doc))
}

/// `report_frame(report, which)`: the runs, claims or splits as a DataFrame, in Arrow
/// IPC bytes.
pub fn report_frame(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let handle = handle(args)?;
    let which: String = args.get_item(1)?.extract()?;
    let bytes = py
        .detach(|| {
            let frame = match which.as_str() {
                "runs" => report::flat::runs_frame(&handle.doc.runs, true),
                "claims" => report::claims::claims_frame(&handle.doc.claims),
                "splits" => report::splits::splits_frame(&handle.doc.splits),
                other => return Err(format!("no frame {other:?}")),
            };
            let mut frame = frame.map_err(|error| error.to_string())?;
            report::splits::ipc_bytes(&mut frame).map_err(|error| error.to_string())
        })
        .map_err(internal)?;
    Ok(PyBytes::new(py, &bytes).into_any().unbind())
}

/// `report_worst_runs(report, n)`: row numbers (0-based, in `.runs`) of the `n`
/// worst runs, worst first, in the order of the table and the HTML page.
pub fn report_worst_runs(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let handle = handle(args)?;
    let n: usize = args.get_item(1)?.extract()?;
    let runs = &handle.doc.runs;
    let rows: Vec<usize> = py.detach(|| {
        let mut rows: Vec<usize> = (0..runs.len()).collect();
        rows.sort_by(|&a, &b| report::text::worst_first(&runs[a], &runs[b]));
        rows.truncate(n);
        rows
    });
    Ok(rows.into_pyobject(py)?.into_any().unbind())
}

/// `report_worst_claims(report)`: row numbers of the claims, worst first (refuted,
/// unproven, certified; in file order within a verdict).
pub fn report_worst_claims(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let handle = handle(args)?;
    let claims = &handle.doc.claims;
    let mut rows: Vec<usize> = (0..claims.len()).collect();
    rows.sort_by_key(|&i| claims[i].verdict.severity());
    Ok(rows.into_pyobject(py)?.into_any().unbind())
}

/// An output path that is one of the audit's inputs is refused (as the command line
/// refuses it): writing it would destroy the evidence.
fn check_output(handle: &AuditHandle, what: &str, path: &Path) -> Result<(), Error> {
    let Ok(metadata) = std::fs::metadata(path) else {
        return Ok(());
    };
    let Some(identity) = FileIdentity::of(&metadata) else {
        return Ok(());
    };
    match handle.inputs.iter().find(|(_, id)| *id == identity) {
        Some((input, _)) => Err(Error::Usage(format!(
            "{what} {}: that is the input {}, which the output would replace; write the output elsewhere (nothing was written)",
            path.display(),
            input.display()
        ))),
        None => Ok(()),
    }
}

fn cannot_write(path: &Path, error: &std::io::Error) -> Error {
    Error::Io(format!(
        "{}: cannot write ({}); nothing was written there",
        path.display(),
        describe_io_error(error)
    ))
}

/// `report_write_html(report, path)`: the self-contained HTML page, written
/// atomically.
pub fn report_write_html(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let handle = handle(args)?;
    let path = PathBuf::from(args.get_item(1)?.extract::<String>()?);
    py.detach(|| {
        check_output(&handle, "write_html", &path)?;
        report::write_atomically(&path, |out| report::html::write_html(&handle.doc, out))
            .map_err(|error| cannot_write(&path, &error))
    })
    .py_err(py)?;
    Ok(py.None())
}

/// `report_write_certificate(report, path)`: the certificate (the document, the paths
/// as given, the working folder of the audit and the seal), written atomically.
pub fn report_write_certificate(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let handle = handle(args)?;
    let path = PathBuf::from(args.get_item(1)?.extract::<String>()?);
    py.detach(|| {
        if let Some(reason) = &handle.no_certificate {
            return Err(Error::Usage(format!(
                "write_certificate {}: {reason}",
                path.display()
            )));
        }
        check_output(&handle, "write_certificate", &path)?;
        // The paths are relative to the folder the audit ran in, which a notebook may
        // have left (os.chdir) since: record that one, not today's.
        let working_dir = match &handle.working_dir {
            Some(folder) => folder.clone(),
            None => std::env::current_dir().unwrap_or_else(|_| PathBuf::from(".")),
        };
        let certificate =
            gapcert::certificate::certify(&handle.doc, &handle.paths, &working_dir, &path);
        report::write_atomically(&path, |out| {
            serde_json::to_writer_pretty(&mut *out, &certificate)?;
            out.write_all(b"\n")
        })
        .map_err(|error| cannot_write(&path, &error))
    })
    .py_err(py)?;
    Ok(py.None())
}
