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

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

pub use discover::{discover, Discovery, FileIdentity, LogFile, LogFormat, SkippedPath};
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
    /// A log skipped whole under `--lenient` that may carry claims (a claim column,
    /// `--claim-accuracy`, or columns that could not be read): it fails the gate, which
    /// never passes on claims it could not read.
    #[serde(default, skip_serializing_if = "std::ops::Not::not")]
    pub carries_claims: bool,
}

/// Where a log's bytes come from.
#[derive(Clone, Debug)]
pub enum LogSource<'a> {
    /// A local file named as a log: if it is one of gapcert's own reports, that is an
    /// input error (never a file silently left out of the audit).
    Path(PathBuf, LogFormat),
    /// A local file found walking a folder: one of gapcert's own reports there (an
    /// earlier audit's output) is left out and listed as skipped.
    InFolder(PathBuf, LogFormat),
    /// Bytes already in memory (the demo's compiled-in logs, or a fuzzer's input),
    /// with the label they are reported under.
    Memory(&'a str, &'a [u8], LogFormat),
    /// A path a folder walk found but could not use (a subfolder that cannot be
    /// listed), with the reason: reported as that path's problem.
    Unreadable(PathBuf, String),
}

impl LogFile {
    /// Where the log's bytes come from, for reading.
    pub fn source(&self) -> LogSource<'static> {
        if let Some(reason) = &self.unreadable {
            LogSource::Unreadable(self.path.clone(), reason.clone())
        } else if self.in_folder {
            LogSource::InFolder(self.path.clone(), self.format)
        } else {
            LogSource::Path(self.path.clone(), self.format)
        }
    }
}

/// Told (files read so far, files in all) as each file is read, for a progress bar.
pub type FileProgress<'a> = &'a (dyn Fn(usize, usize) + Sync);

/// The files in the given folders that are not logs, as skipped files.
pub fn not_log_files(discovery: &Discovery) -> Vec<SkippedFile> {
    discovery
        .skipped_files
        .iter()
        .map(|skipped| SkippedFile {
            path: skipped.path.display().to_string(),
            reason: skipped.reason.clone(),
            carries_claims: false,
        })
        .collect()
}

/// Maps `work` over the files `items` on plain threads (one per core), keeping their
/// order. Not on rayon's pool: polars parses a CSV on a pool of its own, and a rayon
/// worker waiting for another pool runs queued work of its own pool meanwhile (the
/// next file), so reads nested on one worker's stack until a folder of 1,500 CSVs
/// overflowed it. A plain thread that waits only waits.
pub fn map_files<S: Sync, T: Send>(items: &[S], work: impl Fn(&S) -> T + Sync) -> Vec<T> {
    let threads = std::thread::available_parallelism()
        .map_or(1, |n| n.get())
        .min(items.len());
    if threads <= 1 {
        return items.iter().map(work).collect();
    }
    let next = std::sync::atomic::AtomicUsize::new(0);
    let done: Vec<Vec<(usize, T)>> = std::thread::scope(|scope| {
        let workers: Vec<_> = (0..threads)
            .map(|_| {
                scope.spawn(|| {
                    let mut mine = Vec::new();
                    loop {
                        let at = next.fetch_add(1, std::sync::atomic::Ordering::Relaxed);
                        let Some(item) = items.get(at) else { break };
                        mine.push((at, work(item)));
                    }
                    mine
                })
            })
            .collect();
        workers
            .into_iter()
            .map(|worker| {
                worker
                    .join()
                    .unwrap_or_else(|panic| std::panic::resume_unwind(panic))
            })
            .collect()
    });
    let mut slots: Vec<Option<T>> = std::iter::repeat_with(|| None).take(items.len()).collect();
    for (at, result) in done.into_iter().flatten() {
        slots[at] = Some(result);
    }
    slots
        .into_iter()
        .map(|slot| slot.expect("every file is mapped once"))
        .collect()
}

/// What validating one file found besides its runs.
#[derive(Debug, Default)]
pub struct FileReport {
    /// Problems per bad row (file row numbers), in row order.
    pub bad_rows: Vec<(usize, Vec<Problem>)>,
    /// The rows of `bad_rows` that carry a claim.
    pub claim_rows: Vec<usize>,
    /// Problems with the file as a whole; when any, the file yields no runs.
    pub file_problems: Vec<Problem>,
    /// What reading it noticed that is worth saying under `-v` (a rename that did not
    /// apply to this file).
    pub notes: Vec<String>,
    /// Per `--keep` name: whether the file has the column (empty when not known).
    pub kept_found: Vec<bool>,
    /// With file problems: whether the file may carry claims (see
    /// [`SkippedFile::carries_claims`]).
    pub may_carry_claims: bool,
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
    /// `file: note` lines for `-v`.
    pub notes: Vec<String>,
    /// Runs set aside as copies (files identical to an earlier one).
    pub copies_set_aside: usize,
    /// Files identical to an earlier one: the earlier file's runs name them.
    pub file_copies: FileCopies,
    /// Per `--keep` name: whether any usable log has the column.
    pub kept_found: Vec<bool>,
    /// Index in `inputs` of the first file with each (SHA-256, size).
    by_content: std::collections::HashMap<(String, u64), usize>,
}

/// Files set aside as copies of earlier files, by the label of the file they copy:
/// the run at row r of the kept file names row r of each copy among its `copies`.
#[derive(Clone, Debug, Default)]
pub struct FileCopies {
    by_original: std::collections::HashMap<String, Vec<String>>,
}

impl FileCopies {
    /// Records that `copy` holds the same bytes as `original`.
    pub fn add(&mut self, original: &str, copy: &str) {
        self.by_original
            .entry(original.to_string())
            .or_default()
            .push(copy.to_string());
    }

    pub fn is_empty(&self) -> bool {
        self.by_original.is_empty()
    }

    /// The sources of the copies of row `row` of the file `original`.
    pub fn copies_at(&self, original: &str, row: u64) -> Vec<String> {
        self.by_original
            .get(original)
            .map(|copies| copies.iter().map(|copy| format!("{copy}:{row}")).collect())
            .unwrap_or_default()
    }

    /// Adds to each run of a copied file the same row of each copy.
    pub fn name_copies(&self, runs: &mut [RunInput]) {
        if self.by_original.is_empty() {
            return;
        }
        for run in runs {
            // Sources are `file:row`; file names may hold colons, rows do not.
            let Some((file, row)) = run.source.rsplit_once(':') else {
                continue;
            };
            if let Some(copies) = self.by_original.get(file) {
                run.copies
                    .extend(copies.iter().map(|copy| format!("{copy}:{row}")));
            }
        }
    }
}

impl Collected {
    /// Records one file's report: under `--lenient` bad rows are skipped rows and an
    /// unusable file is a skipped file (its rows counted as skipped with it, not one by
    /// one); otherwise both are problems. Returns whether the file's runs are to be
    /// audited.
    pub fn add(&mut self, log: &LogSummary, report: FileReport, lenient: bool) -> bool {
        if let Some(kind) = log.named_report {
            // Never skipped, even under --lenient: a log dropped from the gate must
            // be the user's decision, not a guess about its content.
            self.problems.push(Problem::file(
                &log.label,
                format!("this is {kind}, not a run log; name the logs it was made from instead"),
            ));
            return false;
        }
        if let Some(kind) = log.own_report {
            self.skipped_files.push(SkippedFile {
                path: log.label.clone(),
                reason: format!("{kind}, not a log"),
                carries_claims: false,
            });
            return false;
        }
        // A file whose bytes equal an earlier one's (`runs (copy).csv`) is read once:
        // its runs would otherwise count twice, and double every K.
        // A file that cannot be used is never a copy: six empty files are six
        // problems, not one and five copies.
        let usable = report.file_problems.is_empty();
        if let (Some(input), true) = (&log.input, usable) {
            let key = (input.sha256.clone(), input.size);
            let first = match self.by_content.get(&key) {
                Some(&at) => Some(&self.inputs[at]),
                None => {
                    self.by_content.insert(key, self.inputs.len());
                    None
                }
            };
            if let Some(first) = first {
                self.skipped_files.push(SkippedFile {
                    path: log.label.clone(),
                    reason: format!("identical to {}, whose runs are counted once", first.path),
                    carries_claims: false,
                });
                self.copies_set_aside += log.rows;
                self.file_copies.add(&first.path, &log.label);
                return false;
            }
        }
        if let Some(input) = &log.input {
            self.inputs.push(input.clone());
        }
        self.notes.extend(
            report
                .notes
                .iter()
                .map(|note| format!("{}: {note}", log.label)),
        );
        if usable {
            if self.kept_found.len() < report.kept_found.len() {
                self.kept_found.resize(report.kept_found.len(), false);
            }
            for (seen, found) in self.kept_found.iter_mut().zip(&report.kept_found) {
                *seen |= found;
            }
        }
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
                    carries_claims: report.may_carry_claims,
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
                    carries_claim: report.claim_rows.binary_search(&row).is_ok(),
                });
            } else {
                self.problems.extend(row_problems);
            }
        }
        usable
    }

    /// Fails with every problem found, or when no run at all could be used. A
    /// `--keep` column that no usable log has is a problem too (most likely a typo;
    /// a column some logs lack is empty in their runs).
    pub fn finish(
        &mut self,
        sources: &[LogSource<'_>],
        runs: usize,
        keep: &[String],
    ) -> Result<(), Error> {
        if runs > 0 && self.problems.is_empty() {
            let absent: Vec<&str> = keep
                .iter()
                .enumerate()
                .filter(|(at, _)| !self.kept_found.get(*at).copied().unwrap_or(false))
                .map(|(_, name)| name.as_str())
                .collect();
            if !absent.is_empty() {
                return Err(Error::Usage(format!(
                    "--keep {}: none of the logs read has {} (names are matched ignoring case)",
                    absent.join(","),
                    if absent.len() == 1 {
                        "a column of that name"
                    } else {
                        "columns of those names"
                    }
                )));
            }
        }
        if !self.problems.is_empty() {
            return Err(Error::Input(std::mem::take(&mut self.problems)));
        }
        if runs == 0 {
            return Err(Error::Input(vec![Problem {
                file: sources.first().map(source_label).unwrap_or_default(),
                row: None,
                column: None,
                message: "no usable runs were found in the given logs".to_string(),
                in_claims_file: false,
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
    /// gapcert's own report (left out), and what kind.
    pub own_report: Option<&'static str>,
    /// gapcert's own report named as a log (an input error), and what kind.
    pub named_report: Option<&'static str>,
}

/// One log file opened for an audit: its identity and hash, and its table, which is
/// validated batch by batch.
pub struct OpenedLog<'a> {
    pub label: String,
    /// None when the file could not be read at all.
    pub input: Option<InputFile>,
    table: Result<formats::LogTable<'a>, Vec<Problem>>,
    /// The file is one of gapcert's own reports (what kind), not a log: it is left
    /// out of the audit.
    pub own_report: Option<&'static str>,
    /// The file is one of gapcert's own reports (what kind) named as a log: the audit
    /// fails with an input error saying so, even under `--lenient`.
    pub named_report: Option<&'static str>,
}

impl<'a> OpenedLog<'a> {
    /// Reads and hashes the file, and parses it (Parquet: only its footer).
    /// `settings` tell which columns hold numbers (the renames) and how delimited
    /// text is split.
    pub fn open(source: &LogSource<'a>, settings: &IngestSettings) -> OpenedLog<'a> {
        let column_map = &settings.column_map;
        let label = source_label(source);
        let bytes: Cow<'a, [u8]> = match source {
            LogSource::Path(path, _) | LogSource::InFolder(path, _) => match std::fs::read(path) {
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
                        own_report: None,
                        named_report: None,
                    };
                }
            },
            LogSource::Memory(_, bytes, _) => Cow::Borrowed(*bytes),
            LogSource::Unreadable(_, reason) => {
                return OpenedLog {
                    table: Err(vec![Problem::file(&label, reason.clone())]),
                    label,
                    input: None,
                    own_report: None,
                    named_report: None,
                };
            }
        };
        let format = match source {
            LogSource::Path(_, format)
            | LogSource::InFolder(_, format)
            | LogSource::Memory(_, _, format) => *format,
            LogSource::Unreadable(..) => LogFormat::Csv,
        };
        if let Some(kind) = formats::own_report_kind(&bytes, format) {
            let in_folder = matches!(source, LogSource::InFolder(..));
            return OpenedLog {
                label,
                input: None,
                table: Err(Vec::new()),
                own_report: in_folder.then_some(kind),
                named_report: (!in_folder).then_some(kind),
            };
        }
        // Hash while polars parses: both walk the whole file.
        let started = std::time::Instant::now();
        let size = bytes.len() as u64;
        let (sha256, table) = if matches!(format, LogFormat::Parquet) {
            // Only the footer is parsed now; the bytes stay for the row groups.
            let sha256 = hex(&Sha256::digest(&bytes));
            (sha256, formats::open_parquet(&label, bytes))
        } else {
            let parse = || {
                formats::read_table(
                    &label,
                    &bytes,
                    format,
                    column_map,
                    formats::Delimited::of(settings),
                )
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
            own_report: None,
            named_report: None,
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
            own_report: self.own_report,
            named_report: self.named_report,
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
                report.claim_rows.extend(batch.claim_rows);
                report.file_problems.extend(batch.file_problems);
                for note in batch.notes {
                    if !report.notes.contains(&note) {
                        report.notes.push(note);
                    }
                }
                if report.kept_found.is_empty() {
                    report.kept_found = batch.kept_found;
                }
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
        if !report.file_problems.is_empty() {
            report.may_carry_claims = self.may_carry_claims(settings);
        }
        report
    }

    /// Whether the file's runs may carry claims: `--claim-accuracy` gives every row
    /// one; otherwise a column named (or mapped to) a claim column; a file whose
    /// columns could not be read may (the gate never passes on claims it could not
    /// read).
    fn may_carry_claims(&self, settings: &IngestSettings) -> bool {
        const CLAIMS: [&str; 2] = ["claimed_accuracy", "claimed_error_rate"];
        if settings.default_claim_accuracy.is_some() {
            return true;
        }
        let names: Vec<String> = match &self.table {
            Err(_) => return true,
            Ok(formats::LogTable::Frame(df, _)) => df
                .get_column_names()
                .iter()
                .map(|name| name.to_string())
                .collect(),
            Ok(formats::LogTable::Parquet { bytes, .. }) => {
                match preflight::column_names(bytes, LogFormat::Parquet) {
                    Some(names) => names,
                    None => return true,
                }
            }
        };
        names.iter().any(|name| {
            CLAIMS.iter().any(|claim| name.eq_ignore_ascii_case(claim))
                || settings.column_map.iter().any(|(canonical, theirs)| {
                    CLAIMS.contains(&canonical.as_str()) && name == theirs
                })
        })
    }
}

/// The name a source is reported under.
pub fn source_label(source: &LogSource<'_>) -> String {
    match source {
        LogSource::Path(path, _)
        | LogSource::InFolder(path, _)
        | LogSource::Unreadable(path, _) => path.display().to_string(),
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
