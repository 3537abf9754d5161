//! Canonical column names, `--map` renames, and typed extraction of one column.
//!
//! Extraction turns any polars column (text, integer or float) into typed cells and
//! reports every cell that cannot be read, with its 1-based row.

use std::collections::HashMap;
use std::sync::LazyLock;

use polars::prelude::*;

use crate::error::Problem;
use crate::theory::growth::FAMILY_PARAMETERS;

/// The canonical columns before the family parameters.
const COLUMNS_BEFORE_PARAMETERS: [&str; 2] = ["run", "family"];
/// The canonical columns after the family parameters.
const COLUMNS_AFTER_PARAMETERS: [&str; 13] = [
    "train_n",
    "train_error_rate",
    "train_accuracy",
    "train_misclassified",
    "holdout_n",
    "holdout_error_rate",
    "holdout_accuracy",
    "holdout_misclassified",
    "holdout_set",
    "candidates",
    "claimed_accuracy",
    "claimed_error_rate",
    "logged_at",
];

/// The number of canonical columns.
pub const CANONICAL_COUNT: usize =
    COLUMNS_BEFORE_PARAMETERS.len() + FAMILY_PARAMETERS.len() + COLUMNS_AFTER_PARAMETERS.len();

/// Every canonical column gapcert reads (SPEC §3): the run and family, the family
/// parameters of `theory::growth` (so a family's new parameter is a column without
/// a change here), then the training, held-out, claim and time columns.
pub static CANONICAL_COLUMNS: LazyLock<[&'static str; CANONICAL_COUNT]> = LazyLock::new(|| {
    let mut columns = [""; CANONICAL_COUNT];
    for (slot, name) in COLUMNS_BEFORE_PARAMETERS
        .iter()
        .chain(FAMILY_PARAMETERS.iter())
        .chain(COLUMNS_AFTER_PARAMETERS.iter())
        .enumerate()
    {
        columns[slot] = name;
    }
    columns
});

/// The position of the first family parameter among [`CANONICAL_COLUMNS`].
pub const FIRST_PARAMETER_SLOT: usize = COLUMNS_BEFORE_PARAMETERS.len();
/// The position of the first column after the family parameters.
pub const FIRST_SLOT_AFTER_PARAMETERS: usize = FIRST_PARAMETER_SLOT + FAMILY_PARAMETERS.len();

/// Which column of a file holds each canonical field: canonical name → column index;
/// and what binding them found: columns that claim one field together (an input
/// error) and renames that did not apply to this file (said under `-v`).
#[derive(Debug, Default)]
pub struct ColumnBinding {
    pub index: HashMap<&'static str, usize>,
    /// Two or more columns that would all hold one canonical field.
    pub ambiguities: Vec<String>,
    /// Renames that do not apply to this file, and what was read instead.
    pub notes: Vec<String>,
}

/// Validates renames: the canonical side must be a known column, the log side not
/// empty, and no canonical column renamed twice to different columns (`source` names
/// where the renames came from, for the message).
pub fn check_column_map(pairs: &[(String, String)]) -> Result<(), String> {
    for (index, (canonical, theirs)) in pairs.iter().enumerate() {
        if !CANONICAL_COLUMNS.contains(&canonical.to_ascii_lowercase().as_str()) {
            let hint = closest_canonical(canonical)
                .map(|known| format!(" (did you mean `{known}`?)"))
                .unwrap_or_default();
            return Err(format!(
                "--map {canonical}={theirs}: `{canonical}` is not a gapcert column{hint}; known columns: {}",
                CANONICAL_COLUMNS.join(", ")
            ));
        }
        if theirs.trim().is_empty() {
            return Err(format!("--map {canonical}=: the log column name is empty"));
        }
        if let Some((_, other)) = pairs[..index]
            .iter()
            .find(|(c, t)| c == canonical && !t.trim().eq_ignore_ascii_case(theirs.trim()))
        {
            return Err(format!(
                "`{canonical}` is mapped twice, to `{other}` and to `{theirs}`: say which column holds it (one --map per column, and the same in --map and --map-file)"
            ));
        }
    }
    Ok(())
}

/// The canonical column closest to an unknown name (two edits at most), for hints.
fn closest_canonical(name: &str) -> Option<&'static str> {
    let name = name.to_ascii_lowercase();
    CANONICAL_COLUMNS
        .iter()
        .map(|&known| (crate::suggest::edit_distance(&name, known), known))
        .filter(|&(distance, _)| distance <= 2 && distance < name.len())
        .min_by_key(|&(distance, _)| distance)
        .map(|(_, known)| known)
}

/// Parses `canonical=theirs`.
pub fn parse_map_pair(text: &str) -> Result<(String, String), String> {
    match text.split_once('=') {
        Some((canonical, theirs)) if !canonical.trim().is_empty() => Ok((
            canonical.trim().to_ascii_lowercase(),
            theirs.trim().to_string(),
        )),
        _ => Err(format!(
            "--map {text}: expected canonical=theirs, for example holdout_error_rate=val_err"
        )),
    }
}

/// Parses a `--map-file`: a JSON object of canonical → their column name, and
/// optionally `"files"`, a list of sections that apply to the files a pattern
/// matches, each with its own renames and `--percent` setting:
///
/// ```json
/// {"holdout_n": "n_val",
///  "files": [{"match": "*notebooks*", "map": {"holdout_accuracy": "val_acc"}, "percent": true}]}
/// ```
///
/// A key written twice is an error (JSON readers keep one of them silently).
pub fn parse_map_file(label: &str, text: &str) -> Result<MapFile, String> {
    let entries = parse_object_unique(text).map_err(|error| format!("{label}: {error}"))?;
    let mut pairs = Vec::with_capacity(entries.len());
    let mut sections = Vec::new();
    for (canonical, theirs) in entries {
        match (canonical.as_str(), theirs) {
            ("files", serde_json::Value::Array(items)) => {
                for (index, item) in items.into_iter().enumerate() {
                    sections.push(parse_section(label, index + 1, item)?);
                }
            }
            ("files", other) => {
                return Err(format!(
                    "{label}: `files` must be a list of sections such as {{\"match\": \"*notebooks*\", \"map\": {{...}}, \"percent\": true}}, not {other}"
                ))
            }
            (_, serde_json::Value::String(theirs)) => {
                pairs.push((canonical.trim().to_ascii_lowercase(), theirs))
            }
            (_, other) => {
                return Err(format!(
                    "{label}: the value for `{canonical}` must be a column name (text), not {other}"
                ))
            }
        }
    }
    Ok((pairs, sections))
}

/// A map file: its renames for every file, and its sections.
pub type MapFile = (Vec<(String, String)>, Vec<MapSection>);

/// The renames and the scale of the files a pattern matches (`files` of a map file).
#[derive(Clone, Debug, Default, PartialEq, serde::Serialize, serde::Deserialize)]
pub struct MapSection {
    /// Matched against the file's path as found (`*` any characters, `/` included;
    /// `?` one), and against its name alone.
    #[serde(rename = "match")]
    pub pattern: String,
    pub map: Vec<(String, String)>,
    /// Rates and claims of these files are percentages (true) or fractions (false);
    /// None keeps `--percent`.
    pub percent: Option<bool>,
}

impl MapSection {
    /// Whether the section applies to the file `label`.
    pub fn applies_to(&self, label: &str) -> bool {
        let name = std::path::Path::new(label)
            .file_name()
            .and_then(|n| n.to_str())
            .unwrap_or(label);
        crate::claim::matches_pattern(&self.pattern, label)
            || crate::claim::matches_pattern(&self.pattern, name)
    }
}

fn parse_section(
    label: &str,
    number: usize,
    item: serde_json::Value,
) -> Result<MapSection, String> {
    let where_ = format!("{label}: section {number} of `files`");
    let serde_json::Value::Object(fields) = item else {
        return Err(format!("{where_} must be an object with `match` and `map`"));
    };
    let mut section = MapSection::default();
    for (key, value) in fields {
        match (key.as_str(), value) {
            ("match", serde_json::Value::String(pattern)) => section.pattern = pattern,
            ("percent", serde_json::Value::Bool(percent)) => section.percent = Some(percent),
            ("map", serde_json::Value::Object(map)) => {
                for (canonical, theirs) in map {
                    match theirs {
                        serde_json::Value::String(theirs) => section
                            .map
                            .push((canonical.trim().to_ascii_lowercase(), theirs)),
                        other => {
                            return Err(format!(
                                "{where_}: the value for `{canonical}` must be a column name (text), not {other}"
                            ))
                        }
                    }
                }
            }
            (key, value) => {
                return Err(format!(
                    "{where_}: `{key}` = {value} is not understood (a section has `match` (text), `map` (an object) and `percent` (true or false))"
                ))
            }
        }
    }
    if section.pattern.is_empty() {
        return Err(format!("{where_} has no `match` pattern"));
    }
    check_column_map(&section.map).map_err(|error| format!("{where_}: {error}"))?;
    Ok(section)
}

/// A JSON object's entries in the order written; a key written twice is an error.
pub fn parse_object_unique(text: &str) -> Result<Vec<(String, serde_json::Value)>, String> {
    struct Entries(Vec<(String, serde_json::Value)>);
    impl<'de> serde::Deserialize<'de> for Entries {
        fn deserialize<D: serde::Deserializer<'de>>(deserializer: D) -> Result<Self, D::Error> {
            struct Visit;
            impl<'de> serde::de::Visitor<'de> for Visit {
                type Value = Entries;
                fn expecting(&self, f: &mut std::fmt::Formatter) -> std::fmt::Result {
                    f.write_str("a JSON object such as {\"holdout_n\": \"n_val\"}")
                }
                fn visit_map<A: serde::de::MapAccess<'de>>(
                    self,
                    mut map: A,
                ) -> Result<Entries, A::Error> {
                    let mut entries: Vec<(String, serde_json::Value)> = Vec::new();
                    while let Some((key, value)) = map.next_entry::<String, serde_json::Value>()? {
                        if entries.iter().any(|(seen, _)| *seen == key) {
                            return Err(serde::de::Error::custom(format!(
                                "the key `{key}` is written twice"
                            )));
                        }
                        entries.push((key, value));
                    }
                    Ok(Entries(entries))
                }
            }
            deserializer.deserialize_map(Visit)
        }
    }
    serde_json::from_str::<Entries>(text)
        .map(|entries| entries.0)
        .map_err(|error| format!("invalid map file ({error})"))
}

/// Binds canonical fields to the file's columns, case-insensitively, after renames.
pub fn bind_columns(df: &DataFrame, column_map: &[(String, String)]) -> ColumnBinding {
    let names: Vec<&str> = df.get_column_names().iter().map(|n| n.as_str()).collect();
    bind_names(&names, column_map)
}

/// [`bind_columns`] for a header given as names.
///
/// A rename applies to a file only where its column exists: a file without the
/// mapped column reads the canonical one if it has it (a mixed folder: a notebook
/// export with its own names beside logs with the canonical ones), and says so in
/// `notes`. Two columns that would hold one field (`holdout_n` and `HOLDOUT_N`, or a
/// mapped column and the canonical one both present) are an ambiguity, never settled
/// silently.
pub fn bind_names(header: &[&str], column_map: &[(String, String)]) -> ColumnBinding {
    let names: Vec<String> = header
        .iter()
        .map(|name| name.trim().to_ascii_lowercase())
        .collect();
    let matching = |wanted: &str| -> Vec<usize> {
        names
            .iter()
            .enumerate()
            .filter(|(_, name)| *name == wanted)
            .map(|(index, _)| index)
            .collect()
    };
    let quoted = |indices: &[usize]| -> String {
        indices
            .iter()
            .map(|&i| format!("`{}`", header[i].trim()))
            .collect::<Vec<_>>()
            .join(" and ")
    };
    let mut binding = ColumnBinding::default();
    for &canonical in CANONICAL_COLUMNS.iter() {
        let mapped = column_map
            .iter()
            .find(|(c, _)| c == canonical)
            .map(|(_, theirs)| theirs.trim().to_ascii_lowercase())
            .filter(|theirs| theirs != canonical);
        let own = matching(canonical);
        let chosen = match mapped {
            Some(theirs) => {
                let renamed = matching(&theirs);
                match (renamed.len(), own.len()) {
                    (0, 0) => None,
                    (0, 1) => {
                        binding.notes.push(format!(
                            "{canonical} read from its own column `{}` (the mapped column `{theirs}` is not in this file)",
                            header[own[0]].trim()
                        ));
                        Some(own[0])
                    }
                    (1, 0) => Some(renamed[0]),
                    (_, 0) => {
                        binding.ambiguities.push(format!(
                            "the columns {} both match `{theirs}`, mapped to {canonical}: rename one",
                            quoted(&renamed)
                        ));
                        None
                    }
                    _ => {
                        let mut both = renamed.clone();
                        both.extend(&own);
                        binding.ambiguities.push(format!(
                            "{canonical} could be read from {} (`{theirs}` is mapped to it, and the file has {canonical} itself): drop or rename one, or map another name",
                            quoted(&both)
                        ));
                        None
                    }
                }
            }
            None => match own.len() {
                0 => None,
                1 => Some(own[0]),
                _ => {
                    binding.ambiguities.push(format!(
                        "the columns {} {} match {canonical} (names are matched ignoring case): rename all but one",
                        quoted(&own),
                        if own.len() == 2 { "both" } else { "all" }
                    ));
                    None
                }
            },
        };
        if let Some(index) = chosen {
            binding.index.insert(canonical, index);
        }
    }
    binding
}

/// Why a mapped name is not a column of a file, for the missing-column message: it
/// names a nested object (its fields are the columns), or it is absent, with the
/// file's columns and the closest of them.
pub fn missing_mapped_hint(theirs: &str, header: &[&str]) -> String {
    let wanted = theirs.trim().to_ascii_lowercase();
    let prefix = format!("{wanted}.");
    let inside: Vec<&str> = header
        .iter()
        .filter(|name| name.trim().to_ascii_lowercase().starts_with(&prefix))
        .copied()
        .collect();
    if !inside.is_empty() {
        let shown: Vec<&str> = inside.iter().take(6).copied().collect();
        return format!(
            "`{theirs}` is an object in this file, with the fields {}{}: map one of them",
            shown.join(", "),
            if inside.len() > shown.len() {
                ", …"
            } else {
                ""
            }
        );
    }
    let closest = header
        .iter()
        .map(|name| {
            (
                crate::suggest::edit_distance(&wanted, &name.trim().to_ascii_lowercase()),
                *name,
            )
        })
        .filter(|&(distance, _)| distance <= 2)
        .min_by_key(|&(distance, _)| distance)
        .map(|(_, name)| format!("; did you mean `{name}`?"))
        .unwrap_or_default();
    let shown: Vec<&str> = header.iter().take(30).copied().collect();
    format!(
        "this file has no column `{theirs}`{closest} (its columns: {}{})",
        shown.join(", "),
        if header.len() > shown.len() {
            ", …"
        } else {
            ""
        }
    )
}

/// How gapcert reads a canonical column's cells.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum CellKind {
    Float,
    Integer,
    Text,
}

pub fn cell_kind(canonical: &str) -> CellKind {
    match canonical {
        "run" | "family" | "holdout_set" | "logged_at" => CellKind::Text,
        "train_error_rate" | "train_accuracy" | "holdout_error_rate" | "holdout_accuracy"
        | "claimed_accuracy" | "claimed_error_rate" => CellKind::Float,
        _ => CellKind::Integer,
    }
}

/// The type to parse each column of a delimited file's header as: Float64 or Int64
/// for a column bound to a numeric field, text for every other column (and for a
/// column bound to fields of different kinds).
pub fn delimited_dtypes(header: &[&str], column_map: &[(String, String)]) -> Vec<DataType> {
    let binding = bind_names(header, column_map);
    let mut kinds: Vec<Option<CellKind>> = vec![None; header.len()];
    let mut mixed = vec![false; header.len()];
    for (&canonical, &index) in &binding.index {
        let kind = cell_kind(canonical);
        match kinds[index] {
            Some(seen) if seen != kind => mixed[index] = true,
            _ => kinds[index] = Some(kind),
        }
    }
    kinds
        .iter()
        .zip(&mixed)
        .map(|(kind, &mixed)| match kind {
            Some(CellKind::Float) if !mixed => DataType::Float64,
            Some(CellKind::Integer) if !mixed => DataType::Int64,
            _ => DataType::String,
        })
        .collect()
}

/// The display name of a bound column (as written in the file).
pub fn column_name(df: &DataFrame, index: usize) -> String {
    df.columns()[index].name().to_string()
}

/// A numeric column's cells; `None` for an empty or unreadable cell (unreadable ones
/// are reported).
pub fn extract_f64(
    label: &str,
    df: &DataFrame,
    index: usize,
    decimal_comma: bool,
    problems: &mut Vec<Problem>,
) -> Vec<Option<f64>> {
    let column = &df.columns()[index];
    let name = column.name().to_string();
    let series = column.as_materialized_series();
    match series.dtype() {
        DataType::String => {
            let text = series.str().expect("dtype checked");
            text.iter()
                .enumerate()
                .map(|(row, cell)| match cell.map(str::trim) {
                    None | Some("") => None,
                    Some(value) => {
                        let parsed = if decimal_comma {
                            parse_float(&value.replacen(',', ".", 1))
                        } else {
                            parse_float(value)
                        };
                        match parsed {
                            Some(number) => Some(number),
                            None => {
                                problems.push(Problem::cell(
                                    label,
                                    row + 1,
                                    &name,
                                    not_a_number(&name, value),
                                ));
                                None
                            }
                        }
                    }
                })
                .collect()
        }
        dtype if dtype.is_primitive_numeric() => match series.cast(&DataType::Float64) {
            Ok(cast) => cells_of(cast.f64().expect("cast to f64")),
            Err(_) => unreadable_column(label, &name, series, problems),
        },
        _ => unreadable_column(label, &name, series, problems),
    }
}

/// The cells of a numeric column, chunk by chunk: a chunk without nulls is copied
/// from its values directly (this runs for every numeric column of every batch).
fn cells_of<T: PolarsNumericType>(column: &ChunkedArray<T>) -> Vec<Option<T::Native>> {
    let mut cells = Vec::with_capacity(column.len());
    for chunk in column.downcast_iter() {
        if chunk
            .validity()
            .map_or(true, |valid| valid.unset_bits() == 0)
        {
            cells.extend(chunk.values().iter().map(|&value| Some(value)));
        } else {
            cells.extend(chunk.iter().map(|value| value.copied()));
        }
    }
    cells
}

/// An integer column's cells. Integral floats (`1000.0`) are accepted; fractions are
/// reported.
pub fn extract_i64(
    label: &str,
    df: &DataFrame,
    index: usize,
    problems: &mut Vec<Problem>,
) -> Vec<Option<i64>> {
    let column = &df.columns()[index];
    let name = column.name().to_string();
    let series = column.as_materialized_series();
    let integral = |row: usize, value: f64, text: &str, problems: &mut Vec<Problem>| {
        if value.is_finite() && value.fract() == 0.0 && value.abs() < 9.2e18 {
            Some(value as i64)
        } else {
            let why = if value.is_finite() && value.abs() >= 9.2e18 {
                "is too large (counts go up to 9223372036854775807)"
            } else {
                "is not a whole number"
            };
            problems.push(Problem::cell(
                label,
                row + 1,
                &name,
                format!("{name} = {text} {why}"),
            ));
            None
        }
    };
    match series.dtype() {
        DataType::String => {
            let text = series.str().expect("dtype checked");
            text.iter()
                .enumerate()
                .map(|(row, cell)| match cell.map(str::trim) {
                    None | Some("") => None,
                    Some(value) => {
                        if let Ok(number) = value.parse::<i64>() {
                            Some(number)
                        } else if let Some(number) = parse_float(value) {
                            integral(row, number, value, problems)
                        } else {
                            problems.push(Problem::cell(
                                label,
                                row + 1,
                                &name,
                                format!("{name} = {value:?} is not a whole number"),
                            ));
                            None
                        }
                    }
                })
                .collect()
        }
        dtype if dtype.is_integer() => match series.cast(&DataType::Int64) {
            Ok(cast) => {
                let cells = cells_of(cast.i64().expect("cast to i64"));
                // A u64 above i64::MAX casts to null; report it rather than lose it.
                // (Every other integer type fits: no new nulls to look for.)
                if *series.dtype() != DataType::UInt64 {
                    return cells;
                }
                let original_nulls = series.is_null();
                for (row, cell) in cells.iter().enumerate() {
                    if cell.is_none() && !original_nulls.get(row).unwrap_or(true) {
                        problems.push(Problem::cell(
                            label,
                            row + 1,
                            &name,
                            format!("{name} is larger than 9223372036854775807"),
                        ));
                    }
                }
                cells
            }
            Err(_) => unreadable_column(label, &name, series, problems),
        },
        dtype if dtype.is_float() => {
            let cast = series.cast(&DataType::Float64).expect("float to f64");
            cast.f64()
                .expect("cast to f64")
                .iter()
                .enumerate()
                .map(|(row, cell)| cell.and_then(|v| integral(row, v, &v.to_string(), problems)))
                .collect()
        }
        _ => unreadable_column(label, &name, series, problems),
    }
}

/// A text column as a polars string Series (numbers and timestamps rendered as text),
/// so its cells can be borrowed rather than copied.
pub fn text_series(df: &DataFrame, index: usize) -> Option<Series> {
    let series = df.columns()[index].as_materialized_series();
    match series.dtype() {
        DataType::String => Some(series.clone()),
        // Cell by cell: polars' cast validates a binary column's UTF-8 as a whole and
        // nulls every cell if one is invalid, so a table would read differently whole
        // and in batches (found by fuzzing ingest_arrow, see fuzz/regressions/). Bytes
        // that are not UTF-8 are kept, with U+FFFD in place of the invalid ones.
        DataType::Binary => {
            let cells: Vec<Option<String>> = series
                .binary()
                .ok()?
                .iter()
                .map(|cell| cell.map(|bytes| String::from_utf8_lossy(bytes).into_owned()))
                .collect();
            Some(Series::new(series.name().clone(), cells))
        }
        _ => series.cast(&DataType::String).ok(),
    }
}

/// The cells of a text Series from [`text_series`], trimmed; empty cells are `None`.
pub fn text_cells(series: &Series) -> Vec<Option<&str>> {
    match series.str() {
        Ok(text) => text
            .iter()
            .map(|cell| cell.map(str::trim).filter(|c| !c.is_empty()))
            .collect(),
        Err(_) => vec![None; series.len()],
    }
}

fn unreadable_column<T>(
    label: &str,
    name: &str,
    series: &Series,
    problems: &mut Vec<Problem>,
) -> Vec<Option<T>> {
    problems.push(Problem {
        file: label.to_string(),
        row: None,
        column: Some(name.to_string()),
        message: format!(
            "column {name} has type {} where numbers were expected",
            series.dtype()
        ),
        in_claims_file: false,
    });
    (0..series.len()).map(|_| None).collect()
}

/// Parses a decimal number as written in logs. Accepts `nan`/`inf` spellings so the
/// validator can name them, rather than calling them "not a number".
pub fn parse_float(text: &str) -> Option<f64> {
    text.parse::<f64>().ok()
}

/// The problem text for a cell that does not parse as a number; a trailing percent
/// sign on a number gets advice, since logs often write "97%".
fn not_a_number(name: &str, value: &str) -> String {
    let percent_sign = value
        .strip_suffix('%')
        .is_some_and(|number| parse_float(number.trim()).is_some());
    if percent_sign {
        format!(
            "{name} = {value:?} is not a number: write the rate as a fraction (without %), or the percentage without % and pass --percent"
        )
    } else if value.starts_with('[') || value.starts_with('{') {
        format!("{name} holds a JSON list or object ({value}) where a number was expected")
    } else if value.matches(',').count() == 1 && parse_float(&value.replacen(',', ".", 1)).is_some()
    {
        format!("{name} = {value:?} is not a number: it looks written with a decimal comma; pass --decimal-comma")
    } else {
        format!("{name} = {value:?} is not a number")
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The chunk-by-chunk copy equals polars' own cell iterator on chunks with and
    /// without nulls (including one built from options that are all present).
    #[test]
    fn numeric_cells_match_polars_iteration() {
        let mut floats = Float64Chunked::from_slice(PlSmallStr::from("x"), &[1.5, -2.0, 3.25]);
        floats
            .append(&Float64Chunked::from_slice_options(
                PlSmallStr::from("x"),
                &[None, Some(4.0), None, Some(f64::NAN)],
            ))
            .expect("appended");
        floats
            .append(&Float64Chunked::from_slice_options(
                PlSmallStr::from("x"),
                &[Some(5.0), Some(6.0)],
            ))
            .expect("appended");
        assert!(floats.chunks().len() >= 2);
        let expected: Vec<Option<f64>> = floats.iter().collect();
        let got = cells_of(&floats);
        assert_eq!(got.len(), expected.len());
        assert!(got
            .iter()
            .zip(&expected)
            .all(|(g, e)| g.map(f64::to_bits) == e.map(f64::to_bits)));

        let mut integers =
            Int64Chunked::from_slice_options(PlSmallStr::from("n"), &[Some(7), None]);
        integers
            .append(&Int64Chunked::from_slice(
                PlSmallStr::from("n"),
                &[i64::MIN, 0, i64::MAX],
            ))
            .expect("appended");
        assert_eq!(cells_of(&integers), integers.iter().collect::<Vec<_>>());
    }
}
