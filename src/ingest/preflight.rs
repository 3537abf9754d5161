//! Checks of the sizes a Parquet or Arrow IPC file declares, made before polars reads it.
//!
//! polars trusts the sizes written in a file's metadata and reserves memory for them
//! before it decodes anything. Fuzzing found an Arrow IPC record batch declaring a buffer
//! of about 2 TB and a Parquet data page declaring a negative value count (taken as about
//! 2^64); the allocation fails, and a failed allocation aborts the process, which no
//! `catch_unwind` can stop. So the metadata is read here first, with the same parsers
//! polars uses (polars-parquet-format's Thrift structures, polars-arrow-format's
//! flatbuffers, both already compiled for polars), and a file is refused with a clear
//! message when a declared extent leaves the file or a declared count exceeds the limits
//! below. Whatever is not recognisably Parquet or Arrow IPC (wrong magic bytes) is left
//! to polars, which reports it as before.

use polars_arrow_format::ipc::planus::ReadAsRoot;
use polars_arrow_format::ipc::{FooterRef, MessageHeaderRef, MessageRef, RecordBatchRef, TypeRef};
use polars_parquet_format::thrift::protocol::TCompactInputProtocol;
use polars_parquet_format::thrift::Error as ThriftError;
use polars_parquet_format::{
    ConvertedType, FieldRepetitionType, FileMetaData, LogicalType, PageHeader, PageType,
    SchemaElement,
};

use super::discover::LogFormat;
use crate::error::Problem;

/// Most rows in one Parquet row group or Arrow record batch, and so in one column chunk
/// or page. polars reserves memory for a chunk's or page's declared value count before
/// decoding it (8 bytes a value for 64-bit columns: at most 800 MB here). A run log holds
/// one row per training run: the benchmark log of 10 million runs (README "Performance")
/// is one tenth of this, and writers cut row groups far smaller (polars: 262,144 rows;
/// pyarrow: 1,048,576, formerly 64 Mi).
pub(super) const MAX_BATCH_ROWS: u64 = 100_000_000;

/// Most rows in one file: polars' row indices are 32-bit in this build, so no frame
/// holds more.
pub(super) const MAX_FILE_ROWS: u64 = u32::MAX as u64;

/// Largest uncompressed Parquet page accepted: writers cut pages at about 1 MiB (polars,
/// pyarrow, parquet-mr), and polars allocates the declared size to decompress into.
const MAX_PAGE_BYTES: u64 = 1 << 30;

/// Largest decompressed Arrow IPC buffer accepted: compressed buffers start with their
/// decompressed length, which polars allocates. 4 GiB of one column in one record batch
/// is beyond any run log (a 10-million-row batch of 400-byte notes).
const MAX_DECOMPRESSED_BYTES: u64 = 1 << 32;

/// Checks the declared sizes of a Parquet or Arrow IPC file; other formats pass.
pub(super) fn check(label: &str, bytes: &[u8], format: LogFormat) -> Result<(), Vec<Problem>> {
    let (kind, outcome) = match format {
        LogFormat::Parquet => (
            "Parquet",
            parquet(bytes).and_then(|()| parquet_decimals(bytes)),
        ),
        LogFormat::Arrow => (
            "Arrow IPC",
            arrow_ipc(bytes).and_then(|()| arrow_decimals(bytes)),
        ),
        _ => return Ok(()),
    };
    outcome.map_err(|message| {
        vec![Problem::file(
            label,
            format!("cannot read as {kind}: {message}"),
        )]
    })
}

/// The names of the top-level columns a Parquet or Arrow IPC file declares, read from
/// its footer with the same bounded decoders as the checks here (nothing is reserved
/// for a declared size); None when the file has no footer that decodes.
pub(super) fn column_names(bytes: &[u8], format: LogFormat) -> Option<Vec<String>> {
    match format {
        LogFormat::Parquet => parquet_column_names(bytes),
        LogFormat::Arrow => arrow_column_names(bytes),
        _ => None,
    }
}

/// The Thrift decoder's allocation budget for metadata of `len` bytes: every list element
/// and string byte it allocates is charged against it, and a valid encoding spends at
/// least one byte of input per element, so this never refuses valid metadata.
fn thrift_budget(len: usize) -> usize {
    len.saturating_mul(16).saturating_add(1 << 16)
}

// ---------------------------------------------------------------------------------------
// Parquet

const PARQUET_MAGIC: &[u8] = b"PAR1";

fn parquet(bytes: &[u8]) -> Result<(), String> {
    let size = bytes.len();
    if size < 12 || !bytes.ends_with(PARQUET_MAGIC) {
        return Ok(());
    }
    let footer_len = u32::from_le_bytes(le4(&bytes[size - 8..size - 4])) as usize;
    let data_end = (size - 8)
        .checked_sub(footer_len)
        .filter(|&start| start >= PARQUET_MAGIC.len())
        .ok_or_else(|| {
            format!(
                "the footer declares {footer_len} bytes of metadata but the file has {size} bytes"
            )
        })?;
    let mut footer = &bytes[data_end..size - 8];
    let mut protocol = TCompactInputProtocol::new(&mut footer, thrift_budget(footer_len));
    let metadata = FileMetaData::read_from_in_protocol(&mut protocol).map_err(|error| {
        format!(
            "the footer metadata cannot be decoded ({})",
            thrift_reason(&error)
        )
    })?;

    if !(0..=MAX_FILE_ROWS as i64).contains(&metadata.num_rows) {
        return Err(too_many_rows(
            "the file declares",
            metadata.num_rows,
            &file_limit(),
        ));
    }
    let repeated = leaf_columns(&metadata.schema)?;
    let mut total_rows: u64 = 0;
    for (group, row_group) in metadata.row_groups.iter().enumerate() {
        let rows = row_group.num_rows;
        if !(0..=MAX_BATCH_ROWS as i64).contains(&rows) {
            let declares = format!("row group {group} declares");
            return Err(too_many_rows(&declares, rows, &batch_limit("row group")));
        }
        total_rows += rows as u64;
        if total_rows > MAX_FILE_ROWS {
            let rows = total_rows as i64;
            return Err(too_many_rows("the row groups declare", rows, &file_limit()));
        }
        if row_group.columns.len() != repeated.len() {
            return Err(format!(
                "row group {group} has {} column chunks but the schema has {} columns",
                row_group.columns.len(),
                repeated.len()
            ));
        }
        for (chunk, &repeated) in row_group.columns.iter().zip(&repeated) {
            let Some(column) = chunk.meta_data.as_ref() else {
                return Err(format!(
                    "a column chunk in row group {group} has no metadata (encrypted files are not supported)"
                ));
            };
            let name = column.path_in_schema.join(".");
            let at = format!("column `{name}` in row group {group}");
            let values = column.num_values;
            if values < 0 || values as u64 > MAX_BATCH_ROWS || (!repeated && values > rows) {
                return Err(format!("{at} declares {values} values for {rows} rows"));
            }
            // Where polars starts reading the chunk: its dictionary page if it has one.
            let start = column
                .dictionary_page_offset
                .unwrap_or(column.data_page_offset);
            let length = column.total_compressed_size;
            let end = start.checked_add(length).unwrap_or(i64::MAX);
            if start < PARQUET_MAGIC.len() as i64 || length < 0 || end > data_end as i64 {
                return Err(format!(
                    "{at} declares bytes {start}..{end} but the file's data lies in bytes 4..{data_end}"
                ));
            }
            pages(
                &bytes[start as usize..end as usize],
                &at,
                values,
                rows,
                repeated,
            )?;
        }
    }
    Ok(())
}

/// Decimal columns: this build of polars has no decimal type and its readers stop on
/// one (a panic, once reported as a malformed file), so they are named here, with the
/// type, whether gapcert would read the column or not.
fn decimal_refusal(columns: &[String]) -> Result<(), String> {
    if columns.is_empty() {
        return Ok(());
    }
    Err(format!(
        "the column{} {} {} a decimal type, which gapcert does not read; write {} as floating-point (or integer) numbers, or drop {}",
        if columns.len() == 1 { "" } else { "s" },
        columns.join(", "),
        if columns.len() == 1 { "has" } else { "have" },
        if columns.len() == 1 { "it" } else { "them" },
        if columns.len() == 1 { "it" } else { "them" },
    ))
}

/// The Parquet schema's decimal leaves, as `` `name` (decimal(precision, scale)) ``.
fn parquet_decimals(bytes: &[u8]) -> Result<(), String> {
    let size = bytes.len();
    if size < 12 || !bytes.ends_with(PARQUET_MAGIC) {
        return Ok(());
    }
    let footer_len = u32::from_le_bytes(le4(&bytes[size - 8..size - 4])) as usize;
    let Some(data_end) = (size - 8)
        .checked_sub(footer_len)
        .filter(|&start| start >= PARQUET_MAGIC.len())
    else {
        return Ok(());
    };
    let mut footer = &bytes[data_end..size - 8];
    let mut protocol = TCompactInputProtocol::new(&mut footer, thrift_budget(footer_len));
    let Ok(metadata) = FileMetaData::read_from_in_protocol(&mut protocol) else {
        return Ok(());
    };
    let columns: Vec<String> = metadata
        .schema
        .iter()
        .skip(1)
        .filter(|field| {
            field.converted_type == Some(ConvertedType::DECIMAL)
                || matches!(field.logical_type, Some(LogicalType::DECIMAL(_)))
        })
        .map(|field| {
            let (precision, scale) = match &field.logical_type {
                Some(LogicalType::DECIMAL(decimal)) => (decimal.precision, decimal.scale),
                _ => (field.precision.unwrap_or(0), field.scale.unwrap_or(0)),
            };
            format!("`{}` (decimal({precision}, {scale}))", field.name)
        })
        .collect();
    decimal_refusal(&columns)
}

/// The Arrow IPC schema's decimal fields (nested ones by their dotted path).
fn arrow_decimals(bytes: &[u8]) -> Result<(), String> {
    fn collect(
        fields: polars_arrow_format::ipc::planus::Vector<
            '_,
            polars_arrow_format::ipc::planus::Result<polars_arrow_format::ipc::FieldRef<'_>>,
        >,
        prefix: &str,
        depth: usize,
        out: &mut Vec<String>,
    ) {
        if depth > 64 {
            return;
        }
        for field in fields.iter().flatten() {
            let name = field.name().ok().flatten().unwrap_or("");
            let path = if prefix.is_empty() {
                name.to_string()
            } else {
                format!("{prefix}.{name}")
            };
            if let Ok(Some(TypeRef::Decimal(decimal))) = field.type_() {
                out.push(format!(
                    "`{path}` (decimal{}({}, {}))",
                    decimal.bit_width().unwrap_or(128),
                    decimal.precision().unwrap_or(0),
                    decimal.scale().unwrap_or(0)
                ));
            }
            if let Ok(Some(children)) = field.children() {
                collect(children, &path, depth + 1, out);
            }
        }
    }
    let size = bytes.len();
    if size < 10 || !bytes.ends_with(ARROW_MAGIC) {
        return Ok(());
    }
    let footer_len = i32::from_le_bytes(le4(&bytes[size - 10..size - 6]));
    let Some(footer_start) = usize::try_from(footer_len)
        .ok()
        .and_then(|len| (size - 10).checked_sub(len))
    else {
        return Ok(());
    };
    let Ok(footer) = FooterRef::read_as_root(&bytes[footer_start..size - 10]) else {
        return Ok(());
    };
    let Some(fields) = footer
        .schema()
        .ok()
        .flatten()
        .and_then(|schema| schema.fields().ok().flatten())
    else {
        return Ok(());
    };
    let mut columns = Vec::new();
    collect(fields, "", 0, &mut columns);
    decimal_refusal(&columns)
}

/// The Parquet schema's fields directly under its root, in order.
fn parquet_column_names(bytes: &[u8]) -> Option<Vec<String>> {
    let size = bytes.len();
    if size < 12 || !bytes.ends_with(PARQUET_MAGIC) {
        return None;
    }
    let footer_len = u32::from_le_bytes(le4(&bytes[size - 8..size - 4])) as usize;
    let data_end = (size - 8)
        .checked_sub(footer_len)
        .filter(|&start| start >= PARQUET_MAGIC.len())?;
    let mut footer = &bytes[data_end..size - 8];
    let mut protocol = TCompactInputProtocol::new(&mut footer, thrift_budget(footer_len));
    let metadata = FileMetaData::read_from_in_protocol(&mut protocol).ok()?;
    let (root, fields) = metadata.schema.split_first()?;
    let mut names = Vec::new();
    // Open groups: children still to come.
    let mut open: Vec<i64> = vec![root.num_children.unwrap_or(0).into()];
    for field in fields {
        if open.len() == 1 {
            names.push(field.name.clone());
        }
        *open.last_mut()? -= 1;
        if let Some(children) = field.num_children.filter(|&children| children > 0) {
            open.push(children.into());
        }
        while open.last().is_some_and(|&left| left <= 0) && open.len() > 1 {
            open.pop();
        }
    }
    Some(names)
}

/// For each leaf column of the schema, in order, whether it sits under a repeated field
/// (a list), where a value count may exceed the row count.
fn leaf_columns(schema: &[SchemaElement]) -> Result<Vec<bool>, String> {
    let malformed = || "the schema's tree of fields is inconsistent".to_string();
    let Some((root, fields)) = schema.split_first() else {
        return Err("the schema is empty".to_string());
    };
    let mut leaves = Vec::new();
    // Open groups: (children still to come, repeated).
    let mut open: Vec<(i64, bool)> = vec![(root.num_children.unwrap_or(0).into(), false)];
    for field in fields {
        let Some(parent) = open.last_mut() else {
            return Err(malformed());
        };
        parent.0 -= 1;
        let repeated = parent.1 || field.repetition_type == Some(FieldRepetitionType::REPEATED);
        match field.num_children {
            Some(children) if children > 0 => open.push((children.into(), repeated)),
            Some(children) if children < 0 => return Err(malformed()),
            // A leaf has a physical type; a group without children holds no column.
            _ if field.type_.is_some() => leaves.push(repeated),
            _ => {}
        }
        while open.last().is_some_and(|group| group.0 == 0) {
            open.pop();
        }
    }
    // Every group closed (a root without children stays open, and is complete).
    if !matches!(open.as_slice(), [] | [(0, _)]) {
        return Err(malformed());
    }
    Ok(leaves)
}

/// Walks the page headers of one column chunk the way polars' page reader does (until
/// the chunk's declared value count is reached) and checks each page's declared sizes
/// and counts against the chunk.
fn pages(chunk: &[u8], at: &str, values: i64, rows: i64, repeated: bool) -> Result<(), String> {
    let mut position = 0usize;
    let mut seen: i64 = 0;
    let mut index = 0usize;
    while seen < values {
        if position >= chunk.len() {
            return Err(format!(
                "{at} ends after {seen} of the {values} values it declares"
            ));
        }
        let mut rest = &chunk[position..];
        let header = {
            let mut protocol = TCompactInputProtocol::new(&mut rest, thrift_budget(chunk.len()));
            PageHeader::read_from_in_protocol(&mut protocol).map_err(|error| {
                format!(
                    "page {index} of {at} has an unreadable header ({})",
                    thrift_reason(&error)
                )
            })?
        };
        let header_len = chunk.len() - position - rest.len();
        let page = format!("page {index} of {at}");
        let compressed = header.compressed_page_size;
        let uncompressed = header.uncompressed_page_size;
        if compressed < 0 || compressed as usize > rest.len() {
            return Err(format!(
                "{page} declares {compressed} bytes but its column chunk has {} bytes left",
                rest.len()
            ));
        }
        if uncompressed < 0 || uncompressed as u64 > MAX_PAGE_BYTES {
            return Err(format!(
                "{page} declares {uncompressed} bytes uncompressed (at most {MAX_PAGE_BYTES} are accepted)"
            ));
        }
        let page_values = match header.type_ {
            PageType::DATA_PAGE => {
                let Some(data) = header.data_page_header.as_ref() else {
                    return Err(format!("{page} is a data page without a data page header"));
                };
                data.num_values
            }
            PageType::DATA_PAGE_V2 => {
                let Some(data) = header.data_page_header_v2.as_ref() else {
                    return Err(format!("{page} is a data page without a data page header"));
                };
                let levels = i64::from(data.definition_levels_byte_length)
                    + i64::from(data.repetition_levels_byte_length);
                if data.definition_levels_byte_length < 0
                    || data.repetition_levels_byte_length < 0
                    || levels > i64::from(compressed)
                {
                    return Err(format!(
                        "{page} declares {levels} bytes of levels in a {compressed}-byte page"
                    ));
                }
                if data.num_nulls < 0 || data.num_nulls > data.num_values {
                    return Err(format!(
                        "{page} declares {} nulls among {} values",
                        data.num_nulls, data.num_values
                    ));
                }
                if data.num_rows < 0 || i64::from(data.num_rows) > rows {
                    return Err(format!(
                        "{page} declares {} rows in a row group of {rows}",
                        data.num_rows
                    ));
                }
                data.num_values
            }
            PageType::DICTIONARY_PAGE => {
                let Some(dictionary) = header.dictionary_page_header.as_ref() else {
                    return Err(format!(
                        "{page} is a dictionary page without a dictionary page header"
                    ));
                };
                let entries = dictionary.num_values;
                if entries < 0 || entries as u64 > MAX_BATCH_ROWS {
                    return Err(format!("{page} declares a dictionary of {entries} values"));
                }
                0
            }
            _ => 0,
        };
        let left = values - seen;
        if page_values < 0 || i64::from(page_values) > left {
            let limit = if repeated {
                String::new()
            } else {
                format!(" (the row group has {rows} rows)")
            };
            return Err(format!(
                "{page} declares {page_values} values but the column chunk has {left} left{limit}"
            ));
        }
        seen += i64::from(page_values);
        position += header_len + compressed as usize;
        index += 1;
    }
    Ok(())
}

/// `declares` is the subject and its verb ("the file declares"); `limit` says what
/// is accepted.
fn too_many_rows(declares: &str, rows: i64, limit: &str) -> String {
    if rows < 0 {
        format!("{declares} {rows} rows")
    } else {
        format!("{declares} {rows} rows; gapcert reads at most {limit}")
    }
}

fn batch_limit(unit: &str) -> String {
    format!("{MAX_BATCH_ROWS} rows per {unit}")
}

fn file_limit() -> String {
    format!("{MAX_FILE_ROWS} rows from one file")
}

/// A Thrift decoding error's own message, or its kind when it has none.
fn thrift_reason(error: &ThriftError) -> String {
    let message = match error {
        ThriftError::Transport(error) => &error.message,
        ThriftError::Protocol(error) => &error.message,
        ThriftError::Application(error) => &error.message,
    };
    if message.is_empty() {
        error.to_string()
    } else {
        message.clone()
    }
}

fn le4(bytes: &[u8]) -> [u8; 4] {
    let mut out = [0; 4];
    out.copy_from_slice(&bytes[..4]);
    out
}

// ---------------------------------------------------------------------------------------
// Arrow IPC

const ARROW_MAGIC: &[u8] = b"ARROW1";
const CONTINUATION_MARKER: [u8; 4] = [0xff; 4];

fn arrow_ipc(bytes: &[u8]) -> Result<(), String> {
    let size = bytes.len();
    // The footer is the last 10 bytes: its length, then the magic. Without them this is
    // not an Arrow IPC file (perhaps the stream format): polars says what it makes of it.
    if size < 10 || !bytes.ends_with(ARROW_MAGIC) {
        return Ok(());
    }
    let footer_len = i32::from_le_bytes(le4(&bytes[size - 10..size - 6]));
    let footer_start = usize::try_from(footer_len)
        .ok()
        .and_then(|len| (size - 10).checked_sub(len))
        .ok_or_else(|| {
            format!("the footer declares {footer_len} bytes but the file has {size} bytes")
        })?;
    let footer = FooterRef::read_as_root(&bytes[footer_start..size - 10])
        .map_err(|error| format!("the footer cannot be decoded ({error})"))?;
    let undecodable = |error| format!("the footer cannot be decoded ({error})");

    let file = IpcFile {
        bytes,
        data_end: footer_start as u64,
    };
    if let Some(blocks) = footer.dictionaries().map_err(undecodable)? {
        for (index, block) in blocks.iter().enumerate() {
            file.block(
                "dictionary batch",
                index,
                block.offset(),
                block.meta_data_length(),
                block.body_length(),
            )?;
        }
    }
    let mut rows: u64 = 0;
    if let Some(blocks) = footer.record_batches().map_err(undecodable)? {
        for (index, block) in blocks.iter().enumerate() {
            rows += file.block(
                "record batch",
                index,
                block.offset(),
                block.meta_data_length(),
                block.body_length(),
            )?;
            if rows > MAX_FILE_ROWS {
                let rows = rows as i64;
                return Err(too_many_rows(
                    "the record batches declare",
                    rows,
                    &file_limit(),
                ));
            }
        }
    }
    Ok(())
}

/// The Arrow IPC file's schema fields, in order, from its footer.
fn arrow_column_names(bytes: &[u8]) -> Option<Vec<String>> {
    let size = bytes.len();
    if size < 10 || !bytes.ends_with(ARROW_MAGIC) {
        return None;
    }
    let footer_len = i32::from_le_bytes(le4(&bytes[size - 10..size - 6]));
    let footer_start = usize::try_from(footer_len)
        .ok()
        .and_then(|len| (size - 10).checked_sub(len))?;
    let footer = FooterRef::read_as_root(&bytes[footer_start..size - 10]).ok()?;
    let fields = footer.schema().ok()??.fields().ok()??;
    fields
        .iter()
        .map(|field| Some(field.ok()?.name().ok()??.to_string()))
        .collect()
}

struct IpcFile<'a> {
    bytes: &'a [u8],
    /// Where the footer starts: every block must end before it.
    data_end: u64,
}

impl IpcFile<'_> {
    /// Checks one block (a message and its body) and returns the rows its batch declares.
    fn block(
        &self,
        what: &str,
        index: usize,
        offset: i64,
        meta_len: i32,
        body_len: i64,
    ) -> Result<u64, String> {
        let at = format!("{what} {index}");
        let size = self.bytes.len();
        let extent = (|| {
            let offset = u64::try_from(offset).ok()?;
            let meta_len = u64::try_from(meta_len).ok()?;
            let body_len = u64::try_from(body_len).ok()?;
            let end = offset.checked_add(meta_len)?.checked_add(body_len)?;
            (end <= self.data_end).then_some((offset as usize, meta_len as usize, body_len))
        })();
        let Some((offset, meta_len, body_len)) = extent else {
            return Err(format!(
                "{at} declares {meta_len} bytes of header and {body_len} bytes of data at byte \
                 {offset}, but the file has {size} bytes and its data ends at byte {}",
                self.data_end
            ));
        };
        // The message: an optional continuation marker, its length, the flatbuffer.
        let header = &self.bytes[offset..offset + meta_len];
        let prefix = if header.starts_with(&CONTINUATION_MARKER) {
            8
        } else {
            4
        };
        let declared = header
            .get(prefix - 4..prefix)
            .map(|len| i32::from_le_bytes(le4(len)));
        let message = declared
            .and_then(|len| usize::try_from(len).ok())
            .and_then(|len| header.get(prefix..prefix.checked_add(len)?))
            .ok_or_else(|| match declared {
                Some(len) => {
                    format!("{at} declares a {len}-byte message in a {meta_len}-byte header")
                }
                None => format!("{at} declares a {meta_len}-byte header, too short for a message"),
            })?;
        let undecodable = |error| format!("{at} has an undecodable message ({error})");
        let message = MessageRef::read_as_root(message).map_err(undecodable)?;
        let batch = match message.header().map_err(undecodable)? {
            Some(MessageHeaderRef::RecordBatch(batch)) => batch,
            Some(MessageHeaderRef::DictionaryBatch(dictionary)) => {
                match dictionary.data().map_err(undecodable)? {
                    Some(batch) => batch,
                    None => return Err(format!("{at} is a dictionary batch without data")),
                }
            }
            _ => return Err(format!("{at} is not a record batch")),
        };
        let body_start = offset + meta_len;
        self.batch(&at, batch, body_start, body_len)
    }

    /// Checks a record batch's rows, columns and buffers against its body.
    fn batch(
        &self,
        at: &str,
        batch: RecordBatchRef<'_>,
        body_start: usize,
        body_len: u64,
    ) -> Result<u64, String> {
        let undecodable = |error| format!("{at} has an undecodable message ({error})");
        let rows = batch.length().map_err(undecodable)?;
        if !(0..=MAX_BATCH_ROWS as i64).contains(&rows) {
            let declares = format!("{at} declares");
            return Err(too_many_rows(&declares, rows, &batch_limit("record batch")));
        }
        let mut buffer_count = 0usize;
        let compressed = batch.compression().map_err(undecodable)?.is_some();
        if let Some(buffers) = batch.buffers().map_err(undecodable)? {
            buffer_count = buffers.len();
            for buffer in buffers.iter() {
                let (start, length) = (buffer.offset(), buffer.length());
                let end = start.checked_add(length).unwrap_or(i64::MAX);
                if start < 0 || length < 0 || end as u64 > body_len {
                    return Err(format!(
                        "{at} declares a {length}-byte buffer at offset {start} of its \
                         {body_len}-byte body, but the file has {} bytes",
                        self.bytes.len()
                    ));
                }
                // A compressed buffer starts with its decompressed length (-1: stored
                // as is), which polars allocates.
                if compressed && length >= 8 {
                    let at_byte = body_start + start as usize;
                    let declared = i64::from_le_bytes(
                        self.bytes[at_byte..at_byte + 8]
                            .try_into()
                            .unwrap_or([0; 8]),
                    );
                    if declared < -1 || declared > MAX_DECOMPRESSED_BYTES as i64 {
                        return Err(format!(
                            "{at} declares a compressed buffer of {declared} bytes \
                             decompressed (at most {MAX_DECOMPRESSED_BYTES} are accepted)"
                        ));
                    }
                }
            }
        }
        if let Some(nodes) = batch.nodes().map_err(undecodable)? {
            for node in nodes.iter() {
                let (length, nulls) = (node.length(), node.null_count());
                if !(0..=MAX_BATCH_ROWS as i64).contains(&length) || !(0..=length).contains(&nulls)
                {
                    return Err(format!(
                        "{at} declares a column of {length} values with {nulls} nulls"
                    ));
                }
            }
        }
        if let Some(counts) = batch.variadic_buffer_counts().map_err(undecodable)? {
            for count in counts.iter() {
                if !(0..=buffer_count as i64).contains(&count) {
                    return Err(format!(
                        "{at} declares {count} variadic buffers but has {buffer_count} buffers"
                    ));
                }
            }
        }
        Ok(rows as u64)
    }
}

#[cfg(test)]
mod tests {
    use polars_parquet_format::thrift::protocol::TCompactOutputProtocol;

    use super::*;

    fn read(path: &str) -> Vec<u8> {
        std::fs::read(std::path::Path::new(env!("CARGO_MANIFEST_DIR")).join(path)).unwrap()
    }

    /// The fixture Parquet log with its footer metadata changed by `edit`.
    fn forged_parquet(edit: impl FnOnce(&mut FileMetaData)) -> Vec<u8> {
        let bytes = read("fixtures/formats/runs.parquet");
        let size = bytes.len();
        let footer_len = u32::from_le_bytes(le4(&bytes[size - 8..size - 4])) as usize;
        let data_end = size - 8 - footer_len;
        let mut footer = &bytes[data_end..size - 8];
        let mut metadata = FileMetaData::read_from_in_protocol(&mut TCompactInputProtocol::new(
            &mut footer,
            thrift_budget(footer_len),
        ))
        .unwrap();
        edit(&mut metadata);
        let mut encoded = Vec::new();
        metadata
            .write_to_out_protocol(&mut TCompactOutputProtocol::new(&mut encoded))
            .unwrap();
        let mut forged = bytes[..data_end].to_vec();
        forged.extend_from_slice(&encoded);
        forged.extend_from_slice(&(encoded.len() as u32).to_le_bytes());
        forged.extend_from_slice(PARQUET_MAGIC);
        forged
    }

    #[test]
    fn fixtures_pass() {
        assert_eq!(parquet(&read("fixtures/formats/runs.parquet")), Ok(()));
        assert_eq!(arrow_ipc(&read("fixtures/formats/runs.arrow")), Ok(()));
        // Re-encoding the footer unchanged keeps the file acceptable.
        assert_eq!(parquet(&forged_parquet(|_| {})), Ok(()));
    }

    #[test]
    fn other_formats_and_foreign_bytes_are_left_to_polars() {
        assert!(check("x", b"run,holdout_n\n", LogFormat::Csv).is_ok());
        assert_eq!(parquet(b"not parquet at all"), Ok(()));
        assert_eq!(arrow_ipc(b"not arrow at all"), Ok(()));
    }

    #[test]
    fn the_fuzzing_finds_are_refused() {
        let arrow = read("fuzz/regressions/ingest_arrow-forged-buffer-length.arrow");
        let message = arrow_ipc(&arrow).unwrap_err();
        assert!(
            message.starts_with("record batch 0 declares a 281474976710656-byte buffer"),
            "{message}"
        );
        let parquet_bytes = read("fuzz/regressions/ingest_parquet-forged-value-count.parquet");
        let message = parquet(&parquet_bytes).unwrap_err();
        assert!(
            message.starts_with("page 1 of column `vc_dim` in row group 0 declares -21 values"),
            "{message}"
        );
        let problems = check("f.parquet", &parquet_bytes, LogFormat::Parquet).unwrap_err();
        assert!(problems[0]
            .to_string()
            .starts_with("f.parquet: cannot read as Parquet: page 1"));
    }

    #[test]
    fn declared_rows_are_bounded() {
        let forged = forged_parquet(|m| m.row_groups[0].num_rows = MAX_BATCH_ROWS as i64 + 1);
        let message = parquet(&forged).unwrap_err();
        assert!(
            message.starts_with("row group 0 declares 100000001 rows; gapcert reads at most"),
            "{message}"
        );
        let forged = forged_parquet(|m| m.num_rows = -1);
        assert_eq!(parquet(&forged).unwrap_err(), "the file declares -1 rows");
    }

    #[test]
    fn column_chunks_must_fit_their_row_group_and_the_file() {
        let forged = forged_parquet(|m| {
            m.row_groups[0].columns[2]
                .meta_data
                .as_mut()
                .unwrap()
                .num_values = 22;
        });
        let message = parquet(&forged).unwrap_err();
        assert_eq!(
            message,
            "column `dim` in row group 0 declares 22 values for 21 rows"
        );
        let forged = forged_parquet(|m| {
            let column = m.row_groups[0].columns[0].meta_data.as_mut().unwrap();
            column.total_compressed_size = 1 << 40;
        });
        let message = parquet(&forged).unwrap_err();
        assert!(
            message.starts_with("column `run` in row group 0 declares bytes 4.."),
            "{message}"
        );
    }

    #[test]
    fn a_footer_longer_than_the_file_is_refused() {
        let bytes = read("fixtures/formats/runs.arrow");
        let mut cut = bytes[..100].to_vec();
        cut.extend_from_slice(&bytes[bytes.len() - 10..]);
        let message = arrow_ipc(&cut).unwrap_err();
        assert!(message.starts_with("the footer declares"), "{message}");
    }
}
