//! JSON and JSON lines, parsed with serde_json record by record and assembled into a
//! table here (nested objects flattened to dotted names).

use polars::prelude::*;
use serde_json::Value;

use crate::error::Problem;

/// One JSON record flattened: nested objects become dotted keys
/// (`{"metrics": {"val": {"acc": 0.93}}}` gives `metrics.val.acc`), in the order
/// written; keys written twice are collected, not silently resolved.
#[derive(Default)]
pub(crate) struct FlatRecord {
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
pub(crate) struct Flatten<'r> {
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
pub(crate) enum JsonTop {
    Object(FlatRecord),
    Array(JsonTable),
    Other(&'static str),
}

/// JSON records gathered column by column as they are parsed: each record (a line,
/// or an element of an array, which is read one element at a time) is flattened,
/// moved into its columns and dropped, so memory holds the cells once rather than
/// a map of key strings per record (a 1 GB array took 8.8 GB as records).
#[derive(Default)]
pub(crate) struct JsonTable {
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

pub(crate) struct TopVisitor;

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
pub(crate) struct ItemSeed;

impl<'de> serde::de::DeserializeSeed<'de> for ItemSeed {
    type Value = Option<FlatRecord>;
    fn deserialize<D: serde::Deserializer<'de>>(
        self,
        deserializer: D,
    ) -> Result<Self::Value, D::Error> {
        deserializer.deserialize_any(ItemVisitor)
    }
}

pub(crate) struct ItemVisitor;

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
pub(crate) fn parse_top(text: &[u8]) -> Result<JsonTop, serde_json::Error> {
    let mut deserializer = serde_json::Deserializer::from_slice(text);
    let top = serde::Deserializer::deserialize_any(&mut deserializer, TopVisitor)?;
    deserializer.end()?;
    Ok(top)
}

/// A parser error in words: its message without serde_json's position (gapcert names
/// the line itself), and advice for the usual cause: NaN or Infinity, which Python's
/// json module writes but JSON does not allow.
pub(crate) fn json_error_words(error: &serde_json::Error, text: &str) -> String {
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

pub(crate) fn read_json_lines(
    label: &str,
    bytes: &[u8],
) -> Result<(DataFrame, Vec<Problem>), Vec<Problem>> {
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

pub(crate) fn read_json_document(
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
pub(crate) fn records_to_frame(table: JsonTable) -> DataFrame {
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
