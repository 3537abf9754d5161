//! Reports: views of one [`AuditDocument`]. Adding a format never changes the audit.

pub mod atomic;
pub mod charts;
pub mod document;
pub mod flat;
pub mod html;
pub mod markdown;
pub mod table;
pub mod text;

use std::io::{self, Write};

pub use atomic::write_atomically;
pub use document::{AuditDocument, DocumentSettings, ToolInfo, CAUTIONS};

/// The formats of `--format` for audit and demo.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum OutputFormat {
    Table,
    Json,
    Ndjson,
    Csv,
    Parquet,
    Markdown,
}

impl OutputFormat {
    /// Whether the format is binary (refused on a terminal without `--output`).
    pub fn is_binary(self) -> bool {
        matches!(self, OutputFormat::Parquet)
    }
}

/// Writes the document in `format`. `color` and `width` (the terminal's) matter only
/// to the table.
pub fn write_report(
    doc: &AuditDocument,
    format: OutputFormat,
    out: &mut dyn Write,
    color: bool,
    width: Option<u16>,
) -> io::Result<()> {
    match format {
        OutputFormat::Table => table::write_table(doc, out, color, width),
        OutputFormat::Json => {
            serde_json::to_writer_pretty(&mut *out, doc)?;
            out.write_all(b"\n")
        }
        OutputFormat::Ndjson => flat::write_ndjson(&doc.runs, out),
        OutputFormat::Csv => flat::write_csv(&doc.runs, out),
        OutputFormat::Parquet => flat::write_parquet(&doc.runs, out),
        OutputFormat::Markdown => markdown::write_markdown(doc, out),
    }
}
