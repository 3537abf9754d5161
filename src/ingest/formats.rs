//! Turning the bytes of one log file into a table of columns.
//!
//! CSV, TSV, Parquet and Arrow IPC are read by polars. JSON and JSON lines are parsed
//! with serde_json and assembled into a polars DataFrame here: polars' JSON reader may
//! turn a value of an unexpected type into null, and a silently vanished value is what
//! an audit must never allow. Parsing ourselves also gives the exact record of a
//! truncated or malformed line.

use std::borrow::Cow;
use std::io::Cursor;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::atomic::{AtomicUsize, Ordering};

use polars::prelude::*;
use serde_json::Value;

use super::discover::LogFormat;
use crate::error::Problem;

const UTF8_BOM: &[u8] = &[0xEF, 0xBB, 0xBF];

/// Reads one file's bytes into a DataFrame; `label` names the file in problems.
/// Cell-level JSON problems are returned alongside a table in which those cells are null.
pub fn read_table(
    label: &str,
    bytes: &[u8],
    format: LogFormat,
    column_map: &[(String, String)],
) -> Result<(DataFrame, Vec<Problem>), Vec<Problem>> {
    if bytes.is_empty() {
        return Err(vec![Problem::file(label, "the file is empty")]);
    }
    super::preflight::check(label, bytes, format)?;
    match format {
        LogFormat::Csv => {
            read_delimited(label, bytes, b',', Some(column_map)).map(|df| (df, Vec::new()))
        }
        LogFormat::Tsv => {
            read_delimited(label, bytes, b'\t', Some(column_map)).map(|df| (df, Vec::new()))
        }
        LogFormat::Parquet => guarded(label, "Parquet", || {
            ParquetReader::new(Cursor::new(bytes)).finish()
        })
        .map(|df| (df, Vec::new())),
        LogFormat::Arrow => guarded(label, "Arrow IPC", || {
            IpcReader::new(Cursor::new(bytes)).finish()
        })
        .map(|df| (df, Vec::new())),
        LogFormat::JsonLines => read_json_lines(label, strip_bom(bytes)),
        LogFormat::Json => read_json_document(label, strip_bom(bytes)),
    }
}

/// A log's table, read in batches of rows.
pub enum LogTable<'a> {
    /// Read whole (CSV, TSV, JSON, JSON lines, Arrow IPC), with the problems found
    /// while parsing cells (JSON), numbered by file row.
    Frame(DataFrame, Vec<Problem>),
    /// Parquet: only the footer is read up front and row groups are decoded when asked
    /// for, so a log larger than memory can be audited batch by batch.
    Parquet {
        bytes: Cow<'a, [u8]>,
        metadata: FileMetadataRef,
    },
}

/// The problems of rows `offset + 1 ..= offset + length`, renumbered from 1; problems
/// of no row go with the range that starts at 0.
pub fn problems_within(problems: &[Problem], offset: usize, length: usize) -> Vec<Problem> {
    problems
        .iter()
        .filter_map(|problem| match problem.row {
            Some(row) if row > offset && row <= offset + length => Some(Problem {
                row: Some(row - offset),
                ..problem.clone()
            }),
            None | Some(0) if offset == 0 => Some(problem.clone()),
            _ => None,
        })
        .collect()
}

/// Opens a Parquet file: reads its footer; row groups are decoded by
/// [`LogTable::rows`].
pub fn open_parquet<'a>(label: &str, bytes: Cow<'a, [u8]>) -> Result<LogTable<'a>, Vec<Problem>> {
    if bytes.is_empty() {
        return Err(vec![Problem::file(label, "the file is empty")]);
    }
    super::preflight::check(label, &bytes, LogFormat::Parquet)?;
    let metadata = guarded(label, "Parquet", || {
        ParquetReader::new(Cursor::new(&bytes[..]))
            .get_metadata()
            .cloned()
    })?;
    Ok(LogTable::Parquet { bytes, metadata })
}

impl LogTable<'_> {
    /// Data rows in the table.
    pub fn height(&self) -> usize {
        match self {
            LogTable::Frame(df, _) => df.height(),
            LogTable::Parquet { metadata, .. } => metadata.num_rows,
        }
    }

    /// Row ranges (offset, length) that cover the table in order, each of about
    /// `batch_rows` rows; Parquet ranges hold whole row groups. An empty table has one
    /// empty range, so its columns are still checked.
    pub fn batches(&self, batch_rows: usize) -> Vec<(usize, usize)> {
        let batch_rows = batch_rows.max(1);
        let height = self.height();
        let mut ranges = Vec::new();
        match self {
            LogTable::Frame(..) => {
                let mut offset = 0;
                while offset < height {
                    let length = batch_rows.min(height - offset);
                    ranges.push((offset, length));
                    offset += length;
                }
            }
            LogTable::Parquet { metadata, .. } => {
                let (mut offset, mut length) = (0, 0);
                for group in &metadata.row_groups {
                    length += group.num_rows();
                    if length >= batch_rows {
                        ranges.push((offset, length));
                        offset += length;
                        length = 0;
                    }
                }
                if length > 0 {
                    ranges.push((offset, length));
                }
            }
        }
        if ranges.is_empty() {
            ranges.push((0, 0));
        }
        ranges
    }

    /// Rows `offset .. offset + length` as a DataFrame, with the parse problems of
    /// those rows numbered from 1 within the batch (problems of no row come with the
    /// first batch).
    pub fn rows(
        &self,
        label: &str,
        offset: usize,
        length: usize,
    ) -> Result<(DataFrame, Vec<Problem>), Vec<Problem>> {
        match self {
            LogTable::Frame(df, problems) => {
                let batch = if offset == 0 && length >= df.height() {
                    df.clone()
                } else {
                    df.slice(offset as i64, length)
                };
                Ok((batch, problems_within(problems, offset, length)))
            }
            LogTable::Parquet { bytes, metadata } => {
                let df = guarded(label, "Parquet", || {
                    let mut reader = ParquetReader::new(Cursor::new(&bytes[..]))
                        .with_slice(Some((offset, length)));
                    reader.set_metadata(metadata.clone());
                    reader.finish()
                })?;
                Ok((df, Vec::new()))
            }
        }
    }
}

fn strip_bom(bytes: &[u8]) -> &[u8] {
    bytes.strip_prefix(UTF8_BOM).unwrap_or(bytes)
}

/// Readers running under [`guarded`] right now; the binary's panic hook stays silent
/// while this is non-zero, since such a panic is reported as an input problem.
pub static GUARDED_READERS: AtomicUsize = AtomicUsize::new(0);

/// Runs a polars reader, turning both its errors and its panics into a problem with
/// the file. Fuzzing found malformed Parquet that trips an assertion inside polars
/// (fuzz/regressions/ingest_parquet-bitmap-offset); a bad input file must be reported,
/// never crash the audit.
fn guarded<T, F>(label: &str, kind: &str, read: F) -> Result<T, Vec<Problem>>
where
    F: FnOnce() -> PolarsResult<T>,
{
    GUARDED_READERS.fetch_add(1, Ordering::SeqCst);
    let outcome = catch_unwind(AssertUnwindSafe(read));
    GUARDED_READERS.fetch_sub(1, Ordering::SeqCst);
    match outcome {
        Ok(Ok(value)) => Ok(value),
        Ok(Err(error)) => Err(vec![Problem::file(
            label,
            format!("cannot read as {kind}: {}", polars_message(&error)),
        )]),
        Err(_) => Err(vec![Problem::file(
            label,
            format!("cannot read as {kind}: the file is malformed (the reader stopped on inconsistent data)"),
        )]),
    }
}

/// The first line of a polars error, without its internal context.
pub fn polars_message(error: &PolarsError) -> String {
    let text = error.to_string();
    text.lines()
        .next()
        .unwrap_or("unknown error")
        .trim()
        .to_string()
}

/// Reads CSV or TSV.
///
/// With `column_map` given, the columns gapcert reads as numbers are first parsed by
/// polars as Float64 or Int64 (the fast path: no text copies, no second parse). If a
/// single cell does not parse, polars stops without saying which row it was, so the
/// file is then read again with every column as text, and the column extractor
/// reports each unparsable cell with its row and column. Where both parsers accept a
/// cell they agree: each reads a decimal to the nearest double (a test compares the
/// two paths cell by cell).
fn read_delimited(
    label: &str,
    bytes: &[u8],
    separator: u8,
    column_map: Option<&[(String, String)]>,
) -> Result<DataFrame, Vec<Problem>> {
    let bytes = strip_bom(bytes);
    if bytes.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(vec![Problem::file(label, "the file is empty")]);
    }
    let parse_options = CsvParseOptions::default()
        .with_separator(separator)
        .with_truncate_ragged_lines(false);
    let options = CsvReadOptions::default()
        .with_has_header(true)
        .with_infer_schema_length(Some(0))
        .with_parse_options(parse_options);
    if let Some(df) = column_map.and_then(|map| read_delimited_typed(label, bytes, &options, map)) {
        return Ok(strip_carriage_returns(df));
    }
    read_with(label, options, bytes).map(strip_carriage_returns)
}

/// The fast path of [`read_delimited`]; None when it does not apply or any cell fails.
fn read_delimited_typed(
    label: &str,
    bytes: &[u8],
    options: &CsvReadOptions,
    column_map: &[(String, String)],
) -> Option<DataFrame> {
    // polars scans the whole input even for zero rows: hand it the header line only.
    let header_line = &bytes[..header_end(bytes)];
    let header = read_with(label, options.clone().with_n_rows(Some(0)), header_line).ok()?;
    let names: Vec<&str> = header
        .get_column_names()
        .iter()
        .map(|name| name.as_str())
        .collect();
    let dtypes = super::columns::delimited_dtypes(&names, column_map);
    if dtypes.iter().all(|dtype| *dtype == DataType::String) {
        return None;
    }
    let options = options.clone().with_dtype_overwrite(Some(Arc::new(dtypes)));
    read_with(label, options, bytes).ok()
}

/// What reading delimited `bytes` yields (the validated runs, the bad rows, the
/// problems), once with numeric columns typed by polars and once with every cell as
/// text; the two must be equal. For the unit tests and the CSV fuzzer's differential
/// check.
pub fn typed_and_text_readings(bytes: &[u8], separator: u8) -> [String; 2] {
    let settings = super::settings::IngestSettings::default();
    let read = |map: Option<&[(String, String)]>| match read_delimited("t", bytes, separator, map) {
        Ok(df) => {
            let runs = super::rows::table_runs("t", &df, 0, &settings, Vec::new());
            format!(
                "{:?}\n{:?}\n{:?}",
                runs.runs, runs.bad_rows, runs.file_problems
            )
        }
        Err(problems) => format!("{problems:?}"),
    };
    [read(Some(&settings.column_map)), read(None)]
}

/// Delimited text read by polars with `options`, a panic or error reported as a problem.
fn read_with(
    label: &str,
    options: CsvReadOptions,
    bytes: &[u8],
) -> Result<DataFrame, Vec<Problem>> {
    guarded(label, "delimited text", || {
        options
            .into_reader_with_file_handle(Cursor::new(bytes))
            .finish()
    })
}

/// The end of a delimited file's first record (its newline included): the first
/// newline outside double quotes, or the end of the input.
fn header_end(bytes: &[u8]) -> usize {
    let mut quoted = false;
    for (at, &byte) in bytes.iter().enumerate() {
        match byte {
            b'"' => quoted = !quoted,
            b'\n' if !quoted => return at + 1,
            _ => {}
        }
    }
    bytes.len()
}

/// CRLF files leave a trailing `\r` in the last column's cells (and its name) on some
/// polars versions; remove it so such files read like LF files.
fn strip_carriage_returns(df: DataFrame) -> DataFrame {
    let Some(last) = df.columns().last() else {
        return df;
    };
    let name_has_cr = last.name().ends_with('\r');
    let Ok(text) = last.as_materialized_series().str() else {
        return df;
    };
    let cells_have_cr = text
        .iter()
        .any(|cell| cell.is_some_and(|c| c.ends_with('\r')));
    if !name_has_cr && !cells_have_cr {
        return df;
    }
    let new_name = last.name().trim_end_matches('\r').to_string();
    let cleaned: Vec<Option<String>> = text
        .iter()
        .map(|cell| {
            cell.map(|c| c.trim_end_matches('\r').to_string())
                .filter(|c| !c.is_empty())
        })
        .collect();
    let mut columns: Vec<Column> = df.columns().to_vec();
    let index = columns.len() - 1;
    columns[index] = Series::new(new_name.as_str().into(), cleaned).into();
    DataFrame::new(df.height(), columns).unwrap_or(df)
}

fn read_json_lines(label: &str, bytes: &[u8]) -> Result<(DataFrame, Vec<Problem>), Vec<Problem>> {
    let text = std::str::from_utf8(bytes)
        .map_err(|_| vec![Problem::file(label, "the file is not valid UTF-8")])?;
    let mut records = Vec::new();
    let mut problems = Vec::new();
    let mut record_number = 0usize;
    for line in text.lines() {
        if line.trim().is_empty() {
            continue;
        }
        record_number += 1;
        match serde_json::from_str::<Value>(line) {
            Ok(Value::Object(map)) => records.push(Some(map)),
            Ok(_) => {
                problems.push(Problem::row(
                    label,
                    record_number,
                    "the line is JSON but not an object (one run per line expected)",
                ));
                records.push(None);
            }
            Err(error) => {
                problems.push(Problem::row(
                    label,
                    record_number,
                    format!("invalid JSON ({})", json_error_kind(&error)),
                ));
                records.push(None);
            }
        }
    }
    if records.is_empty() {
        return Err(vec![Problem::file(label, "the file holds no JSON records")]);
    }
    let (df, mut cell_problems) = records_to_frame(label, &records);
    problems.append(&mut cell_problems);
    Ok((df, problems))
}

fn read_json_document(
    label: &str,
    bytes: &[u8],
) -> Result<(DataFrame, Vec<Problem>), Vec<Problem>> {
    let document: Value = serde_json::from_slice(bytes).map_err(|error| {
        vec![Problem::file(
            label,
            format!(
                "invalid JSON at line {}, column {} ({})",
                error.line(),
                error.column(),
                json_error_kind(&error)
            ),
        )]
    })?;
    let mut problems = Vec::new();
    let records: Vec<Option<serde_json::Map<String, Value>>> = match document {
        Value::Object(map) => vec![Some(map)],
        Value::Array(items) => items
            .into_iter()
            .enumerate()
            .map(|(index, item)| match item {
                Value::Object(map) => Some(map),
                _ => {
                    problems.push(Problem::row(
                        label,
                        index + 1,
                        "the array element is not an object (one run per element expected)",
                    ));
                    None
                }
            })
            .collect(),
        _ => {
            return Err(vec![Problem::file(
                label,
                "the JSON document is neither an object (one run) nor an array of runs",
            )])
        }
    };
    if records.is_empty() {
        return Err(vec![Problem::file(label, "the JSON array holds no runs")]);
    }
    let (df, mut cell_problems) = records_to_frame(label, &records);
    problems.append(&mut cell_problems);
    Ok((df, problems))
}

fn json_error_kind(error: &serde_json::Error) -> &'static str {
    match error.classify() {
        serde_json::error::Category::Eof => "unexpected end of input: truncated?",
        serde_json::error::Category::Syntax => "syntax error",
        serde_json::error::Category::Data => "unexpected data",
        serde_json::error::Category::Io => "read error",
    }
}

/// Builds a DataFrame from JSON objects. A column whose values are all numbers
/// becomes numeric; a column with any string keeps every value as text (numbers in
/// their JSON spelling), so the column extractor sees exactly what was written.
/// Booleans, arrays and objects are reported and become null.
fn records_to_frame(
    label: &str,
    records: &[Option<serde_json::Map<String, Value>>],
) -> (DataFrame, Vec<Problem>) {
    let mut names: Vec<String> = Vec::new();
    let mut seen = std::collections::HashSet::new();
    for map in records.iter().flatten() {
        for key in map.keys() {
            if seen.insert(key.clone()) {
                names.push(key.clone());
            }
        }
    }
    let mut problems = Vec::new();
    let mut columns = Vec::with_capacity(names.len());
    for name in &names {
        let values: Vec<Option<&Value>> = records
            .iter()
            .map(|record| record.as_ref().and_then(|map| map.get(name)))
            .collect();
        let any_text = values.iter().any(|v| matches!(v, Some(Value::String(_))));
        let all_integers = values
            .iter()
            .all(|v| !matches!(v, Some(Value::Number(n)) if n.as_i64().is_none()));
        let mut text_cells: Vec<Option<String>> = Vec::new();
        let mut integer_cells: Vec<Option<i64>> = Vec::new();
        let mut float_cells: Vec<Option<f64>> = Vec::new();
        for (index, value) in values.iter().enumerate() {
            let cell: Option<&Value> = match value {
                None | Some(Value::Null) => None,
                Some(Value::Bool(_)) | Some(Value::Array(_)) | Some(Value::Object(_)) => {
                    problems.push(Problem::cell(
                        label,
                        index + 1,
                        name,
                        format!(
                            "{name} holds a JSON {} where a number or text was expected",
                            json_kind(value.unwrap())
                        ),
                    ));
                    None
                }
                Some(other) => Some(other),
            };
            if any_text {
                text_cells.push(cell.map(|v| match v {
                    Value::String(s) => s.clone(),
                    other => other.to_string(),
                }));
            } else if all_integers {
                integer_cells.push(cell.and_then(|v| v.as_i64()));
            } else {
                float_cells.push(cell.and_then(|v| v.as_f64()));
            }
        }
        let series = if any_text {
            Series::new(name.as_str().into(), text_cells)
        } else if all_integers {
            Series::new(name.as_str().into(), integer_cells)
        } else {
            Series::new(name.as_str().into(), float_cells)
        };
        columns.push(Column::from(series));
    }
    let df = DataFrame::new(records.len(), columns)
        .unwrap_or_else(|_| DataFrame::empty_with_height(records.len()));
    (df, problems)
}

fn json_kind(value: &Value) -> &'static str {
    match value {
        Value::Bool(_) => "boolean",
        Value::Array(_) => "array",
        Value::Object(_) => "object",
        Value::Null => "null",
        Value::Number(_) => "number",
        Value::String(_) => "string",
    }
}

/// Installs a panic hook that stays silent while a guarded reader runs (its panic is
/// caught and reported as an input problem) and otherwise prints the standard message.
pub fn install_panic_hook() {
    let default_hook = std::panic::take_hook();
    std::panic::set_hook(Box::new(move |info| {
        if GUARDED_READERS.load(std::sync::atomic::Ordering::SeqCst) == 0 {
            default_hook(info);
        }
    }));
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::ingest::settings::IngestSettings;

    /// Reads `text` as CSV both ways: the typed table, and what each reading yields.
    fn both_paths(text: &str) -> [(DataFrame, String); 2] {
        let settings = IngestSettings::default();
        let typed = read_delimited("t", text.as_bytes(), b',', Some(&settings.column_map));
        let plain = read_delimited("t", text.as_bytes(), b',', None);
        let [typed_seen, plain_seen] = typed_and_text_readings(text.as_bytes(), b',');
        [
            (typed.expect("readable"), typed_seen),
            (plain.expect("readable"), plain_seen),
        ]
    }

    #[test]
    fn typed_and_text_reading_give_the_same_runs() {
        // Spellings both parsers accept (signs, bare points, exponents, quotes,
        // empty cells) in the numeric columns.
        let text = "run,holdout_n,holdout_error_rate,holdout_misclassified,train_n,train_error_rate,claimed_accuracy,holdout_set,family,dim\n\
                    a,100,0.03,3,1000,+0.01,.97,\"s1\",linear,3\n\
                    b,\"250\",3e-2,,2000,1E-2,0.9,s1,,\n\
                    c,+40,.025,1,,,,007,box,2\n\
                    d,1000,0.1000000000000000055511151231257827,100,5,0,,,,\n";
        let [(typed, typed_seen), (plain, plain_seen)] = both_paths(text);
        assert_eq!(typed.column("holdout_n").unwrap().dtype(), &DataType::Int64);
        assert_eq!(
            typed.column("claimed_accuracy").unwrap().dtype(),
            &DataType::Float64
        );
        // A split named 007 stays text, not the number 7.
        assert_eq!(
            typed.column("holdout_set").unwrap().dtype(),
            &DataType::String
        );
        assert_eq!(
            plain.column("holdout_n").unwrap().dtype(),
            &DataType::String
        );
        assert!(typed_seen.contains("\"007\""), "{typed_seen}");
        assert_eq!(typed_seen, plain_seen);
    }

    #[test]
    fn a_cell_polars_cannot_parse_falls_back_to_text_and_is_reported_by_row() {
        // `1000.0` is a whole number to gapcert but not an Int64 to polars; `n/a` is
        // not a number at all: the second read reports it with its row.
        let text = "run,holdout_n,holdout_error_rate\na,1000.0,0.1\nb,n/a,0.2\nc, 300 ,0.3\n";
        let [(typed, typed_seen), (_, plain_seen)] = both_paths(text);
        assert_eq!(
            typed.column("holdout_n").unwrap().dtype(),
            &DataType::String
        );
        assert_eq!(typed_seen, plain_seen);
        assert!(typed_seen.contains("row: Some(2)"), "{typed_seen}");
        assert!(typed_seen.contains("n/a"), "{typed_seen}");
    }

    #[test]
    fn crlf_files_read_the_same_typed() {
        let lf = "run,holdout_n,holdout_error_rate\na,100,0.03\nb,200,0.05\n";
        let crlf = lf.replace('\n', "\r\n");
        let [(_, from_lf), _] = both_paths(lf);
        let [(_, from_crlf), (_, from_crlf_text)] = both_paths(&crlf);
        assert_eq!(from_lf, from_crlf);
        assert_eq!(from_crlf, from_crlf_text);
    }

    #[test]
    fn the_header_ends_at_the_first_newline_outside_quotes() {
        assert_eq!(header_end(b"a,b\n1,2\n"), 4);
        assert_eq!(header_end(b"\"a\nx\",b\n1,2\n"), 8);
        assert_eq!(header_end(b"a,b"), 3);
    }
}
