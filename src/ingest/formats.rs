//! Turning the bytes of one log file into a table of columns.
//!
//! CSV, TSV, Parquet and Arrow IPC are read by polars; their struct columns are
//! flattened into one column per field, named by its dotted path as nested JSON keys
//! are ([`flatten_structs`]). JSON and JSON lines are parsed with serde_json and
//! assembled into a polars DataFrame here: polars' JSON reader may turn a value of an
//! unexpected type into null, and a silently vanished value is what an audit must never
//! allow. Parsing ourselves also gives the exact record of a truncated or malformed
//! line.

use std::borrow::Cow;
use std::io::Cursor;
use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::atomic::{AtomicUsize, Ordering};

use polars::prelude::*;
use serde_json::Value;

use super::discover::LogFormat;
use crate::error::Problem;
use crate::report::own_outputs::{
    CERTIFICATE_FORMAT, CLAIM_COLUMNS, DOCUMENT_MEMBERS, EXPLANATION, FLAT_COLUMNS,
    OPTIONAL_DOCUMENT_MEMBERS,
};

const UTF8_BOM: &[u8] = &[0xEF, 0xBB, 0xBF];

/// What kind of gapcert report `bytes` hold, if they hold one: gapcert's own
/// outputs (the JSON document, a certificate, the runs or claims written flat) found
/// in a folder of logs are left out, so that `gapcert audit exp -o exp/audit.csv`
/// followed by another audit of `exp` (or `verify` of a certificate kept there) does
/// not read the report as a log.
///
/// Recognised by shape, never by words a log's cells could hold too (a notes field
/// naming `verdict` must not drop a log from the gate): the runs written flat have
/// exactly [`FLAT_COLUMNS`] first, in gapcert's order (any columns after them are
/// `--keep` columns); the claims written flat have exactly [`CLAIM_COLUMNS`]; the JSON
/// document is an object with the document's members and no others, and `tool.name`
/// "gapcert", and a certificate adds `certificate` with gapcert's certificate format.
/// The columns are the CSV header, the first JSON line's keys in order, and the
/// schema in a Parquet footer or Arrow header. Tested in `tests/it/hostile.rs` and
/// `tests/it/folders.rs`.
pub fn own_report_kind(bytes: &[u8], format: LogFormat) -> Option<&'static str> {
    let bytes = strip_bom(bytes);
    let columns = match format {
        LogFormat::Json => {
            if let Some(kind) = document_kind(bytes) {
                return Some(kind);
            }
            // JSON lines saved under a .json name.
            json_keys(first_line(bytes))
        }
        LogFormat::JsonLines => json_keys(first_line(bytes)),
        LogFormat::Csv => header_names(first_line(bytes), b','),
        LogFormat::Tsv => header_names(first_line(bytes), b'\t'),
        LogFormat::Parquet | LogFormat::Arrow => super::preflight::column_names(bytes, format),
    }?;
    if runs_columns(&columns) {
        Some("a gapcert report of runs")
    } else if columns.len() == CLAIM_COLUMNS.len() && may_be_own_columns(&columns) {
        Some("a gapcert report of claims")
    } else {
        None
    }
}

/// Whether `columns` begin the columns of a runs report (gapcert's flat columns, then
/// any `--keep` columns) or of a claims report: readers stop at the first column that
/// rules both out, so a long first line of a log is not read to its end.
fn may_be_own_columns<S: AsRef<str>>(columns: &[S]) -> bool {
    let begins = |names: &mut dyn Iterator<Item = &&str>| {
        columns
            .iter()
            .zip(names)
            .all(|(column, name)| column.as_ref() == *name)
    };
    begins(&mut FLAT_COLUMNS.iter())
        || begins(&mut plain_flat_columns())
        || (columns.len() <= CLAIM_COLUMNS.len() && begins(&mut CLAIM_COLUMNS.iter()))
}

/// The flat columns written without `--explain`.
fn plain_flat_columns() -> impl Iterator<Item = &'static &'static str> {
    FLAT_COLUMNS.iter().filter(|name| **name != EXPLANATION)
}

/// Whether `columns` begin with every flat column of a runs report, written with or
/// without `--explain` (then any `--keep` columns).
fn runs_columns<S: AsRef<str>>(columns: &[S]) -> bool {
    let whole = |names: Vec<&str>| {
        columns.len() >= names.len()
            && columns
                .iter()
                .zip(&names)
                .all(|(column, name)| column.as_ref() == *name)
    };
    whole(FLAT_COLUMNS.to_vec()) || whole(plain_flat_columns().copied().collect())
}

/// The bytes before the first line end.
fn first_line(bytes: &[u8]) -> &[u8] {
    let end = bytes
        .iter()
        .position(|&b| b == b'\n')
        .unwrap_or(bytes.len());
    &bytes[..end]
}

/// The names in a header line as gapcert writes them (split at `separator`; its own
/// column names never need quotes).
fn header_names(line: &[u8], separator: u8) -> Option<Vec<String>> {
    let line = line.strip_suffix(b"\r").unwrap_or(line);
    let line = std::str::from_utf8(line).ok()?;
    // The rest of the line after gapcert's columns is one item: `--keep` columns.
    Some(
        line.splitn(FLAT_COLUMNS.len() + 1, char::from(separator))
            .map(str::to_string)
            .collect(),
    )
}

/// The keys of the JSON object `line` holds, in their order; None when it holds
/// anything else, or as soon as its keys cannot be gapcert's columns.
fn json_keys(line: &[u8]) -> Option<Vec<String>> {
    struct Keys(Vec<String>);
    impl<'de> serde::Deserialize<'de> for Keys {
        fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Keys, D::Error> {
            deserializer.deserialize_map(Keys(Vec::new()))
        }
    }
    impl<'de> serde::de::Visitor<'de> for Keys {
        type Value = Keys;
        fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
            f.write_str("a JSON object")
        }
        fn visit_map<A: serde::de::MapAccess<'de>>(mut self, mut map: A) -> Result<Keys, A::Error> {
            while let Some(key) = map.next_key::<String>()? {
                self.0.push(key);
                if !may_be_own_columns(&self.0) {
                    return Err(serde::de::Error::custom("not gapcert's columns"));
                }
                map.next_value::<serde::de::IgnoredAny>()?;
            }
            Ok(self)
        }
    }
    serde_json::from_slice::<Keys>(line).ok().map(|keys| keys.0)
}

/// Whether `bytes` hold gapcert's JSON document or a certificate (the document plus a
/// `certificate` member). The top-level object is walked member by member, values
/// skipped without being kept, and the walk stops at the first member no document has
/// (so an object-shaped log is seldom read through twice).
fn document_kind(bytes: &[u8]) -> Option<&'static str> {
    #[derive(Default)]
    struct Shape {
        members: Vec<String>,
        tool_is_gapcert: bool,
        certificate_format: Option<String>,
    }
    struct Walk;
    impl<'de> serde::de::DeserializeSeed<'de> for Walk {
        type Value = Shape;
        fn deserialize<D: serde::Deserializer<'de>>(
            self,
            deserializer: D,
        ) -> Result<Shape, D::Error> {
            deserializer.deserialize_map(self)
        }
    }
    #[derive(serde::Deserialize)]
    struct Tool {
        name: String,
        #[allow(dead_code)]
        version: String,
    }
    #[derive(serde::Deserialize)]
    struct CertificateFormat {
        format: String,
    }
    impl<'de> serde::de::Visitor<'de> for Walk {
        type Value = Shape;
        fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
            f.write_str("gapcert's JSON document")
        }
        fn visit_map<A: serde::de::MapAccess<'de>>(self, mut map: A) -> Result<Shape, A::Error> {
            use serde::de::Error as _;
            let mut shape = Shape::default();
            while let Some(key) = map.next_key::<String>()? {
                if shape.members.contains(&key) {
                    return Err(A::Error::custom("a member repeated"));
                }
                match key.as_str() {
                    "tool" => shape.tool_is_gapcert = map.next_value::<Tool>()?.name == "gapcert",
                    "certificate" => {
                        shape.certificate_format =
                            Some(map.next_value::<CertificateFormat>()?.format)
                    }
                    known if DOCUMENT_MEMBERS.contains(&known) => {
                        map.next_value::<serde::de::IgnoredAny>()?;
                    }
                    _ => return Err(A::Error::custom("not a member of the document")),
                }
                shape.members.push(key);
            }
            Ok(shape)
        }
    }
    use serde::de::DeserializeSeed;
    let mut deserializer = serde_json::Deserializer::from_slice(bytes);
    let shape = Walk.deserialize(&mut deserializer).ok()?;
    deserializer.end().ok()?;
    let required = &DOCUMENT_MEMBERS[..DOCUMENT_MEMBERS.len() - OPTIONAL_DOCUMENT_MEMBERS];
    let complete = required
        .iter()
        .all(|member| shape.members.iter().any(|m| m == member));
    if !complete || !shape.tool_is_gapcert {
        return None;
    }
    // Any version of the certificate format ("gapcert-certificate/1").
    let certificate_family = CERTIFICATE_FORMAT
        .split_once('/')
        .map_or(CERTIFICATE_FORMAT, |(family, _)| family);
    match shape.certificate_format {
        None => Some("a gapcert report"),
        Some(format)
            if format.split_once('/').map(|(family, _)| family) == Some(certificate_family) =>
        {
            Some("a gapcert certificate")
        }
        Some(_) => None,
    }
}

/// How delimited text is split (`--separator`, `--decimal-comma`).
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct Delimited {
    /// The field separator; None: `,` for .csv, a tab for .tsv.
    pub separator: Option<u8>,
    /// Decimal numbers are written with a comma (`0,93`), as spreadsheet exports in
    /// many locales write them.
    pub decimal_comma: bool,
}

impl Delimited {
    /// The reading options of `settings`.
    pub fn of(settings: &super::settings::IngestSettings) -> Delimited {
        Delimited {
            separator: settings.separator,
            decimal_comma: settings.decimal_comma,
        }
    }
}

/// Reads one file's bytes into a DataFrame; `label` names the file in problems.
/// Cell-level JSON problems are returned alongside a table in which those cells are null.
pub fn read_table(
    label: &str,
    bytes: &[u8],
    format: LogFormat,
    column_map: &[(String, String)],
    delimited: Delimited,
) -> Result<(DataFrame, Vec<Problem>), Vec<Problem>> {
    if bytes.is_empty() {
        return Err(vec![Problem::file(label, "the file is empty")]);
    }
    super::preflight::check(label, bytes, format)?;
    match format {
        LogFormat::Csv | LogFormat::Tsv => {
            let default = if format == LogFormat::Csv {
                b','
            } else {
                b'\t'
            };
            let separator = delimited.separator.unwrap_or(default);
            read_delimited(
                label,
                bytes,
                separator,
                delimited.decimal_comma,
                Some(column_map),
            )
            .map(|df| (df, Vec::new()))
        }
        LogFormat::Parquet => guarded(label, "Parquet", || {
            ParquetReader::new(Cursor::new(bytes))
                .finish()
                .and_then(flatten_structs)
        })
        .map(|df| (df, Vec::new())),
        LogFormat::Arrow => guarded(label, "Arrow IPC", || {
            IpcReader::new(Cursor::new(bytes))
                .finish()
                .and_then(flatten_structs)
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
                    reader.finish().and_then(flatten_structs)
                })?;
                Ok((df, Vec::new()))
            }
        }
    }
}

/// Replaces every struct column (Parquet's and Arrow's nested records) by one column
/// per field, named by its dotted path (`metrics.val.acc`), as nested JSON objects are
/// read: `--map holdout_accuracy=metrics.val.acc` then names either, and a path that
/// stops at a struct gets the same message as one that stops at a JSON object. A row
/// whose struct is null has every field null.
pub fn flatten_structs(df: DataFrame) -> PolarsResult<DataFrame> {
    let is_struct = |dtype: &DataType| matches!(dtype, DataType::Struct(_));
    if !df.columns().iter().any(|column| is_struct(column.dtype())) {
        return Ok(df);
    }
    fn push_fields(series: Series, out: &mut Vec<Column>) -> PolarsResult<()> {
        if !matches!(series.dtype(), DataType::Struct(_)) {
            out.push(series.into_column());
            return Ok(());
        }
        // A struct's fields do not carry the struct's own nulls until propagated.
        let series = series.propagate_nulls().unwrap_or(series);
        let parent = series.name().clone();
        for field in series.struct_()?.fields_as_series() {
            let name = format!("{parent}.{}", field.name());
            push_fields(field.with_name(name.into()), out)?;
        }
        Ok(())
    }
    let height = df.height();
    let mut columns = Vec::with_capacity(df.width());
    for column in df.into_columns() {
        push_fields(column.as_materialized_series().clone(), &mut columns)?;
    }
    let mut names = std::collections::HashSet::new();
    if let Some(twice) = columns.iter().find(|column| !names.insert(column.name())) {
        polars_bail!(Duplicate: "two columns are named `{}` once the fields of struct columns are named by their dotted paths; rename one", twice.name());
    }
    DataFrame::new(height, columns)
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

/// Longest line of a CSV or TSV file gapcert reads (1 MiB). polars' line splitter
/// takes time quadratic in a line's length (a 64 MB line took 9 s, 2 GB never ended),
/// and no run log writes a megabyte per run.
pub const MAX_LINE_BYTES: usize = 1 << 20;

/// Most problems listed per file by the checks before parsing: one is enough to
/// refuse the file, a few show a pattern.
const MAX_SHAPE_PROBLEMS: usize = 20;

/// Problems found before a delimited file reaches polars: lines longer than
/// [`MAX_LINE_BYTES`] (by line number: the header is line 1, data row `n` is line
/// `n + 1` unless quoted cells span lines) and bytes that are not UTF-8 (by row and
/// column).
fn delimited_shape_problems(label: &str, bytes: &[u8], separator: u8) -> Vec<Problem> {
    let mut problems = Vec::new();
    let mut line_start = 0usize;
    for (index, line) in bytes.split(|&byte| byte == b'\n').enumerate() {
        let start = line_start;
        line_start += line.len() + 1;
        if problems.len() >= MAX_SHAPE_PROBLEMS {
            break;
        }
        if line.len() > MAX_LINE_BYTES {
            let words = format!(
                "line {} is {} bytes long, more than the {MAX_LINE_BYTES} bytes gapcert reads in one line (is this a log of one run per line?)",
                index + 1,
                line.len()
            );
            problems.push(if index == 0 {
                Problem::file(label, words)
            } else {
                Problem::row(label, index, words)
            });
            continue;
        }
        if let Err(error) = std::str::from_utf8(line) {
            let at = error.valid_up_to();
            let header = &bytes[..header_end(bytes)];
            let header = String::from_utf8_lossy(header);
            let field = line[..at].iter().filter(|&&byte| byte == separator).count();
            let column = header
                .trim_end_matches(['\r', '\n'])
                .split(separator as char)
                .nth(field)
                .map(|name| name.trim().trim_matches('"').to_string());
            let words = format!(
                "byte 0x{:02x} (at byte {} of the file) is not UTF-8; save the file as UTF-8",
                line[at],
                start + at
            );
            problems.push(match (index, column) {
                (0, _) => Problem::file(label, format!("the header: {words}")),
                (row, Some(column)) => {
                    Problem::cell(label, row, &column, format!("column `{column}`: {words}"))
                }
                (row, None) => Problem::row(label, row, words),
            });
        }
    }
    problems
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
    decimal_comma: bool,
    column_map: Option<&[(String, String)]>,
) -> Result<DataFrame, Vec<Problem>> {
    let bytes = strip_bom(bytes);
    if bytes.iter().all(|b| b.is_ascii_whitespace()) {
        return Err(vec![Problem::file(label, "the file is empty")]);
    }
    let problems = delimited_shape_problems(label, bytes, separator);
    if !problems.is_empty() {
        return Err(problems);
    }
    let parse_options = CsvParseOptions::default()
        .with_separator(separator)
        .with_decimal_comma(decimal_comma)
        .with_truncate_ragged_lines(false);
    let options = CsvReadOptions::default()
        .with_has_header(true)
        .with_infer_schema_length(Some(0))
        .with_parse_options(parse_options);
    if let Some(df) = column_map.and_then(|map| read_delimited_typed(label, bytes, &options, map)) {
        return Ok(strip_carriage_returns(df));
    }
    read_with(label, options, bytes)
        .map(strip_carriage_returns)
        .map_err(|problems| {
            let ragged = ragged_rows(label, bytes, separator);
            if ragged.is_empty() {
                problems
            } else {
                ragged
            }
        })
}

/// When polars cannot split a delimited file, the rows whose number of fields is not
/// the header's, each named (polars' own message names none), with advice when the
/// header reads better with another separator (a spreadsheet export in a locale that
/// separates fields with `;` and writes decimal commas).
fn ragged_rows(label: &str, bytes: &[u8], separator: u8) -> Vec<Problem> {
    let Ok(text) = std::str::from_utf8(bytes) else {
        return Vec::new();
    };
    let split = |line: &str, separator: u8| -> usize {
        let mut fields = 1;
        let mut quoted = false;
        for byte in line.bytes() {
            match byte {
                b'"' => quoted = !quoted,
                b if b == separator && !quoted => fields += 1,
                _ => {}
            }
        }
        fields
    };
    let mut lines = text.lines();
    let Some(header) = lines.next() else {
        return Vec::new();
    };
    let expected = split(header, separator);
    let advice = [b';', b'\t', b'|', b',']
        .into_iter()
        .filter(|&other| other != separator && split(header, other) > expected)
        .max_by_key(|&other| split(header, other))
        .map(|other| {
            let name = match other {
                b'\t' => "a tab".to_string(),
                other => format!("`{}`", other as char),
            };
            let comma = if other == b';' && text.contains(',') {
                " --decimal-comma (decimal numbers written like 0,93)"
            } else {
                ""
            };
            format!(
                " (the header splits into {} fields at {name}: pass --separator '{}'{comma})",
                split(header, other),
                if other == b'\t' {
                    "\\t".to_string()
                } else {
                    (other as char).to_string()
                }
            )
        })
        .unwrap_or_default();
    let mut problems = Vec::new();
    let mut row = 0;
    for line in lines {
        if line.trim().is_empty() {
            continue;
        }
        row += 1;
        let fields = split(line, separator);
        if fields != expected {
            if problems.len() == 20 {
                problems.push(Problem::file(label, "… and more rows of the wrong width"));
                break;
            }
            problems.push(Problem::row(
                label,
                row,
                format!("the row has {fields} fields and the header {expected}{advice}"),
            ));
        }
    }
    problems
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
    let read = |map: Option<&[(String, String)]>| match read_delimited(
        "t", bytes, separator, false, map,
    ) {
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

/// One JSON record flattened: nested objects become dotted keys
/// (`{"metrics": {"val": {"acc": 0.93}}}` gives `metrics.val.acc`), in the order
/// written; keys written twice are collected, not silently resolved.
#[derive(Default)]
struct FlatRecord {
    entries: Vec<(String, Value)>,
    repeated: Vec<String>,
}

impl FlatRecord {
    fn push(&mut self, key: String, value: Value) {
        if self.entries.iter().any(|(k, _)| *k == key) {
            if !self.repeated.contains(&key) {
                self.repeated.push(key);
            }
        } else {
            self.entries.push((key, value));
        }
    }
}

/// A JSON value read into a [`FlatRecord`] under a key prefix.
struct Flatten<'r> {
    prefix: String,
    record: &'r mut FlatRecord,
}

impl<'de> serde::de::DeserializeSeed<'de> for Flatten<'_> {
    type Value = ();
    fn deserialize<D: serde::Deserializer<'de>>(self, deserializer: D) -> Result<(), D::Error> {
        deserializer.deserialize_any(self)
    }
}

impl<'de> serde::de::Visitor<'de> for Flatten<'_> {
    type Value = ();

    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("a JSON value")
    }

    fn visit_map<A: serde::de::MapAccess<'de>>(self, mut map: A) -> Result<(), A::Error> {
        let mut empty = true;
        while let Some(key) = map.next_key::<String>()? {
            empty = false;
            let path = if self.prefix.is_empty() {
                key
            } else {
                format!("{}.{key}", self.prefix)
            };
            map.next_value_seed(Flatten {
                prefix: path,
                record: &mut *self.record,
            })?;
        }
        if empty && !self.prefix.is_empty() {
            self.record
                .push(self.prefix, Value::Object(Default::default()));
        }
        Ok(())
    }

    fn visit_seq<A: serde::de::SeqAccess<'de>>(self, mut seq: A) -> Result<(), A::Error> {
        let mut items = Vec::new();
        while let Some(item) = seq.next_element::<Value>()? {
            items.push(item);
        }
        self.record.push(self.prefix, Value::Array(items));
        Ok(())
    }

    fn visit_bool<E>(self, v: bool) -> Result<(), E> {
        self.record.push(self.prefix, Value::Bool(v));
        Ok(())
    }

    fn visit_i64<E>(self, v: i64) -> Result<(), E> {
        self.record.push(self.prefix, Value::from(v));
        Ok(())
    }

    fn visit_u64<E>(self, v: u64) -> Result<(), E> {
        self.record.push(self.prefix, Value::from(v));
        Ok(())
    }

    fn visit_f64<E>(self, v: f64) -> Result<(), E> {
        self.record.push(self.prefix, Value::from(v));
        Ok(())
    }

    fn visit_str<E>(self, v: &str) -> Result<(), E> {
        self.record.push(self.prefix, Value::String(v.to_string()));
        Ok(())
    }

    fn visit_string<E>(self, v: String) -> Result<(), E> {
        self.record.push(self.prefix, Value::String(v));
        Ok(())
    }

    fn visit_unit<E>(self) -> Result<(), E> {
        self.record.push(self.prefix, Value::Null);
        Ok(())
    }

    fn visit_none<E>(self) -> Result<(), E> {
        self.record.push(self.prefix, Value::Null);
        Ok(())
    }
}

/// A parsed JSON top level: one object (flattened), an array of items (objects
/// flattened, anything else kept to be reported), or another value.
enum JsonTop {
    Object(FlatRecord),
    Array(JsonTable),
    Other(&'static str),
}

/// JSON records gathered column by column as they are parsed: each record (a line,
/// or an element of an array, which is read one element at a time) is flattened,
/// moved into its columns and dropped, so memory holds the cells once rather than
/// a map of key strings per record (a 1 GB array took 8.8 GB as records).
#[derive(Default)]
struct JsonTable {
    names: Vec<String>,
    positions: std::collections::HashMap<String, usize>,
    /// One cell per record so far in every column (None: absent or not an object).
    columns: Vec<Vec<Option<Value>>>,
    rows: usize,
    /// Record numbers (from 1) that were not objects.
    not_objects: Vec<usize>,
    /// Keys written twice, with their record number.
    repeated: Vec<(usize, String)>,
}

impl JsonTable {
    /// Appends one record (None: it was not an object, or not JSON).
    fn push(&mut self, record: Option<FlatRecord>) {
        self.rows += 1;
        let Some(record) = record else {
            return;
        };
        for key in record.repeated {
            self.repeated.push((self.rows, key));
        }
        for (key, value) in record.entries {
            let at = match self.positions.get(&key) {
                Some(&at) => at,
                None => {
                    let at = self.names.len();
                    self.positions.insert(key.clone(), at);
                    self.names.push(key);
                    self.columns.push(Vec::new());
                    at
                }
            };
            let column = &mut self.columns[at];
            column.resize(self.rows - 1, None);
            column.push(Some(value));
        }
    }

    /// The columns, each with one cell per record.
    fn finish(mut self) -> Self {
        for column in &mut self.columns {
            column.resize(self.rows, None);
        }
        self
    }
}

struct TopVisitor;

impl<'de> serde::de::Visitor<'de> for TopVisitor {
    type Value = JsonTop;

    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("a JSON object or an array of objects")
    }

    fn visit_map<A: serde::de::MapAccess<'de>>(self, map: A) -> Result<JsonTop, A::Error> {
        let mut record = FlatRecord::default();
        serde::de::Visitor::visit_map(
            Flatten {
                prefix: String::new(),
                record: &mut record,
            },
            map,
        )?;
        Ok(JsonTop::Object(record))
    }

    fn visit_seq<A: serde::de::SeqAccess<'de>>(self, mut seq: A) -> Result<JsonTop, A::Error> {
        let mut table = JsonTable::default();
        while let Some(item) = seq.next_element_seed(ItemSeed)? {
            if item.is_none() {
                table.not_objects.push(table.rows + 1);
            }
            table.push(item);
        }
        Ok(JsonTop::Array(table.finish()))
    }

    fn visit_bool<E>(self, _: bool) -> Result<JsonTop, E> {
        Ok(JsonTop::Other("a boolean"))
    }
    fn visit_i64<E>(self, _: i64) -> Result<JsonTop, E> {
        Ok(JsonTop::Other("a number"))
    }
    fn visit_u64<E>(self, _: u64) -> Result<JsonTop, E> {
        Ok(JsonTop::Other("a number"))
    }
    fn visit_f64<E>(self, _: f64) -> Result<JsonTop, E> {
        Ok(JsonTop::Other("a number"))
    }
    fn visit_str<E>(self, _: &str) -> Result<JsonTop, E> {
        Ok(JsonTop::Other("a string"))
    }
    fn visit_unit<E>(self) -> Result<JsonTop, E> {
        Ok(JsonTop::Other("null"))
    }
}

/// An array item read straight into a flat record when it is an object (repeated
/// keys are caught at every level), otherwise skipped as a non-object.
struct ItemSeed;

impl<'de> serde::de::DeserializeSeed<'de> for ItemSeed {
    type Value = Option<FlatRecord>;
    fn deserialize<D: serde::Deserializer<'de>>(
        self,
        deserializer: D,
    ) -> Result<Self::Value, D::Error> {
        deserializer.deserialize_any(ItemVisitor)
    }
}

struct ItemVisitor;

impl<'de> serde::de::Visitor<'de> for ItemVisitor {
    type Value = Option<FlatRecord>;

    fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
        f.write_str("a JSON object")
    }

    fn visit_map<A: serde::de::MapAccess<'de>>(self, map: A) -> Result<Self::Value, A::Error> {
        let mut record = FlatRecord::default();
        serde::de::Visitor::visit_map(
            Flatten {
                prefix: String::new(),
                record: &mut record,
            },
            map,
        )?;
        Ok(Some(record))
    }

    fn visit_seq<A: serde::de::SeqAccess<'de>>(self, mut seq: A) -> Result<Self::Value, A::Error> {
        while seq.next_element::<serde::de::IgnoredAny>()?.is_some() {}
        Ok(None)
    }

    fn visit_bool<E>(self, _: bool) -> Result<Self::Value, E> {
        Ok(None)
    }
    fn visit_i64<E>(self, _: i64) -> Result<Self::Value, E> {
        Ok(None)
    }
    fn visit_u64<E>(self, _: u64) -> Result<Self::Value, E> {
        Ok(None)
    }
    fn visit_f64<E>(self, _: f64) -> Result<Self::Value, E> {
        Ok(None)
    }
    fn visit_str<E>(self, _: &str) -> Result<Self::Value, E> {
        Ok(None)
    }
    fn visit_unit<E>(self) -> Result<Self::Value, E> {
        Ok(None)
    }
}

/// Parses one JSON text into its top level.
fn parse_top(text: &[u8]) -> Result<JsonTop, serde_json::Error> {
    let mut deserializer = serde_json::Deserializer::from_slice(text);
    let top = serde::Deserializer::deserialize_any(&mut deserializer, TopVisitor)?;
    deserializer.end()?;
    Ok(top)
}

/// A parser error in words: its message without serde_json's position (gapcert names
/// the line itself), and advice for the usual cause: NaN or Infinity, which Python's
/// json module writes but JSON does not allow.
fn json_error_words(error: &serde_json::Error, text: &str) -> String {
    let message = error.to_string();
    let message = match message.rfind(" at line ") {
        Some(at) => message[..at].to_string(),
        None => message,
    };
    let mut words = format!("invalid JSON at column {}: {message}", error.column());
    if ["NaN", "Infinity", "-Infinity"]
        .iter()
        .any(|token| text.contains(token))
    {
        words.push_str(" (NaN and Infinity are not JSON: write null, or the number as text)");
    }
    words
}

fn read_json_lines(label: &str, bytes: &[u8]) -> Result<(DataFrame, Vec<Problem>), Vec<Problem>> {
    let text = std::str::from_utf8(bytes)
        .map_err(|_| vec![Problem::file(label, "the file is not valid UTF-8")])?;
    let mut table = JsonTable::default();
    let mut problems = Vec::new();
    let mut objects = 0usize;
    for line in text.lines() {
        if line.trim().is_empty() {
            continue;
        }
        let record_number = table.rows + 1;
        match parse_top(line.as_bytes()) {
            Ok(JsonTop::Object(record)) => {
                objects += 1;
                table.push(Some(record));
            }
            Ok(_) => {
                problems.push(Problem::row(
                    label,
                    record_number,
                    "the line is JSON but not an object (one run per line expected)",
                ));
                table.push(None);
            }
            Err(error) => {
                problems.push(Problem::row(
                    label,
                    record_number,
                    json_error_words(&error, line),
                ));
                table.push(None);
            }
        }
    }
    if table.rows == 0 {
        return Err(vec![Problem::file(label, "the file holds no JSON records")]);
    }
    // No record is an object: their own problems say why, and no column can be
    // looked for (it would only add "missing column" for every required one).
    if objects == 0 {
        return Err(problems);
    }
    let table = table.finish();
    for (record, key) in &table.repeated {
        problems.push(Problem::row(
            label,
            *record,
            format!("the key `{key}` is written twice in this record; keep one"),
        ));
    }
    problems.sort_by_key(|problem| problem.row);
    let df = records_to_frame(table);
    Ok((df, problems))
}

fn read_json_document(
    label: &str,
    bytes: &[u8],
) -> Result<(DataFrame, Vec<Problem>), Vec<Problem>> {
    let top = parse_top(bytes).map_err(|error| {
        // JSON lines saved as .json: the first object parses, then "trailing
        // characters" on the next line.
        let lines_hint = if error.line() > 1
            && error.to_string().starts_with("trailing characters")
            && std::str::from_utf8(bytes)
                .ok()
                .and_then(|text| text.lines().next())
                .is_some_and(|first| parse_top(first.as_bytes()).is_ok())
        {
            "; the file holds one JSON object per line (JSON lines): name it .jsonl or .ndjson"
        } else {
            ""
        };
        let text = std::str::from_utf8(bytes).unwrap_or("");
        let line_text = text
            .lines()
            .nth(error.line().saturating_sub(1))
            .unwrap_or("");
        vec![Problem::file(
            label,
            format!(
                "line {}: {}{lines_hint}",
                error.line(),
                json_error_words(&error, line_text)
            ),
        )]
    })?;
    let mut problems = Vec::new();
    let table = match top {
        JsonTop::Object(record) => {
            let mut table = JsonTable::default();
            table.push(Some(record));
            table.finish()
        }
        JsonTop::Array(table) => {
            for &record in &table.not_objects {
                problems.push(Problem::row(
                    label,
                    record,
                    "the array element is not an object (one run per element expected)",
                ));
            }
            table
        }
        JsonTop::Other(kind) => {
            return Err(vec![Problem::file(
                label,
                format!(
                    "the JSON document is {kind}, neither an object (one run) nor an array of runs"
                ),
            )])
        }
    };
    for (record, key) in &table.repeated {
        problems.push(Problem::row(
            label,
            *record,
            format!("the key `{key}` is written twice in this record; keep one"),
        ));
    }
    problems.sort_by_key(|problem| problem.row);
    if table.rows == 0 {
        return Err(vec![Problem::file(label, "the JSON array holds no runs")]);
    }
    let df = records_to_frame(table);
    Ok((df, problems))
}

/// Builds a DataFrame from JSON records gathered by column. A column whose values
/// are all numbers becomes numeric; a column with any string keeps every value as
/// text (numbers in their JSON spelling), so the column extractor sees exactly what
/// was written. Booleans, arrays and empty objects are kept as their JSON text: a
/// column gapcert reads then reports them as not numbers; other columns are not
/// gapcert's business (a sweep's `config.tags` may be anything).
///
/// Integers are read exactly: a column of integers that all fit in 64 bits is an
/// integer column. A column mixing other numbers with one a double cannot hold
/// exactly (an integer beyond 2^53, or a number too large for any integer type) is
/// kept as text too, so one 30-digit number is reported on its own cell (if the
/// column is gapcert's) instead of turning every count of the column into a double.
fn records_to_frame(table: JsonTable) -> DataFrame {
    /// Largest magnitude up to which a double holds every integer exactly.
    const EXACT_IN_DOUBLE: f64 = 9_007_199_254_740_992.0;
    let beyond_doubles = |value: &Value| match value {
        Value::Number(number) => match (number.as_i64(), number.as_u64(), number.as_f64()) {
            (Some(integer), _, _) => integer.unsigned_abs() > 1 << 53,
            (None, Some(_), _) => true,
            (None, None, Some(float)) => float.abs() >= EXACT_IN_DOUBLE,
            _ => false,
        },
        _ => false,
    };
    let rows = table.rows;
    let mut columns = Vec::with_capacity(table.names.len());
    for (name, values) in table.names.iter().zip(table.columns) {
        let any_text = values.iter().any(|v| {
            matches!(
                v,
                Some(Value::String(_) | Value::Bool(_) | Value::Array(_) | Value::Object(_))
            )
        });
        let all_integers = values
            .iter()
            .all(|v| !matches!(v, Some(Value::Number(n)) if n.as_i64().is_none()));
        let inexact = !all_integers && values.iter().flatten().any(beyond_doubles);
        let series = if any_text || inexact {
            let cells: Vec<Option<String>> = values
                .into_iter()
                .map(|value| match value {
                    None | Some(Value::Null) => None,
                    Some(Value::String(s)) => Some(s),
                    Some(other) => Some(other.to_string()),
                })
                .collect();
            Series::new(name.as_str().into(), cells)
        } else if all_integers {
            let cells: Vec<Option<i64>> = values
                .iter()
                .map(|v| v.as_ref().and_then(Value::as_i64))
                .collect();
            Series::new(name.as_str().into(), cells)
        } else {
            let cells: Vec<Option<f64>> = values
                .iter()
                .map(|v| v.as_ref().and_then(Value::as_f64))
                .collect();
            Series::new(name.as_str().into(), cells)
        };
        columns.push(Column::from(series));
    }
    DataFrame::new(rows, columns).unwrap_or_else(|_| DataFrame::empty_with_height(rows))
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
        let typed = read_delimited(
            "t",
            text.as_bytes(),
            b',',
            false,
            Some(&settings.column_map),
        );
        let plain = read_delimited("t", text.as_bytes(), b',', false, None);
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
