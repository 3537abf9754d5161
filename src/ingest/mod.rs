//! Reading run logs: file discovery, formats, column mapping and validation (SPEC §3).
//!
//! The result is a list of validated [`RunInput`]s plus what was skipped. Problems are
//! collected across every file and row before anything fails, so a user sees all of
//! them at once.

pub mod columns;
pub mod discover;
pub mod formats;
pub mod problem;
pub mod rows;
pub mod settings;

use std::path::PathBuf;

use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

pub use discover::{discover, Discovery, LogFile, LogFormat};
pub use problem::{IngestError, Problem};
pub use rows::SkippedRow;
pub use settings::IngestSettings;

use crate::theory::growth::Family;

/// One validated run, ready for the audit.
#[derive(Clone, Debug, PartialEq)]
pub struct RunInput {
    pub run: String,
    /// `file:row`, 1-based data row.
    pub source: String,
    /// The family key as logged (lower case), known or not.
    pub family_key: Option<String>,
    /// The resolved family; `None` when absent or unknown.
    pub family: Option<Family>,
    pub train_n: Option<u64>,
    pub train_error_rate: Option<f64>,
    pub holdout_n: u64,
    pub holdout_error_rate: f64,
    pub holdout_misclassified: u64,
    /// The count was derived as round(rate × n) because only a rate was logged.
    pub misclassified_derived: bool,
    pub holdout_set: Option<String>,
    pub candidates: u64,
    pub claim_error_rate: Option<f64>,
    /// Normalised RFC 3339 (UTC).
    pub logged_at: Option<String>,
}

/// An input file as read: identity and hash, for the report and the certificate.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct InputFile {
    pub path: String,
    pub size: u64,
    pub sha256: String,
    /// Data rows read from the file (audited plus skipped).
    pub rows: usize,
}

/// A file that was not used, and why.
#[derive(Clone, Debug, PartialEq, Eq, Serialize, Deserialize)]
pub struct SkippedFile {
    pub path: String,
    pub reason: String,
}

/// Everything ingest produced.
#[derive(Clone, Debug, Default)]
pub struct IngestOutcome {
    pub runs: Vec<RunInput>,
    pub inputs: Vec<InputFile>,
    pub skipped_rows: Vec<SkippedRow>,
    /// Logs that `--lenient` could not use at all, and non-log files found in folders.
    pub skipped_files: Vec<SkippedFile>,
}

/// Where a log's bytes come from.
#[derive(Clone, Debug)]
pub enum LogSource<'a> {
    /// A local file.
    Path(PathBuf, LogFormat),
    /// Bytes already in memory (the demo's compiled-in logs, or a fuzzer's input),
    /// with the label they are reported under.
    Memory(&'a str, &'a [u8], LogFormat),
}

/// Told (files read so far, files in all) as each file is read, for a progress bar.
pub type FileProgress<'a> = &'a (dyn Fn(usize, usize) + Sync);

/// Reads the logs found at `paths` (files or folders).
pub fn read_paths(
    paths: &[PathBuf],
    settings: &IngestSettings,
) -> Result<IngestOutcome, IngestError> {
    read_paths_reporting(paths, settings, &|_, _| {})
}

/// [`read_paths`], reporting each file read to `progress`.
pub fn read_paths_reporting(
    paths: &[PathBuf],
    settings: &IngestSettings,
    progress: FileProgress<'_>,
) -> Result<IngestOutcome, IngestError> {
    let discovery = discover(paths)?;
    let sources: Vec<LogSource> = discovery
        .logs
        .iter()
        .map(|log| LogSource::Path(log.path.clone(), log.format))
        .collect();
    let mut outcome = read_sources_reporting(&sources, settings, progress)?;
    outcome
        .skipped_files
        .extend(discovery.skipped_files.iter().map(|path| SkippedFile {
            path: path.display().to_string(),
            reason: "not a log file type".to_string(),
        }));
    Ok(outcome)
}

/// Reads the given sources; files are read in parallel and their results kept in order.
pub fn read_sources(
    sources: &[LogSource],
    settings: &IngestSettings,
) -> Result<IngestOutcome, IngestError> {
    read_sources_reporting(sources, settings, &|_, _| {})
}

/// [`read_sources`], reporting each file read to `progress`.
pub fn read_sources_reporting(
    sources: &[LogSource],
    settings: &IngestSettings,
    progress: FileProgress<'_>,
) -> Result<IngestOutcome, IngestError> {
    columns::check_column_map(&settings.column_map).map_err(IngestError::Usage)?;
    let done = std::sync::atomic::AtomicUsize::new(0);
    let per_file: Vec<FileResult> = sources
        .par_iter()
        .map(|source| {
            let result = read_one(source, settings);
            let finished = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
            progress(finished, sources.len());
            result
        })
        .collect();

    let mut outcome = IngestOutcome::default();
    let mut problems = Vec::new();
    for file in per_file {
        if let Some(input) = file.input {
            outcome.inputs.push(input);
        }
        if !file.file_problems.is_empty() {
            if settings.lenient {
                outcome.skipped_files.push(SkippedFile {
                    path: file.label.clone(),
                    reason: file
                        .file_problems
                        .iter()
                        .map(|p| p.message.clone())
                        .collect::<Vec<_>>()
                        .join("; "),
                });
            } else {
                problems.extend(file.file_problems);
            }
        }
        for (row, row_problems) in file.bad_rows {
            if settings.lenient {
                outcome.skipped_rows.push(SkippedRow {
                    source: format!("{}:{row}", file.label),
                    reasons: row_problems.iter().map(|p| p.message.clone()).collect(),
                });
            } else {
                problems.extend(row_problems);
            }
        }
        outcome.runs.extend(file.runs);
    }
    if !problems.is_empty() {
        return Err(IngestError::Invalid(problems));
    }
    if outcome.runs.is_empty() {
        return Err(IngestError::Invalid(vec![Problem {
            file: sources.first().map(source_label).unwrap_or_default(),
            row: None,
            column: None,
            message: "no usable runs were found in the given logs".to_string(),
        }]));
    }
    Ok(outcome)
}

struct FileResult {
    label: String,
    input: Option<InputFile>,
    runs: Vec<RunInput>,
    bad_rows: Vec<(usize, Vec<Problem>)>,
    file_problems: Vec<Problem>,
}

fn source_label(source: &LogSource<'_>) -> String {
    match source {
        LogSource::Path(path, _) => path.display().to_string(),
        LogSource::Memory(label, _, _) => label.to_string(),
    }
}

fn read_one(source: &LogSource<'_>, settings: &IngestSettings) -> FileResult {
    let label = source_label(source);
    let owned;
    let (bytes, format): (&[u8], LogFormat) = match source {
        LogSource::Path(path, format) => match std::fs::read(path) {
            Ok(read) => {
                owned = read;
                (&owned, *format)
            }
            Err(error) => {
                return FileResult {
                    file_problems: vec![Problem::file(
                        &label,
                        format!("cannot read ({})", discover::describe_io_error(&error)),
                    )],
                    label,
                    input: None,
                    runs: Vec::new(),
                    bad_rows: Vec::new(),
                }
            }
        },
        LogSource::Memory(_, bytes, format) => (bytes, *format),
    };
    // Hash while polars parses: both walk the whole file.
    let started = std::time::Instant::now();
    let (sha256, table) = rayon::join(
        || hex(&Sha256::digest(bytes)),
        || formats::read_table(&label, bytes, format),
    );
    crate::timing("  parse + hash", started);
    let started = std::time::Instant::now();
    let mut input = InputFile {
        path: label.clone(),
        size: bytes.len() as u64,
        sha256,
        rows: 0,
    };
    let (df, cell_problems) = match table {
        Ok(table) => table,
        Err(file_problems) => {
            return FileResult {
                label,
                input: Some(input),
                runs: Vec::new(),
                bad_rows: Vec::new(),
                file_problems,
            }
        }
    };
    input.rows = df.height();
    let mut file_problems = Vec::new();
    if df.height() == 0 {
        file_problems.push(Problem::file(&label, "the file has a header but no runs"));
    }
    let table = rows::table_runs(&label, &df, settings, cell_problems);
    crate::timing("  validate", started);
    file_problems.extend(table.file_problems);
    FileResult {
        label,
        input: Some(input),
        runs: table.runs,
        bad_rows: table.bad_rows,
        file_problems,
    }
}

/// Lower-case hexadecimal of a digest.
pub fn hex(bytes: &[u8]) -> String {
    use std::fmt::Write;
    let mut text = String::with_capacity(bytes.len() * 2);
    for byte in bytes {
        let _ = write!(text, "{byte:02x}");
    }
    text
}
