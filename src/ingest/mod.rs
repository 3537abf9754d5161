//! Reading run logs: file discovery, formats, column mapping and validation (SPEC §3).
//!
//! The result is a list of validated [`RunInput`]s plus what was skipped. Problems are
//! collected across every file and row before anything fails, so a user sees all of
//! them at once.

pub mod claims;
pub mod columns;
pub mod discover;
pub mod formats;
mod preflight;
pub mod rows;
pub mod settings;

use std::borrow::Cow;
use std::path::PathBuf;

use rayon::prelude::*;
use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

pub use discover::{discover, Discovery, FileIdentity, LogFile, LogFormat};
pub use rows::SkippedRow;
pub use settings::IngestSettings;

use crate::error::{Error, Problem};
use crate::run::RunInput;

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
    /// Data rows of the logs that `--lenient` skipped whole (read, not audited).
    pub rows_in_skipped_files: usize,
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
pub fn read_paths(paths: &[PathBuf], settings: &IngestSettings) -> Result<IngestOutcome, Error> {
    read_paths_reporting(paths, settings, &|_, _| {})
}

/// [`read_paths`], reporting each file read to `progress`.
pub fn read_paths_reporting(
    paths: &[PathBuf],
    settings: &IngestSettings,
    progress: FileProgress<'_>,
) -> Result<IngestOutcome, Error> {
    read_discovered(&discover(paths)?, settings, progress)
}

/// Reads the logs `discovery` found, reporting each file read to `progress`.
pub fn read_discovered(
    discovery: &Discovery,
    settings: &IngestSettings,
    progress: FileProgress<'_>,
) -> Result<IngestOutcome, Error> {
    let sources: Vec<LogSource> = discovery
        .logs
        .iter()
        .map(|log| LogSource::Path(log.path.clone(), log.format))
        .collect();
    let mut outcome = read_sources_reporting(&sources, settings, progress)?;
    outcome.skipped_files.extend(not_log_files(discovery));
    Ok(outcome)
}

/// The files in the given folders that are not logs, as skipped files.
pub fn not_log_files(discovery: &Discovery) -> Vec<SkippedFile> {
    discovery
        .skipped_files
        .iter()
        .map(|path| SkippedFile {
            path: path.display().to_string(),
            reason: "not a log file type".to_string(),
        })
        .collect()
}

/// Reads the given sources; files are read in parallel and their results kept in order.
pub fn read_sources(
    sources: &[LogSource],
    settings: &IngestSettings,
) -> Result<IngestOutcome, Error> {
    read_sources_reporting(sources, settings, &|_, _| {})
}

/// [`read_sources`], reporting each file read to `progress`.
pub fn read_sources_reporting(
    sources: &[LogSource],
    settings: &IngestSettings,
    progress: FileProgress<'_>,
) -> Result<IngestOutcome, Error> {
    columns::check_column_map(&settings.column_map).map_err(Error::Usage)?;
    let done = std::sync::atomic::AtomicUsize::new(0);
    // Each file's table is dropped as soon as its runs are read: a folder of 200,000
    // small logs must not hold 200,000 tables.
    let per_file: Vec<(LogSummary, Vec<RunInput>, FileReport)> = sources
        .par_iter()
        .map(|source| {
            if settings.cancel.is_cancelled() {
                return (LogSummary::default(), Vec::new(), FileReport::default());
            }
            let log = OpenedLog::open(source, &settings.column_map);
            let mut runs = Vec::new();
            let report = log.validate(settings, usize::MAX, &mut |batch| {
                runs.extend(batch);
                true
            });
            let finished = done.fetch_add(1, std::sync::atomic::Ordering::Relaxed) + 1;
            progress(finished, sources.len());
            (log.summary(), runs, report)
        })
        .collect();

    if settings.cancel.is_cancelled() {
        return Err(Error::Interrupted);
    }
    let mut outcome = IngestOutcome::default();
    let mut collected = Collected::default();
    for (log, runs, report) in per_file {
        if collected.add(&log, report, settings.lenient) {
            outcome.runs.extend(runs);
        }
    }
    collected.finish(sources, outcome.runs.len())?;
    outcome.inputs = collected.inputs;
    outcome.skipped_rows = collected.skipped_rows;
    outcome.skipped_files = collected.skipped_files;
    outcome.rows_in_skipped_files = collected.rows_in_skipped_files;
    Ok(outcome)
}

/// What validating one file found besides its runs.
#[derive(Debug, Default)]
pub struct FileReport {
    /// Problems per bad row (file row numbers), in row order.
    pub bad_rows: Vec<(usize, Vec<Problem>)>,
    /// Problems with the file as a whole; when any, the file yields no runs.
    pub file_problems: Vec<Problem>,
}

/// The inputs, skipped rows and files, and problems of several files, in file order.
#[derive(Debug, Default)]
pub struct Collected {
    pub inputs: Vec<InputFile>,
    pub skipped_rows: Vec<SkippedRow>,
    pub skipped_files: Vec<SkippedFile>,
    /// Data rows of the logs skipped whole.
    pub rows_in_skipped_files: usize,
    pub problems: Vec<Problem>,
}

impl Collected {
    /// Records one file's report: under `--lenient` bad rows are skipped rows and an
    /// unusable file is a skipped file (its rows counted as skipped with it, not one by
    /// one); otherwise both are problems. Returns whether the file's runs are to be
    /// audited.
    pub fn add(&mut self, log: &LogSummary, report: FileReport, lenient: bool) -> bool {
        if let Some(input) = &log.input {
            self.inputs.push(input.clone());
        }
        let usable = report.file_problems.is_empty();
        if !usable {
            if lenient {
                self.skipped_files.push(SkippedFile {
                    path: log.label.clone(),
                    reason: report
                        .file_problems
                        .iter()
                        .map(|p| p.message.clone())
                        .collect::<Vec<_>>()
                        .join("; "),
                });
                self.rows_in_skipped_files += log.rows;
            } else {
                self.problems.extend(report.file_problems);
            }
        }
        for (row, row_problems) in report.bad_rows {
            if lenient && !usable {
                continue;
            } else if lenient {
                self.skipped_rows.push(SkippedRow {
                    source: format!("{}:{row}", log.label),
                    reasons: row_problems.iter().map(|p| p.message.clone()).collect(),
                });
            } else {
                self.problems.extend(row_problems);
            }
        }
        usable
    }

    /// Fails with every problem found, or when no run at all could be used.
    pub fn finish(&mut self, sources: &[LogSource<'_>], runs: usize) -> Result<(), Error> {
        if !self.problems.is_empty() {
            return Err(Error::Input(std::mem::take(&mut self.problems)));
        }
        if runs == 0 {
            return Err(Error::Input(vec![Problem {
                file: sources.first().map(source_label).unwrap_or_default(),
                row: None,
                column: None,
                message: "no usable runs were found in the given logs".to_string(),
            }]));
        }
        Ok(())
    }
}

/// Files at least this large are hashed and parsed on two threads at once.
const PARALLEL_FILE_BYTES: usize = 1 << 20;

/// What the report of an audit keeps of a log after reading it: its name, identity
/// and hash, and how many rows it held (not its table).
#[derive(Clone, Debug, Default)]
pub struct LogSummary {
    pub label: String,
    pub input: Option<InputFile>,
    pub rows: usize,
}

/// One log file opened for an audit: its identity and hash, and its table, which is
/// validated batch by batch.
pub struct OpenedLog<'a> {
    pub label: String,
    /// None when the file could not be read at all.
    pub input: Option<InputFile>,
    table: Result<formats::LogTable<'a>, Vec<Problem>>,
}

impl<'a> OpenedLog<'a> {
    /// Reads and hashes the file, and parses it (Parquet: only its footer).
    /// `column_map` (the `--map` renames) tells which columns hold numbers.
    pub fn open(source: &LogSource<'a>, column_map: &[(String, String)]) -> OpenedLog<'a> {
        let label = source_label(source);
        let bytes: Cow<'a, [u8]> = match source {
            LogSource::Path(path, _) => match std::fs::read(path) {
                Ok(read) => Cow::Owned(read),
                Err(error) => {
                    let problem = Problem::file(
                        &label,
                        format!("cannot read ({})", crate::error::describe_io_error(&error)),
                    );
                    return OpenedLog {
                        label,
                        input: None,
                        table: Err(vec![problem]),
                    };
                }
            },
            LogSource::Memory(_, bytes, _) => Cow::Borrowed(*bytes),
        };
        let format = match source {
            LogSource::Path(_, format) | LogSource::Memory(_, _, format) => *format,
        };
        // Hash while polars parses: both walk the whole file.
        let started = std::time::Instant::now();
        let size = bytes.len() as u64;
        let (sha256, table) = if matches!(format, LogFormat::Parquet) {
            // Only the footer is parsed now; the bytes stay for the row groups.
            let sha256 = hex(&Sha256::digest(&bytes));
            (sha256, formats::open_parquet(&label, bytes))
        } else {
            let parse = || {
                formats::read_table(&label, &bytes, format, column_map)
                    .map(|(df, problems)| formats::LogTable::Frame(df, problems))
            };
            // Small files (a sweep's metrics.json) are many: handing each to two
            // threads costs more than it saves.
            if bytes.len() < PARALLEL_FILE_BYTES {
                (hex(&Sha256::digest(&bytes)), parse())
            } else {
                rayon::join(|| hex(&Sha256::digest(&bytes)), parse)
            }
        };
        crate::timing::phase("  parse + hash", started);
        let rows = table.as_ref().map(|t| t.height()).unwrap_or(0);
        OpenedLog {
            input: Some(InputFile {
                path: label.clone(),
                size,
                sha256,
                rows,
            }),
            label,
            table,
        }
    }

    /// Data rows in the file (0 when it could not be parsed).
    pub fn rows(&self) -> usize {
        self.table.as_ref().map(|t| t.height()).unwrap_or(0)
    }

    /// What a report keeps of the log once it is read.
    pub fn summary(&self) -> LogSummary {
        LogSummary {
            label: self.label.clone(),
            input: self.input.clone(),
            rows: self.rows(),
        }
    }

    /// Validates the file in batches of about `batch_rows` rows, in order, handing
    /// each batch's runs to `each`, which returns whether to go on. Stops at the first
    /// problem with the file as a whole (such a file yields no usable runs).
    pub fn validate(
        &self,
        settings: &IngestSettings,
        batch_rows: usize,
        each: &mut dyn FnMut(Vec<RunInput>) -> bool,
    ) -> FileReport {
        let mut report = FileReport::default();
        let table = match &self.table {
            Ok(table) => table,
            Err(problems) => {
                report.file_problems = problems.clone();
                return report;
            }
        };
        if table.height() == 0 {
            report.file_problems.push(Problem::file(
                &self.label,
                "the file has a header but no runs",
            ));
        }
        let started = std::time::Instant::now();
        let mut scale = rows::ScaleEvidence::default();
        // A Parquet range is a whole row group, which may hold far more than
        // `batch_rows` rows: it is decoded once and validated in slices.
        let batch_rows = batch_rows.max(1);
        'ranges: for (offset, length) in table.batches(batch_rows) {
            let (df, cell_problems) = match table.rows(&self.label, offset, length) {
                Ok(read) => read,
                Err(problems) => {
                    report.file_problems.extend(problems);
                    break;
                }
            };
            let mut start = 0;
            loop {
                let length = batch_rows.min(df.height() - start);
                let slice = if start == 0 && length == df.height() {
                    df.clone()
                } else {
                    df.slice(start as i64, length)
                };
                let problems = formats::problems_within(&cell_problems, start, length);
                let batch =
                    rows::table_runs(&self.label, &slice, offset + start, settings, problems);
                report.bad_rows.extend(batch.bad_rows);
                report.file_problems.extend(batch.file_problems);
                scale.add(batch.scale);
                if !report.file_problems.is_empty() {
                    break 'ranges;
                }
                if !batch.runs.is_empty() && !each(batch.runs) {
                    break 'ranges;
                }
                if settings.cancel.is_cancelled() {
                    break 'ranges;
                }
                start += length;
                if start >= df.height() {
                    break;
                }
            }
        }
        crate::timing::phase("  validate", started);
        if settings.percent
            && scale.values > 0
            && !scale.above_one
            && report.file_problems.is_empty()
        {
            report.file_problems.push(Problem::file(
                &self.label,
                "every rate, accuracy and claim in this file lies within [0, 1], so it holds fractions, but --percent reads them as percentages (0.94 would mean 0.94 %); drop --percent for this file",
            ));
        }
        report
    }
}

fn source_label(source: &LogSource<'_>) -> String {
    match source {
        LogSource::Path(path, _) => path.display().to_string(),
        LogSource::Memory(label, _, _) => label.to_string(),
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
