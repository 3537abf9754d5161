//! Problems found while reading logs, each located by file, row and column.

use std::fmt;

/// One problem in the input. `row` is the 1-based data row (the header does not count;
/// for JSON, the 1-based record); `None` for problems that concern the whole file.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct Problem {
    pub file: String,
    pub row: Option<usize>,
    pub column: Option<String>,
    pub message: String,
}

impl Problem {
    pub fn file(file: &str, message: impl Into<String>) -> Problem {
        Problem {
            file: file.to_string(),
            row: None,
            column: None,
            message: message.into(),
        }
    }

    pub fn cell(file: &str, row: usize, column: &str, message: impl Into<String>) -> Problem {
        Problem {
            file: file.to_string(),
            row: Some(row),
            column: Some(column.to_string()),
            message: message.into(),
        }
    }

    pub fn row(file: &str, row: usize, message: impl Into<String>) -> Problem {
        Problem {
            file: file.to_string(),
            row: Some(row),
            column: None,
            message: message.into(),
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

/// Why ingest stopped without producing runs.
#[derive(Debug)]
pub enum IngestError {
    /// The command line itself is wrong (unknown path type, bad `--map`).
    Usage(String),
    /// The logs have problems; every one found is listed.
    Invalid(Vec<Problem>),
}

impl fmt::Display for IngestError {
    fn fmt(&self, f: &mut fmt::Formatter<'_>) -> fmt::Result {
        match self {
            IngestError::Usage(message) => write!(f, "{message}"),
            IngestError::Invalid(problems) => {
                for problem in problems {
                    writeln!(f, "{problem}")?;
                }
                write!(
                    f,
                    "{} problem(s) found; fix them or pass --lenient to skip bad rows",
                    problems.len()
                )
            }
        }
    }
}

impl std::error::Error for IngestError {}
