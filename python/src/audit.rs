//! `gapcert.audit`: reading and auditing on a worker thread that Ctrl-C can stop, and
//! the report's views (SPEC §12).
//!
//! The audit streams its runs through the library ([`gapcert::frames`]): each batch
//! becomes an Arrow IPC file of codes and numbers as it is audited, and `.runs` reads
//! those; no document of every run, and no sentence, is built unless asked for
//! (`explain=True` for the frame's sentences). What the audit read is kept (the paths
//! found, the frames' Arrow bytes, the settings), so the outputs that need every run
//! with its sentences (`to_json`, `write_html`, `write_certificate`) audit it again
//! when first asked, and refuse if a file changed since; `to_json` stays byte for byte
//! the JSON of `gapcert audit --format json` (but for `generated_at`).
//!
//! The result lives in a capsule (an `Arc<AuditHandle>`) that the pure-Python
//! `gapcert.Report` holds; the `report_*` functions take it back.

use std::path::{Path, PathBuf};
use std::sync::mpsc::{self, RecvTimeoutError};
use std::sync::{Arc, Mutex};
use std::time::Duration;

use pyo3::prelude::*;
use pyo3::types::{PyBytes, PyCapsule, PyCapsuleMethods, PyDict, PyList, PyTuple};

use gapcert::audit::{AuditSettings, Gate, HoldoutBound};
use gapcert::engine::{PreparedAudit, StreamLimits};
use gapcert::ingest::claims::ClaimsSource;
use gapcert::ingest::{Discovery, IngestSettings, LogFormat, LogSource};
use gapcert::options::AuditOptions;
use gapcert::outputs::InputFiles;
use gapcert::report::{self, AuditDocument, OutputFormat, Presentation};
use gapcert::{frames, outputs, Cancel, Error};

use crate::errors::{internal, IntoPy};

/// The capsule's name: only capsules made here are accepted back.
const CAPSULE: &std::ffi::CStr = c"gapcert._core.AuditResult";

/// What an audit read, kept to audit it again: the logs found on disk, the frames'
/// Arrow bytes (the Python objects, not copies), the claims and the settings.
struct Replay {
    discovery: Option<Discovery>,
    frames: Vec<(String, Py<PyBytes>)>,
    /// (path or label, the frame's bytes for claims given as a frame).
    claims: Vec<(String, Option<Py<PyBytes>>)>,
    audit_settings: AuditSettings,
    ingest_settings: IngestSettings,
    explain: bool,
    /// The working folder when the audit ran: the paths are relative to it.
    working_dir: Option<PathBuf>,
}

/// The file at `path`, relative to `folder` unless absolute.
fn read(folder: &Path, path: &Path) -> Result<Vec<u8>, Error> {
    let at = folder.join(path);
    std::fs::read(&at).map_err(|error| {
        Error::Io(format!(
            "{}: cannot read ({})",
            at.display(),
            gapcert::error::describe_io_error(&error)
        ))
    })
}

impl Replay {
    /// Finds the logs (when not found yet), runs the first pass over them and
    /// `finish` on it, on a worker thread Ctrl-C can stop. Returns what discovery
    /// found too.
    fn run<T, F>(&self, py: Python<'_>, finish: F) -> PyResult<(Option<Discovery>, T)>
    where
        T: Send,
        F: FnOnce(PreparedAudit<'_>, &AuditSettings) -> Result<T, Error> + Send,
    {
        self.run_finding(py, &[], finish)
    }

    /// [`Replay::run`], finding the logs at `paths` first when there are any (the
    /// first audit), else using the discovery kept.
    fn run_finding<T, F>(
        &self,
        py: Python<'_>,
        paths: &[PathBuf],
        finish: F,
    ) -> PyResult<(Option<Discovery>, T)>
    where
        T: Send,
        F: FnOnce(PreparedAudit<'_>, &AuditSettings) -> Result<T, Error> + Send,
    {
        // Paths are relative to the folder the audit ran in, which the caller may have
        // left since (os.chdir): then the files are read from there and handed over
        // under their names as found, which the library reads exactly as the files.
        let moved = paths.is_empty()
            && self.working_dir.is_some()
            && std::env::current_dir().ok() != self.working_dir;
        let (discovery, files) = match (&self.discovery, &self.working_dir) {
            (Some(found), Some(folder)) if moved => {
                let files = found
                    .logs
                    .iter()
                    .map(|log| {
                        Ok((
                            log.path.display().to_string(),
                            read(folder, &log.path)?,
                            log.format,
                        ))
                    })
                    .collect::<Result<Vec<_>, Error>>()
                    .py_err(py)?;
                let others = Discovery {
                    logs: Vec::new(),
                    ..found.clone()
                };
                (Some(others), files)
            }
            (found, _) => (found.clone(), Vec::new()),
        };
        let claim_files: Vec<Option<(Vec<u8>, LogFormat)>> = self
            .claims
            .iter()
            .map(|(value, bytes)| match (bytes, &self.working_dir) {
                (None, Some(folder)) if moved => {
                    let path = Path::new(value);
                    let format = LogFormat::from_path(path).unwrap_or(LogFormat::Csv);
                    Ok(Some((read(folder, path)?, format)))
                }
                _ => Ok(None),
            })
            .collect::<Result<_, Error>>()
            .py_err(py)?;
        let mut logs: Vec<LogSource<'_>> = files
            .iter()
            .map(|(label, bytes, format)| LogSource::Memory(label, bytes, *format))
            .collect();
        logs.extend(
            self.frames.iter().map(|(label, bytes)| {
                LogSource::Memory(label, bytes.as_bytes(py), LogFormat::Arrow)
            }),
        );
        let claims: Vec<ClaimsSource<'_>> = self
            .claims
            .iter()
            .zip(&claim_files)
            .map(|((value, bytes), read)| match (bytes, read) {
                (Some(bytes), _) => {
                    ClaimsSource::Memory(value, bytes.as_bytes(py), LogFormat::Arrow)
                }
                (None, Some((bytes, format))) => ClaimsSource::Memory(value, bytes, *format),
                (None, None) => ClaimsSource::Path(PathBuf::from(value)),
            })
            .collect();
        let cancel = Cancel::default();
        let mut ingest_settings = self.ingest_settings.clone();
        ingest_settings.cancel = cancel.clone();
        let audit_settings = &self.audit_settings;
        let kept = discovery.as_ref();
        let work = move || -> Result<(Option<Discovery>, T), Error> {
            let found = if paths.is_empty() {
                kept.cloned()
            } else {
                Some(gapcert::ingest::discover(paths)?)
            };
            let prepared = frames::prepare_mixed(
                found.as_ref(),
                &logs,
                &claims,
                &ingest_settings,
                StreamLimits::default(),
                &|_, _| {},
            )?;
            let value = finish(prepared, audit_settings)?;
            Ok((found, value))
        };
        run_cancellable(py, &cancel, work)?.py_err(py)
    }
}

/// An audit's result and what its outputs need.
struct AuditHandle {
    /// The document without runs: summary, claims, splits, inputs.
    doc: AuditDocument,
    /// The runs as Arrow IPC files, one per batch, until `.runs` takes them.
    runs: Mutex<Option<Vec<Vec<u8>>>>,
    replay: Replay,
    /// The document with every run and its sentences, once an output needed it.
    full: Mutex<Option<Arc<AuditDocument>>>,
    /// The log paths as given (the certificate records them).
    paths: Vec<String>,
    /// The files read: an output must not replace one of them.
    inputs: InputFiles,
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
    let explain: bool = match options.get_item("explain")? {
        Some(value) => value.extract()?,
        None => false,
    };
    let options = audit_options(&options, &claims)?;
    let (audit_settings, ingest_settings) = options.resolve().py_err(py)?;

    let log_paths: Vec<PathBuf> = logs
        .iter()
        .filter(|(kind, _, _)| kind == "path")
        .map(|(_, path, _)| PathBuf::from(path))
        .collect();
    let frames: Vec<(String, Py<PyBytes>)> = logs
        .into_iter()
        .filter_map(|(_, label, bytes)| bytes.map(|b| (label, b.unbind())))
        .collect();
    let claims: Vec<(String, Option<Py<PyBytes>>)> = claims
        .into_iter()
        .map(|(_, value, bytes)| (value, bytes.map(Bound::unbind)))
        .collect();
    let in_memory = !frames.is_empty() || claims.iter().any(|(_, bytes)| bytes.is_some());
    if log_paths.is_empty() && frames.is_empty() {
        return Err(Error::Usage("no logs given".into())).py_err(py);
    }
    let mut replay = Replay {
        discovery: None,
        frames,
        claims,
        audit_settings,
        ingest_settings,
        explain,
        working_dir: std::env::current_dir().ok(),
    };
    let (discovery, (doc, parts)) = replay.run_finding(py, &log_paths, |prepared, settings| {
        frames::audit_to_arrow(prepared, settings, explain)
    })?;

    let other_inputs = options.claims.iter().chain(options.map_file.iter());
    let inputs = InputFiles::of(discovery.as_ref(), other_inputs.map(PathBuf::as_path));
    let no_certificate = in_memory.then(|| {
        "a certificate records the log and claims files so that `gapcert verify` can read them again, and this audit read a DataFrame; write the frame to a file (for example df.write_parquet(\"runs.parquet\")) and audit that path"
            .to_string()
    });
    let paths = discovery
        .as_ref()
        .map(|d| d.given.iter().map(|p| p.display().to_string()).collect())
        .unwrap_or_default();
    replay.discovery = discovery;
    let handle = AuditHandle {
        doc,
        runs: Mutex::new(Some(parts)),
        replay,
        full: Mutex::new(None),
        paths,
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

/// Locks a cell of the handle; a poisoned lock (a panic elsewhere) still holds a
/// valid value.
fn lock<T>(mutex: &Mutex<T>) -> std::sync::MutexGuard<'_, T> {
    mutex
        .lock()
        .unwrap_or_else(|poisoned| poisoned.into_inner())
}

/// The document of `finish` over the logs audited again, refused if an input changed
/// since the audit (its runs would not be the ones `.runs` shows).
fn audit_again<F>(py: Python<'_>, handle: &AuditHandle, finish: F) -> PyResult<AuditDocument>
where
    F: FnOnce(PreparedAudit<'_>, &AuditSettings) -> Result<AuditDocument, Error> + Send,
{
    let (_, doc) = handle.replay.run(py, finish)?;
    if doc.inputs != handle.doc.inputs || doc.claim_files != handle.doc.claim_files {
        return Err(Error::Usage(
            "the logs or claims files changed on disk after this audit, so its report cannot be written from them; audit them again".into(),
        ))
        .py_err(py);
    }
    Ok(doc)
}

/// The document with every run and its sentences: audited again the first time an
/// output needs it.
fn full_document(py: Python<'_>, handle: &AuditHandle) -> PyResult<Arc<AuditDocument>> {
    if let Some(doc) = lock(&handle.full).as_ref() {
        return Ok(Arc::clone(doc));
    }
    let doc = Arc::new(audit_again(py, handle, |prepared, settings| {
        prepared.collect(settings)
    })?);
    *lock(&handle.full) = Some(Arc::clone(&doc));
    Ok(doc)
}

fn text(py: Python<'_>, value: String) -> PyResult<Py<PyAny>> {
    Ok(value.into_pyobject(py)?.into_any().unbind())
}

/// `report_json(report)`: the document as `gapcert audit --format json` writes it.
pub fn report_json(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let handle = handle(args)?;
    let doc = full_document(py, &handle)?;
    let bytes = py
        .detach(|| {
            let mut out = Vec::new();
            report::write_report(&doc, OutputFormat::Json, &mut out, &Presentation::default())
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

/// `report_frame(report, which)`: the runs, claims or splits as a DataFrame: a list of
/// Arrow IPC files (the runs one per batch) for `polars.concat`.
pub fn report_frame(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let handle = handle(args)?;
    let which: String = args.get_item(1)?.extract()?;
    let parts: Vec<Vec<u8>> = match which.as_str() {
        "runs" => {
            let taken = lock(&handle.runs).take();
            match taken {
                Some(parts) => parts,
                // Taken by an earlier call (the package reads them once): audit again.
                None => {
                    let explain = handle.replay.explain;
                    handle
                        .replay
                        .run(py, |prepared, settings| {
                            frames::audit_to_arrow(prepared, settings, explain)
                        })?
                        .1
                         .1
                }
            }
        }
        "claims" | "splits" => {
            let bytes = py
                .detach(|| {
                    let frame = if which == "claims" {
                        report::claims::claims_frame(&handle.doc.claims)
                    } else {
                        report::splits::splits_frame(&handle.doc.splits)
                    };
                    let mut frame = frame.map_err(|error| error.to_string())?;
                    frames::ipc_file(&mut frame).map_err(|error| error.to_string())
                })
                .map_err(internal)?;
            vec![bytes]
        }
        other => return Err(internal(format!("no frame {other:?}"))),
    };
    let list = PyList::empty(py);
    for part in parts {
        // Each part is freed as soon as Python holds its copy.
        list.append(PyBytes::new(py, &part))?;
    }
    Ok(list.into_any().unbind())
}

/// `report_worst_runs(report, n)`: the `n` worst runs, worst first, in the order of
/// the table and the HTML page: a list of (source, explanation), the source naming
/// the run's row in `.runs`.
pub fn report_worst_runs(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let handle = handle(args)?;
    let n: usize = args.get_item(1)?.extract()?;
    let worst: Vec<(String, String)> = if n == 0 || handle.doc.summary.runs == 0 {
        Vec::new()
    } else {
        let doc = audit_again(py, &handle, |prepared, settings| {
            prepared.keep_worst(settings, n, &[])
        })?;
        doc.runs
            .into_iter()
            .map(|run| (run.source, run.explanation))
            .collect()
    };
    Ok(worst.into_pyobject(py)?.into_any().unbind())
}

/// `report_worst_claims(report)`: row numbers of the claims, worst first (refuted,
/// unproven, certified; in file order within a verdict), as every report lists them.
pub fn report_worst_claims(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let handle = handle(args)?;
    let rows = frames::claim_rows_worst_first(&handle.doc.claims);
    Ok(rows.into_pyobject(py)?.into_any().unbind())
}

/// The path argument of a `report_write_*` call.
fn path_argument(args: &Bound<'_, PyTuple>) -> PyResult<PathBuf> {
    Ok(PathBuf::from(args.get_item(1)?.extract::<String>()?))
}

/// `report_write_html(report, path)`: the self-contained HTML page, written
/// atomically; never over one of the audit's inputs.
pub fn report_write_html(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let handle = handle(args)?;
    let path = path_argument(args)?;
    handle.inputs.check_output("write_html", &path).py_err(py)?;
    let doc = full_document(py, &handle)?;
    py.detach(|| outputs::write_html(&path, &doc)).py_err(py)?;
    Ok(py.None())
}

/// `report_write_certificate(report, path)`: the certificate (the document, the paths
/// as given, the working folder of the audit and the seal), written atomically;
/// never over one of the audit's inputs.
pub fn report_write_certificate(args: &Bound<'_, PyTuple>) -> PyResult<Py<PyAny>> {
    let py = args.py();
    let handle = handle(args)?;
    let path = path_argument(args)?;
    if let Some(reason) = &handle.no_certificate {
        return Err(Error::Usage(format!(
            "write_certificate {}: {reason}",
            path.display()
        )))
        .py_err(py);
    }
    handle
        .inputs
        .check_output("write_certificate", &path)
        .py_err(py)?;
    let doc = full_document(py, &handle)?;
    let audited_in: Option<&Path> = handle.replay.working_dir.as_deref();
    py.detach(|| outputs::write_certificate(&path, &doc, &handle.paths, audited_in))
        .py_err(py)?;
    Ok(py.None())
}
