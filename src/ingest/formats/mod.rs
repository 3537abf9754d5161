//! Turning the bytes of one log file into a table of columns.
//!
//! CSV, TSV, Parquet and Arrow IPC are read by polars; their struct columns are
//! flattened into one column per field, named by its dotted path as nested JSON keys
//! are ([`flatten_structs`]). JSON and JSON lines are parsed with serde_json and
//! assembled into a polars DataFrame here: polars' JSON reader may turn a value of an
//! unexpected type into null, and a silently vanished value is what an audit must never
//! allow. Parsing ourselves also gives the exact record of a truncated or malformed
//! line.

mod common;
mod delimited;
mod json;
mod own;
mod table;

pub use common::{flatten_structs, install_panic_hook, polars_message, GUARDED_READERS};
pub use delimited::{typed_and_text_readings, Delimited, MAX_LINE_BYTES};
pub use own::own_report_kind;
pub use table::{open_parquet, problems_within, read_table, LogTable};
