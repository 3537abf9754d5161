//! Claims (SPEC §10) in the reports: flat for `--claims-output` (JSON lines, CSV,
//! Parquet), and the section every human-readable report opens with.

use std::io::{self, Write};

use polars::prelude::*;

use super::escape::escape_markdown;
use super::flat::text_cell;
use super::format::OutputFormat;
use super::text::{group_thousands, printable, wrap};
use crate::audit::claims::ClaimResult;
use crate::decimal::push_percent;

pub use super::own_outputs::CLAIM_COLUMNS;

/// Writes the claims flat in `format` (JSON lines, CSV or Parquet).
pub fn write_claims(
    claims: &[ClaimResult],
    format: OutputFormat,
    out: &mut dyn Write,
) -> io::Result<()> {
    match format {
        OutputFormat::Ndjson => {
            for claim in claims {
                serde_json::to_writer(&mut *out, claim)?;
                out.write_all(b"\n")?;
            }
            Ok(())
        }
        OutputFormat::Csv => write_claims_csv(claims, out),
        OutputFormat::Parquet => {
            let mut frame = claims_frame(claims).map_err(io::Error::other)?;
            ParquetWriter::new(out)
                .finish(&mut frame)
                .map(|_| ())
                .map_err(io::Error::other)
        }
        other => Err(io::Error::new(
            io::ErrorKind::Unsupported,
            format!(
                "claims are written flat as ndjson, csv or parquet, not {}",
                other.name()
            ),
        )),
    }
}

fn opt_number<T: ToString>(value: Option<T>) -> String {
    value.map(|v| v.to_string()).unwrap_or_default()
}

fn write_claims_csv(claims: &[ClaimResult], out: &mut dyn Write) -> io::Result<()> {
    writeln!(out, "{}", CLAIM_COLUMNS.join(","))?;
    for c in claims {
        let fields = [
            text_cell(&c.claim),
            text_cell(&c.source),
            c.statement.as_deref().map(text_cell).unwrap_or_default(),
            c.kind.as_str().to_string(),
            text_cell(&c.run),
            c.baseline.as_deref().map(text_cell).unwrap_or_default(),
            c.value.to_string(),
            c.runs_matched.to_string(),
            c.method.as_str().to_string(),
            c.delta.to_string(),
            c.lower.to_string(),
            c.upper.to_string(),
            c.threshold.to_string(),
            opt_number(c.mcnemar_p),
            c.verdict.as_str().to_string(),
            opt_number(c.holdout_needed),
            text_cell(&c.evidence),
        ];
        writeln!(out, "{}", fields.join(","))?;
    }
    Ok(())
}

/// The claims as a polars DataFrame with the flat columns (for Parquet).
pub fn claims_frame(claims: &[ClaimResult]) -> PolarsResult<DataFrame> {
    let text = |name: &str, f: &dyn Fn(&ClaimResult) -> Option<String>| -> Column {
        Series::new(name.into(), claims.iter().map(f).collect::<Vec<_>>()).into()
    };
    let float = |name: &str, f: &dyn Fn(&ClaimResult) -> Option<f64>| -> Column {
        Series::new(name.into(), claims.iter().map(f).collect::<Vec<_>>()).into()
    };
    let count = |name: &str, f: &dyn Fn(&ClaimResult) -> Option<u64>| -> Column {
        Series::new(name.into(), claims.iter().map(f).collect::<Vec<_>>()).into()
    };
    let columns = vec![
        text("claim", &|c| Some(c.claim.clone())),
        text("source", &|c| Some(c.source.clone())),
        text("statement", &|c| c.statement.clone()),
        text("kind", &|c| Some(c.kind.as_str().to_string())),
        text("run", &|c| Some(c.run.clone())),
        text("baseline", &|c| c.baseline.clone()),
        float("value", &|c| Some(c.value)),
        count("runs_matched", &|c| Some(c.runs_matched as u64)),
        text("method", &|c| Some(c.method.as_str().to_string())),
        float("delta", &|c| Some(c.delta)),
        float("lower", &|c| Some(c.lower)),
        float("upper", &|c| Some(c.upper)),
        float("threshold", &|c| Some(c.threshold)),
        float("mcnemar_p", &|c| c.mcnemar_p),
        text("verdict", &|c| Some(c.verdict.as_str().to_string())),
        count("holdout_needed", &|c| c.holdout_needed),
        text("evidence", &|c| Some(c.evidence.clone())),
    ];
    DataFrame::new(claims.len(), columns)
}

/// "4.20 %" without the space: table cells.
fn percent_cell(value: f64) -> String {
    let mut text = String::new();
    push_percent(&mut text, value);
    text.push('%');
    text
}

/// What a claim holds its quantity to, in words: "E ≤ 10.00%", "Δ ≤ −5.00%".
pub fn claim_target(claim: &ClaimResult) -> String {
    let quantity = match claim.kind {
        crate::claim::ClaimKind::Accuracy | crate::claim::ClaimKind::Error => "E",
        crate::claim::ClaimKind::Gap => "E − E_in",
        crate::claim::ClaimKind::Beats | crate::claim::ClaimKind::NotWorse => "Δ",
    };
    format!("{quantity} ≤ {}", percent_cell(claim.threshold))
}

/// The claims, worst first (refuted, unproven, certified), in the order of the file
/// within a verdict.
pub fn claims_worst_first(claims: &[ClaimResult]) -> Vec<&ClaimResult> {
    let mut sorted: Vec<&ClaimResult> = claims.iter().collect();
    sorted.sort_by_key(|c| c.verdict.severity());
    sorted
}

/// The claims section of the terminal report: one line per claim (verdict, claim,
/// kind, what it holds the quantity to, the bounds, the method), then the statement
/// and the evidence of each, wrapped to `width`.
pub fn write_claims_text(
    claims: &[ClaimResult],
    out: &mut dyn Write,
    width: Option<u16>,
) -> io::Result<()> {
    if claims.is_empty() {
        return Ok(());
    }
    writeln!(out, "Claims ({}):", group_thousands(claims.len() as u64))?;
    for claim in claims_worst_first(claims) {
        let about = match &claim.baseline {
            Some(base) => format!("{} vs {}", claim.run, base),
            None => claim.run.clone(),
        };
        let line = format!(
            "{} {} ({}, {}): needs {}; bounds [{}, {}] by {}",
            claim.verdict.as_str(),
            printable(&claim.claim),
            claim.kind.as_str(),
            printable(&about),
            claim_target(claim),
            percent_cell(claim.lower),
            percent_cell(claim.upper),
            claim.method.as_str()
        );
        writeln!(out, "{}", wrap(&line, width, "  ", "      "))?;
        if let Some(statement) = &claim.statement {
            writeln!(
                out,
                "{}",
                wrap(
                    &format!("“{}”", printable(statement)),
                    width,
                    "      ",
                    "      "
                )
            )?;
        }
        writeln!(
            out,
            "{}",
            wrap(&printable(&claim.evidence), width, "      ", "      ")
        )?;
    }
    writeln!(out)
}

/// The claims section of the Markdown report.
pub fn write_claims_markdown(claims: &[ClaimResult], out: &mut dyn Write) -> io::Result<()> {
    if claims.is_empty() {
        return Ok(());
    }
    writeln!(out, "**Claims**")?;
    writeln!(out)?;
    writeln!(
        out,
        "| verdict | claim | statement | kind | needs | lower | upper | method |"
    )?;
    writeln!(out, "|---|---|---|---|---|---:|---:|---|")?;
    for claim in claims_worst_first(claims) {
        writeln!(
            out,
            "| {} | {} | {} | {} | {} | {} | {} | {} |",
            claim.verdict.as_str(),
            escape_markdown(&claim.claim),
            escape_markdown(claim.statement.as_deref().unwrap_or("")),
            claim.kind.as_str().replace('_', "\\_"),
            escape_markdown(&claim_target(claim)),
            percent_cell(claim.lower),
            percent_cell(claim.upper),
            claim.method.as_str().replace('_', "\\_"),
        )?;
    }
    writeln!(out)?;
    for claim in claims_worst_first(claims) {
        writeln!(
            out,
            "- **{}**: {}",
            escape_markdown(&claim.claim),
            escape_markdown(&claim.evidence)
        )?;
    }
    writeln!(out)
}
