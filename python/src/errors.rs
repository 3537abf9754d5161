//! The library's errors as Python exceptions (SPEC §12): `Error::Usage` →
//! `ValueError`, `Error::Input` → `gapcert.InputError` (a `ValueError` whose
//! `.problems` lists every problem with file, row and column), `Error::Io` →
//! `OSError`, `Error::Interrupted` → `KeyboardInterrupt`.
//!
//! The exception classes and the wording of option names (`--claim-accuracy` reads
//! `claim_accuracy` from Python) are the pure-Python package's
//! (`gapcert/_errors.py`); this builds the arguments and hands them over.

use pyo3::exceptions::{PyKeyboardInterrupt, PyOSError, PyRuntimeError, PyValueError};
use pyo3::prelude::*;
use pyo3::types::{PyDict, PyList};

use gapcert::{Error, Problem};

/// The Python exception for `error`.
pub fn to_pyerr(py: Python<'_>, error: Error) -> PyErr {
    let (kind, message, problems) = match &error {
        Error::Usage(message) => ("usage", message.clone(), None),
        Error::Io(message) => ("io", message.clone(), None),
        Error::Interrupted => ("interrupted", error.to_string(), None),
        // The closing line the command line prints under the problems (what to do).
        Error::Input(problems) => (
            "input",
            error
                .to_string()
                .lines()
                .last()
                .unwrap_or_default()
                .to_string(),
            Some(problems.as_slice()),
        ),
    };
    match python_exception(py, kind, &message, problems) {
        Ok(exception) => exception,
        // The package's helper is missing (the extension imported on its own): the
        // same classes, without the package's wording.
        Err(_) => match error {
            Error::Usage(message) => PyValueError::new_err(message),
            Error::Io(message) => PyOSError::new_err(message),
            Error::Interrupted => PyKeyboardInterrupt::new_err(error.to_string()),
            Error::Input(_) => PyValueError::new_err(error.to_string()),
        },
    }
}

/// `gapcert._errors._from_core(kind, message, problems)`: the exception to raise.
fn python_exception(
    py: Python<'_>,
    kind: &str,
    message: &str,
    problems: Option<&[Problem]>,
) -> PyResult<PyErr> {
    let problems = match problems {
        Some(problems) => Some(problem_list(py, problems)?),
        None => None,
    };
    let exception = py
        .import("gapcert._errors")?
        .getattr("_from_core")?
        .call1((kind, message, problems))?;
    Ok(PyErr::from_value(exception))
}

/// The problems as a list of dicts {"file", "row", "column", "message"} (row and
/// column None where a problem concerns the whole file or row).
fn problem_list<'py>(py: Python<'py>, problems: &[Problem]) -> PyResult<Bound<'py, PyList>> {
    let list = PyList::empty(py);
    for problem in problems {
        let entry = PyDict::new(py);
        entry.set_item("file", &problem.file)?;
        entry.set_item("row", problem.row)?;
        entry.set_item("column", problem.column.as_deref())?;
        entry.set_item("message", &problem.message)?;
        list.append(entry)?;
    }
    Ok(list)
}

/// A result's error as a Python exception.
pub trait IntoPy<T> {
    fn py_err(self, py: Python<'_>) -> PyResult<T>;
}

impl<T> IntoPy<T> for Result<T, Error> {
    fn py_err(self, py: Python<'_>) -> PyResult<T> {
        self.map_err(|error| to_pyerr(py, error))
    }
}

/// A failure that is a bug, not the caller's (a worker thread that panicked).
pub fn internal(message: impl Into<String>) -> PyErr {
    PyRuntimeError::new_err(format!(
        "gapcert: internal error ({}); please report it",
        message.into()
    ))
}
