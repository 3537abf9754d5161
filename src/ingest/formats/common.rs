//! What every reader shares: the byte-order mark, the guard that turns a reader's
//! panic into an input problem, polars' error wording, and struct columns flattened
//! to dotted names.

use std::panic::{catch_unwind, AssertUnwindSafe};
use std::sync::atomic::{AtomicUsize, Ordering};

use polars::prelude::*;

use crate::error::Problem;

pub(crate) const UTF8_BOM: &[u8] = &[0xEF, 0xBB, 0xBF];

pub(crate) fn strip_bom(bytes: &[u8]) -> &[u8] {
    bytes.strip_prefix(UTF8_BOM).unwrap_or(bytes)
}

/// Readers running under [`guarded`] right now; the binary's panic hook stays silent
/// while this is non-zero, since such a panic is reported as an input problem.
pub static GUARDED_READERS: AtomicUsize = AtomicUsize::new(0);

/// Runs a polars reader, turning both its errors and its panics into a problem with
/// the file. Fuzzing found malformed Parquet that trips an assertion inside polars
/// (fuzz/regressions/ingest_parquet-bitmap-offset); a bad input file must be reported,
/// never crash the audit.
pub(crate) fn guarded<T, F>(label: &str, kind: &str, read: F) -> Result<T, Vec<Problem>>
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
