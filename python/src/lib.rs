//! `gapcert._core`: the extension module behind the Python package `gapcert`
//! (SPEC §12).
//!
//! Every function here is private to the package: `gapcert/__init__.py` checks and
//! converts the caller's arguments (paths, polars / pandas / Arrow frames, keyword
//! options) and calls these with positional arguments of plain types. The audit
//! itself, the calculators and every report are the `gapcert` library's; this crate
//! only moves values across and maps errors.
//!
//! The module is built without pyo3's procedural macros (`#[pyfunction]`,
//! `#[pymodule]`, `#[pyclass]`): they would switch on `syn` features that the
//! library's own dependency tree does not use, and `syn` sits under polars (through
//! `bytemuck_derive`), so the extension would compile a second polars (20 minutes on
//! two cores) instead of linking the one `cargo build --release` made. Functions are
//! closures registered by hand ([`PyCFunction::new_closure`]), the audit result is a
//! capsule (`audit.rs`), and the module's init function is written out below.

use std::ffi::CStr;

use pyo3::prelude::*;
use pyo3::types::{PyCFunction, PyDict, PyModule, PyTuple};

mod audit;
mod calculators;
mod errors;

/// A function of the module: its name, its docstring and its body (which receives the
/// positional arguments; keywords are refused).
type Body = fn(&Bound<'_, PyTuple>) -> PyResult<Py<PyAny>>;

const FUNCTIONS: &[(&CStr, &CStr, Body)] = &[
    (
        c"audit",
        c"audit(logs, claims, options): reads and audits; see gapcert.audit",
        audit::audit,
    ),
    (
        c"report_json",
        c"report_json(report) -> str: `gapcert audit --format json`",
        audit::report_json,
    ),
    (
        c"report_summary",
        c"report_summary(report) -> str: the summary as JSON",
        audit::report_summary,
    ),
    (
        c"report_summary_line",
        c"report_summary_line(report) -> str: the table's summary",
        audit::report_summary_line,
    ),
    (
        c"report_frame",
        c"report_frame(report, which) -> bytes: a frame as Arrow IPC",
        audit::report_frame,
    ),
    (
        c"report_worst_runs",
        c"report_worst_runs(report, n) -> the n worst runs' rows",
        audit::report_worst_runs,
    ),
    (
        c"report_worst_claims",
        c"report_worst_claims(report) -> the claims' rows, worst first",
        audit::report_worst_claims,
    ),
    (
        c"report_write_html",
        c"report_write_html(report, path): the HTML page",
        audit::report_write_html,
    ),
    (
        c"report_write_certificate",
        c"report_write_certificate(report, path): a certificate",
        audit::report_write_certificate,
    ),
    (
        c"bound",
        c"bound(which, errors, n, confidence, candidates, alpha) -> float",
        calculators::bound,
    ),
    (
        c"plan_holdout",
        c"plan_holdout(rate, accuracy, candidates, confidence) -> sizes",
        calculators::plan_holdout,
    ),
    (
        c"plan_train",
        c"plan_train(family, params, tolerance, confidence) -> size",
        calculators::plan_train,
    ),
    (
        c"growth",
        c"growth(family, params, upto) -> rows",
        calculators::growth,
    ),
    (
        c"plan_reuse",
        c"plan_reuse(holdout_n, rate, accuracy, confidence) -> counts",
        calculators::plan_reuse,
    ),
    (
        c"families",
        c"families() -> str: the model families as JSON",
        calculators::families,
    ),
];

/// The module's definition (single-phase initialisation: CPython requires a module
/// made from a definition). Its state is none (`m_size` −1: one module per process).
static mut MODULE_DEF: pyo3::ffi::PyModuleDef = pyo3::ffi::PyModuleDef {
    m_base: pyo3::ffi::PyModuleDef_HEAD_INIT,
    m_name: c"gapcert._core".as_ptr(),
    m_doc: c"The extension module behind the Python package gapcert (private: use gapcert)."
        .as_ptr(),
    m_size: -1,
    m_methods: std::ptr::null_mut(),
    m_slots: std::ptr::null_mut(),
    m_traverse: None,
    m_clear: None,
    m_free: None,
};

/// Fills the module: every function, the version and the family parameters.
fn fill_module(module: &Bound<'_, PyModule>) -> PyResult<()> {
    let py = module.py();
    for &(name, doc, body) in FUNCTIONS {
        let function = PyCFunction::new_closure(
            py,
            Some(name),
            Some(doc),
            move |args: &Bound<'_, PyTuple>,
                  kwargs: Option<&Bound<'_, PyDict>>|
                  -> PyResult<Py<PyAny>> {
                if kwargs.is_some_and(|k| !k.is_empty()) {
                    return Err(pyo3::exceptions::PyTypeError::new_err(format!(
                        "gapcert._core.{}() takes positional arguments only",
                        name.to_string_lossy()
                    )));
                }
                body(args)
            },
        )?;
        module.add(name.to_str().expect("ASCII names"), function)?;
    }
    module.add("__version__", gapcert::report::ToolInfo::current().version)?;
    module.add(
        "FAMILY_PARAMETERS",
        PyTuple::new(py, gapcert::theory::growth::FAMILY_PARAMETERS)?,
    )?;
    module.add("CANDIDATES_CAP", gapcert::theory::reuse::CANDIDATES_CAP)?;
    module.add(
        "GROWTH_TABLE_LIMIT",
        gapcert::calculators::GROWTH_TABLE_LIMIT,
    )?;
    Ok(())
}

/// The module's init function, which CPython looks up by name when
/// `gapcert._core` is imported: it creates the module from [`MODULE_DEF`] and fills
/// it.
///
/// # Safety
///
/// Called by CPython's import machinery, once, with the GIL held.
#[no_mangle]
#[allow(non_snake_case)]
pub unsafe extern "C" fn PyInit__core() -> *mut pyo3::ffi::PyObject {
    // A panic must not unwind into C.
    let result = std::panic::catch_unwind(|| {
        // Panics that the library's guarded readers catch (and report as input
        // problems) stay silent; this hook is the extension's own.
        gapcert::install_panic_hook();
        Python::attach(|py| {
            // SAFETY: the definition is a static that lives as long as the process;
            // CPython keeps a pointer to it and is the only one to write to it (the
            // base part), under the GIL.
            let module = unsafe { pyo3::ffi::PyModule_Create(&raw mut MODULE_DEF) };
            // SAFETY: `module` is a new reference or null with an exception set.
            let made = unsafe { Bound::from_owned_ptr_or_err(py, module) };
            let filled = made.and_then(|module| {
                let module = module.cast_into::<PyModule>()?;
                fill_module(&module)?;
                Ok(module)
            });
            match filled {
                Ok(module) => module.into_ptr(),
                Err(error) => {
                    error.restore(py);
                    std::ptr::null_mut()
                }
            }
        })
    });
    result.unwrap_or(std::ptr::null_mut())
}
