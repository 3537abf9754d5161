//! Flat per-run records: JSON lines, CSV and Parquet (SPEC §7: the same per-run
//! fields, intervals as `_lo`/`_hi` columns).

use std::io::{self, Write};

use polars::prelude::*;
use rayon::prelude::*;
use serde::Serialize;

use crate::audit::RunResult;

pub use super::own_outputs::{EXPLANATION, FLAT_COLUMNS};

/// The flat columns written, in order: [`FLAT_COLUMNS`], less [`EXPLANATION`]
/// unless `explain`.
pub fn columns(explain: bool) -> impl Iterator<Item = &'static str> {
    FLAT_COLUMNS
        .iter()
        .copied()
        .filter(move |name| explain || *name != EXPLANATION)
}

/// The `--keep` names the runs carry (every run carries the same, in the order
/// asked): the flat formats' columns after [`FLAT_COLUMNS`].
pub fn kept_names(runs: &[RunResult]) -> Vec<&str> {
    runs.first()
        .map(|run| run.kept.iter().map(|(name, _)| name.as_str()).collect())
        .unwrap_or_default()
}

/// The `--keep` cells as a JSON object's members (flattened into a flat record).
struct KeptCells<'a>(&'a [(String, Option<String>)]);

impl Serialize for KeptCells<'_> {
    fn serialize<S: serde::Serializer>(&self, serializer: S) -> Result<S::Ok, S::Error> {
        use serde::ser::SerializeMap;
        let mut map = serializer.serialize_map(Some(self.0.len()))?;
        for (name, value) in self.0 {
            map.serialize_entry(name, value)?;
        }
        map.end()
    }
}

#[derive(Serialize)]
struct FlatRun<'a> {
    run: &'a str,
    source: &'a str,
    family: Option<&'a str>,
    train_n: Option<u64>,
    train_error_rate: Option<f64>,
    holdout_n: u64,
    holdout_error_rate: f64,
    holdout_misclassified: u64,
    holdout_set: Option<&'a str>,
    candidates: u64,
    delta: f64,
    hoeffding_interval_lo: f64,
    hoeffding_interval_hi: f64,
    binomial_interval_lo: f64,
    binomial_interval_hi: f64,
    error_upper_bound: f64,
    error_lower_bound: f64,
    certifiable_accuracy: f64,
    vc_dim: Option<u64>,
    growth_ln: Option<f64>,
    vc_allowance: Option<f64>,
    vc_bound: Option<f64>,
    observed_gap: Option<f64>,
    certified_gap_max: Option<f64>,
    claim_error_rate: Option<f64>,
    verdict: &'static str,
    /// Only with `--explain`.
    #[serde(skip_serializing_if = "Option::is_none")]
    explanation: Option<&'a str>,
    holdout_needed: Option<u64>,
    train_needed: Option<u64>,
    /// Codes only: the sentences are in the JSON document, table, Markdown and HTML.
    findings: Vec<&'static str>,
    logged_at: Option<&'a str>,
    /// Sources of the identical runs set aside.
    copies: &'a [String],
    #[serde(flatten)]
    kept: KeptCells<'a>,
}

impl<'a> FlatRun<'a> {
    fn of(r: &'a RunResult, explain: bool) -> FlatRun<'a> {
        FlatRun {
            run: &r.run,
            source: &r.source,
            family: r.family.as_deref(),
            train_n: r.train_n,
            train_error_rate: r.train_error_rate,
            holdout_n: r.holdout_n,
            holdout_error_rate: r.holdout_error_rate,
            holdout_misclassified: r.holdout_misclassified,
            holdout_set: r.holdout_set.as_deref(),
            candidates: r.candidates,
            delta: r.delta,
            hoeffding_interval_lo: r.hoeffding_interval[0],
            hoeffding_interval_hi: r.hoeffding_interval[1],
            binomial_interval_lo: r.binomial_interval[0],
            binomial_interval_hi: r.binomial_interval[1],
            error_upper_bound: r.error_upper_bound,
            error_lower_bound: r.error_lower_bound,
            certifiable_accuracy: r.certifiable_accuracy,
            vc_dim: r.vc_dim,
            growth_ln: r.growth_ln,
            vc_allowance: r.vc_allowance,
            vc_bound: r.vc_bound,
            observed_gap: r.observed_gap,
            certified_gap_max: r.certified_gap_max,
            claim_error_rate: r.claim_error_rate,
            verdict: r.verdict.as_str(),
            explanation: explain.then_some(r.explanation.as_str()),
            holdout_needed: r.holdout_needed,
            train_needed: r.train_needed,
            findings: r.findings.iter().map(|f| f.code.as_str()).collect(),
            logged_at: r.logged_at.as_deref(),
            copies: &r.copies,
            kept: KeptCells(&r.kept),
        }
    }
}

/// Runs serialised per parallel task, and tasks per batch written in order: enough
/// to keep both cores busy, small enough that the batch buffers stay a few MB.
const RUNS_PER_TASK: usize = 2048;
const TASKS_PER_BATCH: usize = 16;

/// One JSON object per line per run (the explanation only if `explain`). Lines are
/// formatted in parallel and written in input order, so the output is identical to
/// a sequential writer's.
pub fn write_ndjson(runs: &[RunResult], explain: bool, out: &mut dyn Write) -> io::Result<()> {
    for batch in runs.chunks(RUNS_PER_TASK * TASKS_PER_BATCH) {
        for buffer in format_ndjson(batch, explain) {
            out.write_all(&buffer?)?;
        }
    }
    Ok(())
}

/// The JSON lines of `runs`, formatted in parallel: buffers to write in order.
pub fn format_ndjson(runs: &[RunResult], explain: bool) -> Vec<io::Result<Vec<u8>>> {
    runs.par_chunks(RUNS_PER_TASK)
        .map(|task| {
            // Sized from the first line (with a quarter to spare), so the buffer is
            // not grown, which copies it, for a typical task.
            let mut buffer = Vec::with_capacity(1536);
            if let Some((first, rest)) = task.split_first() {
                push_json_line(&mut buffer, first, explain);
                buffer.reserve(buffer.len() * rest.len() * 5 / 4);
                for run in rest {
                    push_json_line(&mut buffer, run, explain);
                }
            }
            Ok(buffer)
        })
        .collect()
}

/// One run as a JSON line: the object `serde_json` would write for [`FlatRun`] (the
/// same fields, order and bytes; tests compare the two), written directly: keys as
/// constant bytes, numbers through the same formatters serde_json uses (zmij for
/// floats, itoa for integers), text with serde_json's escapes.
fn push_json_line(line: &mut Vec<u8>, r: &RunResult, explain: bool) {
    line.extend_from_slice(b"{\"run\":");
    push_text(line, &r.run);
    line.extend_from_slice(b",\"source\":");
    push_text(line, &r.source);
    line.extend_from_slice(b",\"family\":");
    push_opt_text(line, r.family.as_deref());
    line.extend_from_slice(b",\"train_n\":");
    push_opt_u64(line, r.train_n);
    line.extend_from_slice(b",\"train_error_rate\":");
    push_opt_f64(line, r.train_error_rate);
    line.extend_from_slice(b",\"holdout_n\":");
    push_u64(line, r.holdout_n);
    line.extend_from_slice(b",\"holdout_error_rate\":");
    push_f64(line, r.holdout_error_rate);
    line.extend_from_slice(b",\"holdout_misclassified\":");
    push_u64(line, r.holdout_misclassified);
    line.extend_from_slice(b",\"holdout_set\":");
    push_opt_text(line, r.holdout_set.as_deref());
    line.extend_from_slice(b",\"candidates\":");
    push_u64(line, r.candidates);
    line.extend_from_slice(b",\"delta\":");
    push_f64(line, r.delta);
    line.extend_from_slice(b",\"hoeffding_interval_lo\":");
    push_f64(line, r.hoeffding_interval[0]);
    line.extend_from_slice(b",\"hoeffding_interval_hi\":");
    push_f64(line, r.hoeffding_interval[1]);
    line.extend_from_slice(b",\"binomial_interval_lo\":");
    push_f64(line, r.binomial_interval[0]);
    line.extend_from_slice(b",\"binomial_interval_hi\":");
    push_f64(line, r.binomial_interval[1]);
    line.extend_from_slice(b",\"error_upper_bound\":");
    push_f64(line, r.error_upper_bound);
    line.extend_from_slice(b",\"error_lower_bound\":");
    push_f64(line, r.error_lower_bound);
    line.extend_from_slice(b",\"certifiable_accuracy\":");
    push_f64(line, r.certifiable_accuracy);
    line.extend_from_slice(b",\"vc_dim\":");
    push_opt_u64(line, r.vc_dim);
    line.extend_from_slice(b",\"growth_ln\":");
    push_opt_f64(line, r.growth_ln);
    line.extend_from_slice(b",\"vc_allowance\":");
    push_opt_f64(line, r.vc_allowance);
    line.extend_from_slice(b",\"vc_bound\":");
    push_opt_f64(line, r.vc_bound);
    line.extend_from_slice(b",\"observed_gap\":");
    push_opt_f64(line, r.observed_gap);
    line.extend_from_slice(b",\"certified_gap_max\":");
    push_opt_f64(line, r.certified_gap_max);
    line.extend_from_slice(b",\"claim_error_rate\":");
    push_opt_f64(line, r.claim_error_rate);
    line.extend_from_slice(b",\"verdict\":\"");
    line.extend_from_slice(r.verdict.as_str().as_bytes());
    line.push(b'"');
    if explain {
        line.extend_from_slice(b",\"explanation\":");
        push_text(line, &r.explanation);
    }
    line.extend_from_slice(b",\"holdout_needed\":");
    push_opt_u64(line, r.holdout_needed);
    line.extend_from_slice(b",\"train_needed\":");
    push_opt_u64(line, r.train_needed);
    // Codes are plain identifiers: nothing to escape.
    line.extend_from_slice(b",\"findings\":[");
    for (index, finding) in r.findings.iter().enumerate() {
        if index > 0 {
            line.push(b',');
        }
        line.push(b'"');
        line.extend_from_slice(finding.code.as_str().as_bytes());
        line.push(b'"');
    }
    line.extend_from_slice(b"],\"logged_at\":");
    push_opt_text(line, r.logged_at.as_deref());
    line.extend_from_slice(b",\"copies\":[");
    for (index, copy) in r.copies.iter().enumerate() {
        if index > 0 {
            line.push(b',');
        }
        push_text(line, copy);
    }
    line.push(b']');
    for (name, value) in &r.kept {
        line.push(b',');
        push_text(line, name);
        line.push(b':');
        push_opt_text(line, value.as_deref());
    }
    line.extend_from_slice(b"}\n");
}

/// A float as serde_json writes it: shortest round-trip digits (zmij), null when
/// not finite.
#[inline]
fn push_f64(line: &mut Vec<u8>, value: f64) {
    if value.is_finite() {
        line.extend_from_slice(zmij::Buffer::new().format_finite(value).as_bytes());
    } else {
        line.extend_from_slice(b"null");
    }
}

#[inline]
fn push_opt_f64(line: &mut Vec<u8>, value: Option<f64>) {
    match value {
        Some(value) => push_f64(line, value),
        None => line.extend_from_slice(b"null"),
    }
}

#[inline]
fn push_u64(line: &mut Vec<u8>, value: u64) {
    line.extend_from_slice(itoa::Buffer::new().format(value).as_bytes());
}

#[inline]
fn push_opt_u64(line: &mut Vec<u8>, value: Option<u64>) {
    match value {
        Some(value) => push_u64(line, value),
        None => line.extend_from_slice(b"null"),
    }
}

#[inline]
fn push_opt_text(line: &mut Vec<u8>, value: Option<&str>) {
    match value {
        Some(text) => push_text(line, text),
        None => line.extend_from_slice(b"null"),
    }
}

/// A JSON string with serde_json's escapes: `\"`, `\\`, `\b`, `\t`, `\n`, `\f`,
/// `\r`, and `\u00xx` (lower-case hex) for the other control characters below
/// U+0020; everything else, non-ASCII included, as is.
fn push_text(line: &mut Vec<u8>, text: &str) {
    line.push(b'"');
    let bytes = text.as_bytes();
    // Most names need no escape: one branch-free pass (it vectorises) tells.
    let plain = bytes.iter().fold(true, |plain, &b| {
        plain & (b >= 0x20) & (b != b'"') & (b != b'\\')
    });
    if plain {
        line.extend_from_slice(bytes);
        line.push(b'"');
        return;
    }
    let mut plain_from = 0;
    for (at, &byte) in bytes.iter().enumerate() {
        let escape: &[u8] = match byte {
            b'"' => b"\\\"",
            b'\\' => b"\\\\",
            b'\n' => b"\\n",
            b'\t' => b"\\t",
            b'\r' => b"\\r",
            0x08 => b"\\b",
            0x0c => b"\\f",
            0x00..=0x1f => b"",
            _ => continue,
        };
        line.extend_from_slice(&bytes[plain_from..at]);
        plain_from = at + 1;
        if escape.is_empty() {
            const HEX: &[u8; 16] = b"0123456789abcdef";
            line.extend_from_slice(b"\\u00");
            line.push(HEX[(byte >> 4) as usize]);
            line.push(HEX[(byte & 0xf) as usize]);
        } else {
            line.extend_from_slice(escape);
        }
    }
    line.extend_from_slice(&bytes[plain_from..]);
    line.push(b'"');
}

/// `runs` as JSON lines through serde (the reference for [`write_ndjson`]'s
/// hand-written lines).
pub fn write_ndjson_serde(
    runs: &[RunResult],
    explain: bool,
    out: &mut dyn Write,
) -> io::Result<()> {
    for run in runs {
        serde_json::to_writer(&mut *out, &FlatRun::of(run, explain))?;
        out.write_all(b"\n")?;
    }
    Ok(())
}

/// RFC 4180 CSV with a header. Text cells that a spreadsheet would run as a formula
/// (leading `=`, `+`, `-`, `@`, tab or carriage return) are prefixed with `'`;
/// numbers are written as numbers, never altered.
pub fn write_csv(runs: &[RunResult], explain: bool, out: &mut dyn Write) -> io::Result<()> {
    write_csv_header(&kept_names(runs), explain, out)?;
    write_csv_rows(runs, explain, out)
}

/// The CSV header line: the flat columns, then the `--keep` columns.
pub fn write_csv_header(kept: &[&str], explain: bool, out: &mut dyn Write) -> io::Result<()> {
    let mut line = columns(explain).collect::<Vec<_>>().join(",");
    for name in kept {
        line.push(',');
        line.push_str(&text_cell(name));
    }
    writeln!(out, "{line}")
}

/// The CSV lines of `runs` (no header), formatted in parallel: buffers to write in
/// order.
pub fn format_csv_rows(runs: &[RunResult], explain: bool) -> Vec<io::Result<Vec<u8>>> {
    runs.par_chunks(RUNS_PER_TASK)
        .map(|task| {
            let mut buffer = Vec::with_capacity(task.len() * 640);
            write_csv_rows(task, explain, &mut buffer)?;
            Ok(buffer)
        })
        .collect()
}

/// CSV lines for `runs`, without the header (for writing batch by batch).
pub fn write_csv_rows(runs: &[RunResult], explain: bool, out: &mut dyn Write) -> io::Result<()> {
    let mut line = String::with_capacity(512);
    for r in runs {
        line.clear();
        let findings: Vec<&str> = r.findings.iter().map(|f| f.code.as_str()).collect();
        let fields: [String; 32] = [
            text_cell(&r.run),
            text_cell(&r.source),
            opt_text(r.family.as_deref()),
            opt_num(r.train_n),
            opt_num(r.train_error_rate),
            r.holdout_n.to_string(),
            r.holdout_error_rate.to_string(),
            r.holdout_misclassified.to_string(),
            opt_text(r.holdout_set.as_deref()),
            r.candidates.to_string(),
            r.delta.to_string(),
            r.hoeffding_interval[0].to_string(),
            r.hoeffding_interval[1].to_string(),
            r.binomial_interval[0].to_string(),
            r.binomial_interval[1].to_string(),
            r.error_upper_bound.to_string(),
            r.error_lower_bound.to_string(),
            r.certifiable_accuracy.to_string(),
            opt_num(r.vc_dim),
            opt_num(r.growth_ln),
            opt_num(r.vc_allowance),
            opt_num(r.vc_bound),
            opt_num(r.observed_gap),
            opt_num(r.certified_gap_max),
            opt_num(r.claim_error_rate),
            r.verdict.as_str().to_string(),
            text_cell(&r.explanation),
            opt_num(r.holdout_needed),
            opt_num(r.train_needed),
            text_cell(&findings.join(";")),
            opt_text(r.logged_at.as_deref()),
            text_cell(&r.copies.join(";")),
        ];
        for (index, field) in fields.iter().enumerate() {
            if index == EXPLANATION_AT && !explain {
                continue;
            }
            if index > 0 {
                line.push(',');
            }
            line.push_str(field);
        }
        for (_, value) in &r.kept {
            line.push(',');
            line.push_str(&opt_text(value.as_deref()));
        }
        line.push('\n');
        out.write_all(line.as_bytes())?;
    }
    Ok(())
}

/// Where the explanation sits among the flat columns.
const EXPLANATION_AT: usize = 26;

fn opt_num<T: ToString>(value: Option<T>) -> String {
    value.map(|v| v.to_string()).unwrap_or_default()
}

fn opt_text(value: Option<&str>) -> String {
    value.map(text_cell).unwrap_or_default()
}

/// Quotes a text cell for CSV and neutralises spreadsheet formulas.
pub fn text_cell(text: &str) -> String {
    let guarded;
    let text = if text.starts_with(['=', '+', '-', '@', '\t', '\r']) {
        guarded = format!("'{text}");
        guarded.as_str()
    } else {
        text
    };
    if text.contains([',', '"', '\n', '\r']) || text.starts_with('\'') {
        format!("\"{}\"", text.replace('"', "\"\""))
    } else {
        text.to_string()
    }
}

/// The runs as a polars DataFrame with the flat columns (for Parquet; the
/// explanation only if `explain`).
pub fn runs_frame(runs: &[RunResult], explain: bool) -> PolarsResult<DataFrame> {
    let text = |name: &str, f: &dyn Fn(&RunResult) -> Option<String>| -> Column {
        Series::new(name.into(), runs.iter().map(f).collect::<Vec<_>>()).into()
    };
    let float = |name: &str, f: &dyn Fn(&RunResult) -> Option<f64>| -> Column {
        Series::new(name.into(), runs.iter().map(f).collect::<Vec<_>>()).into()
    };
    let count = |name: &str, f: &dyn Fn(&RunResult) -> Option<u64>| -> Column {
        Series::new(name.into(), runs.iter().map(f).collect::<Vec<_>>()).into()
    };
    let columns = vec![
        text("run", &|r| Some(r.run.clone())),
        text("source", &|r| Some(r.source.clone())),
        text("family", &|r| r.family.clone()),
        count("train_n", &|r| r.train_n),
        float("train_error_rate", &|r| r.train_error_rate),
        count("holdout_n", &|r| Some(r.holdout_n)),
        float("holdout_error_rate", &|r| Some(r.holdout_error_rate)),
        count("holdout_misclassified", &|r| Some(r.holdout_misclassified)),
        text("holdout_set", &|r| r.holdout_set.clone()),
        count("candidates", &|r| Some(r.candidates)),
        float("delta", &|r| Some(r.delta)),
        float("hoeffding_interval_lo", &|r| Some(r.hoeffding_interval[0])),
        float("hoeffding_interval_hi", &|r| Some(r.hoeffding_interval[1])),
        float("binomial_interval_lo", &|r| Some(r.binomial_interval[0])),
        float("binomial_interval_hi", &|r| Some(r.binomial_interval[1])),
        float("error_upper_bound", &|r| Some(r.error_upper_bound)),
        float("error_lower_bound", &|r| Some(r.error_lower_bound)),
        float("certifiable_accuracy", &|r| Some(r.certifiable_accuracy)),
        count("vc_dim", &|r| r.vc_dim),
        float("growth_ln", &|r| r.growth_ln),
        float("vc_allowance", &|r| r.vc_allowance),
        float("vc_bound", &|r| r.vc_bound),
        float("observed_gap", &|r| r.observed_gap),
        float("certified_gap_max", &|r| r.certified_gap_max),
        float("claim_error_rate", &|r| r.claim_error_rate),
        text("verdict", &|r| Some(r.verdict.as_str().to_string())),
        text(EXPLANATION, &|r| explain.then(|| r.explanation.clone())),
        count("holdout_needed", &|r| r.holdout_needed),
        count("train_needed", &|r| r.train_needed),
        text("findings", &|r| {
            Some(
                r.findings
                    .iter()
                    .map(|f| f.code.as_str())
                    .collect::<Vec<_>>()
                    .join(";"),
            )
        }),
        text("logged_at", &|r| r.logged_at.clone()),
        text("copies", &|r| Some(r.copies.join(";"))),
    ];
    let mut columns = columns;
    if !explain {
        columns.retain(|column| column.name().as_str() != EXPLANATION);
    }
    for (at, name) in kept_names(runs).into_iter().enumerate() {
        columns.push(text(name, &|r| r.kept.get(at).and_then(|(_, v)| v.clone())));
    }
    DataFrame::new(runs.len(), columns)
}

/// Parquet, written through polars.
pub fn write_parquet(runs: &[RunResult], explain: bool, out: &mut dyn Write) -> io::Result<()> {
    let mut frame = runs_frame(runs, explain).map_err(io::Error::other)?;
    ParquetWriter::new(out)
        .finish(&mut frame)
        .map(|_| ())
        .map_err(io::Error::other)
}
