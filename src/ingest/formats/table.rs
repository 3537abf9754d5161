//! One log file as a table: read whole (CSV, TSV, JSON, Arrow) or by Parquet row
//! group, and sliced into batches.

use std::borrow::Cow;
use std::io::Cursor;

use polars::prelude::*;

use crate::error::Problem;
use crate::ingest::discover::LogFormat;

use super::common::*;
use super::delimited::*;
use super::json::*;

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
    crate::ingest::preflight::check(label, bytes, format)?;
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
    crate::ingest::preflight::check(label, &bytes, LogFormat::Parquet)?;
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
