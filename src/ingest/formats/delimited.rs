//! CSV and TSV: checked for shape (long lines, bytes that are not UTF-8, ragged rows)
//! before polars parses them, typed by polars with a text reading beside it.

use std::io::Cursor;

use polars::prelude::*;

use crate::error::Problem;

use super::common::*;

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
    pub fn of(settings: &crate::ingest::settings::IngestSettings) -> Delimited {
        Delimited {
            separator: settings.separator,
            decimal_comma: settings.decimal_comma,
        }
    }
}

/// Longest line of a CSV or TSV file gapcert reads (1 MiB). polars' line splitter
/// takes time quadratic in a line's length (a 64 MB line took 9 s, 2 GB never ended),
/// and no run log writes a megabyte per run.
pub const MAX_LINE_BYTES: usize = 1 << 20;

/// Most problems listed per file by the checks before parsing: one is enough to
/// refuse the file, a few show a pattern.
pub(crate) const MAX_SHAPE_PROBLEMS: usize = 20;

/// Problems found before a delimited file reaches polars: lines longer than
/// [`MAX_LINE_BYTES`] (by line number: the header is line 1, data row `n` is line
/// `n + 1` unless quoted cells span lines) and bytes that are not UTF-8 (by row and
/// column).
pub(crate) fn delimited_shape_problems(label: &str, bytes: &[u8], separator: u8) -> Vec<Problem> {
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
pub(crate) fn read_delimited(
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
pub(crate) fn ragged_rows(label: &str, bytes: &[u8], separator: u8) -> Vec<Problem> {
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
pub(crate) fn read_delimited_typed(
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
    let dtypes = crate::ingest::columns::delimited_dtypes(&names, column_map);
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
    let settings = crate::ingest::settings::IngestSettings::default();
    let read = |map: Option<&[(String, String)]>| match read_delimited(
        "t", bytes, separator, false, map,
    ) {
        Ok(df) => {
            let runs = crate::ingest::rows::table_runs("t", &df, 0, &settings, Vec::new());
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
pub(crate) fn read_with(
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
pub(crate) fn header_end(bytes: &[u8]) -> usize {
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
pub(crate) fn strip_carriage_returns(df: DataFrame) -> DataFrame {
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
