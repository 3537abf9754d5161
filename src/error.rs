//! The library's one error type, and the input problems it carries.
//!
//! Every way a request can fail falls in one of three kinds: the request itself is
//! wrong ([`Error::Usage`]), the logs or claims files have problems
//! ([`Error::Input`], every problem found, each located by file, row and column), or
//! reading or writing a file failed ([`Error::Io`]). The library never exits the
//! process; the binary maps every kind to exit code 2 (`src/main.rs`), the Python
//! package to `ValueError`, `gapcert.InputError` and `OSError`.

use std::fmt;

/// One problem in the input. `row` is the 1-based data row (the header does not count;
/// for JSON, the 1-based record); `None` for problems that concern the whole file.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Problem {
    pub file: String,
    pub row: Option<usize>,
    pub column: Option<String>,
    pub message: String,
    /// The problem is in a claims file (`--lenient` skips bad log rows, never claims).
    pub in_claims_file: bool,
}

impl Problem {
    /// The same problem, marked as one of a claims file.
    pub fn of_claims_file(self) -> Problem {
        Problem {
            in_claims_file: true,
            ..self
        }
    }

    pub fn file(file: &str, message: impl Into<String>) -> Problem {
        Problem {
            file: file.to_string(),
            row: None,
            column: None,
            message: message.into(),
            in_claims_file: false,
        }
    }

    pub fn cell(file: &str, row: usize, column: &str, message: impl Into<String>) -> Problem {
        Problem {
            file: file.to_string(),
            row: Some(row),
            column: Some(column.to_string()),
            message: message.into(),
            in_claims_file: false,
        }
    }

    pub fn row(file: &str, row: usize, message: impl Into<String>) -> Problem {
        Problem {
            file: file.to_string(),
            row: Some(row),
            column: None,
            message: message.into(),
            in_claims_file: false,
        }
    }
}

impl fmt::Display for Problem {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self.row {
            Some(row) => write!(f, "{}:{}: {}", self.file, row, self.message),
            None => write!(f, "{}: {}", self.file, self.message),
        }
    }
}

/// Why a request could not be completed.
#[derive(Debug)]
pub enum Error {
    /// The request itself is wrong: an option out of range, options that conflict, a
    /// path that cannot be read as a log.
    Usage(String),
    /// The logs (or claims files) have problems; every one found is listed.
    Input(Vec<Problem>),
    /// Reading or writing a file failed; the message names the file.
    Io(String),
    /// The caller asked the audit to stop ([`Cancel`]).
    Interrupted,
}

/// A flag a caller raises to stop an audit early (the Python package raises it on
/// Ctrl-C): reading stops at the next file or batch and the audit returns
/// [`Error::Interrupted`]. Every clone shares the flag. Settings that hold one compare
/// equal whatever its state.
#[derive(Clone, Debug, Default)]
pub struct Cancel(std::sync::Arc<std::sync::atomic::AtomicBool>);

impl Cancel {
    /// Asks every holder of the flag to stop.
    pub fn cancel(&self) {
        self.0.store(true, std::sync::atomic::Ordering::Relaxed);
    }

    /// Whether stopping was asked.
    pub fn is_cancelled(&self) -> bool {
        self.0.load(std::sync::atomic::Ordering::Relaxed)
    }
}

impl PartialEq for Cancel {
    fn eq(&self, _: &Cancel) -> bool {
        true
    }
}

impl Error {
    /// The kind as one word, for programs that embed the library.
    pub fn kind(&self) -> &'static str {
        match self {
            Error::Usage(_) => "usage",
            Error::Input(_) => "input",
            Error::Io(_) => "io",
            Error::Interrupted => "interrupted",
        }
    }
}

impl fmt::Display for Error {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            Error::Usage(message) | Error::Io(message) => write!(f, "{message}"),
            Error::Interrupted => write!(f, "interrupted; nothing was written"),
            Error::Input(problems) => {
                for problem in problems {
                    writeln!(f, "{problem}")?;
                }
                let in_claims = problems.iter().filter(|p| p.in_claims_file).count();
                if in_claims == 0 {
                    write!(
                        f,
                        "{} problem(s) found; fix them or pass --lenient to skip bad rows",
                        problems.len()
                    )
                } else if in_claims == problems.len() {
                    write!(
                        f,
                        "{} problem(s) found in the claims files; correct the rows listed or delete them from the claims file (--lenient skips bad log rows, never a claim)",
                        problems.len()
                    )
                } else {
                    write!(
                        f,
                        "{} problem(s) found; fix them (--lenient skips the bad log rows, never a claim: correct or delete the {in_claims} claims-file problem(s) listed)",
                        problems.len()
                    )
                }
            }
        }
    }
}

impl std::error::Error for Error {}

/// A short, human description of an I/O error without the OS error number.
pub fn describe_io_error(error: &std::io::Error) -> String {
    match error.kind() {
        std::io::ErrorKind::NotFound => "no such file or folder".to_string(),
        std::io::ErrorKind::PermissionDenied => "permission denied".to_string(),
        _ => error.to_string(),
    }
}
