//! Reports: views of one [`AuditDocument`], and of the calculators' and `verify`'s
//! results. Adding a format never changes the audit.

pub mod atomic;
pub mod calculators;
pub mod charts;
pub mod claims;
pub mod document;
pub mod escape;
pub mod flat;
pub mod format;
pub mod html;
pub mod junit;
pub mod markdown;
pub mod own_outputs;
pub mod splits;
pub mod table;
pub mod text;

use std::io::{self, Write};

use serde::Serialize;

pub use atomic::{remove_temporaries, write_atomically};
pub use document::{AuditDocument, DocumentSettings, ToolInfo, CAUTIONS};
pub use format::OutputFormat;
pub use text::Presentation;

/// Writes the document in `format`. `presentation` matters only to the
/// human-readable formats (table, Markdown): which runs they show, and the table's
/// colours and width.
pub fn write_report(
    doc: &AuditDocument,
    format: OutputFormat,
    out: &mut dyn Write,
    presentation: &Presentation,
) -> io::Result<()> {
    match format {
        OutputFormat::Table => table::write_table(doc, out, presentation),
        OutputFormat::Json => write_json(doc, out),
        OutputFormat::Ndjson => flat::write_ndjson(&doc.runs, presentation.explain, out),
        OutputFormat::Csv => flat::write_csv(&doc.runs, presentation.explain, out),
        OutputFormat::Parquet => flat::write_parquet(&doc.runs, presentation.explain, out),
        OutputFormat::Markdown => markdown::write_markdown(doc, out, presentation),
        OutputFormat::Junit => junit::write_junit(doc, out),
    }
}

/// A result other than an audit (a calculator's, `verify`'s): JSON is the value
/// serialised, text is [`View::write_text`].
pub trait View: Serialize {
    /// The human-readable form (`--format table`), fitted to `width` columns when
    /// given.
    fn write_text(&self, out: &mut dyn Write, width: Option<u16>) -> io::Result<()>;
}

/// Writes `view` in `format` (table or JSON; the per-run formats have no rows here).
pub fn write_view<V: View>(
    view: &V,
    format: OutputFormat,
    out: &mut dyn Write,
    width: Option<u16>,
) -> io::Result<()> {
    match format {
        OutputFormat::Table => view.write_text(out, width),
        // Through a JSON value, whose objects list their keys in alphabetical order:
        // the calculators' documents have always been written so.
        OutputFormat::Json => {
            let value = serde_json::to_value(view).map_err(io::Error::other)?;
            write_json(&value, out)
        }
        other => Err(io::Error::new(
            io::ErrorKind::Unsupported,
            format!("--format {} is for audits only", other.name()),
        )),
    }
}

/// Pretty JSON with a final line break.
fn write_json<T: Serialize + ?Sized>(value: &T, out: &mut dyn Write) -> io::Result<()> {
    serde_json::to_writer_pretty(&mut *out, value)?;
    out.write_all(b"\n")
}
