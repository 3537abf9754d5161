//! gapcert's own outputs found among logs, recognised by their shape.

use crate::ingest::discover::LogFormat;
use crate::report::own_outputs::{
    CERTIFICATE_FORMAT, CLAIM_COLUMNS, DOCUMENT_MEMBERS, EXPLANATION, FLAT_COLUMNS,
    OPTIONAL_DOCUMENT_MEMBERS,
};

use super::common::*;

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
        LogFormat::Parquet | LogFormat::Arrow => {
            crate::ingest::preflight::column_names(bytes, format)
        }
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
pub(crate) fn may_be_own_columns<S: AsRef<str>>(columns: &[S]) -> bool {
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
pub(crate) fn plain_flat_columns() -> impl Iterator<Item = &'static &'static str> {
    FLAT_COLUMNS.iter().filter(|name| **name != EXPLANATION)
}

/// Whether `columns` begin with every flat column of a runs report, written with or
/// without `--explain` (then any `--keep` columns).
pub(crate) fn runs_columns<S: AsRef<str>>(columns: &[S]) -> bool {
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
pub(crate) fn first_line(bytes: &[u8]) -> &[u8] {
    let end = bytes
        .iter()
        .position(|&b| b == b'\n')
        .unwrap_or(bytes.len());
    &bytes[..end]
}

/// The names in a header line as gapcert writes them (split at `separator`; its own
/// column names never need quotes).
pub(crate) fn header_names(line: &[u8], separator: u8) -> Option<Vec<String>> {
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
pub(crate) fn json_keys(line: &[u8]) -> Option<Vec<String>> {
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
pub(crate) fn document_kind(bytes: &[u8]) -> Option<&'static str> {
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
