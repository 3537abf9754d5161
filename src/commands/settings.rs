//! Raw flags → the library's options, which check themselves
//! (`gapcert::options`): the one resolution step of every command. Nothing after this
//! reads a raw flag.

use gapcert::audit::{AuditSettings, Gate, HoldoutBound, Verdict};
use gapcert::ingest::IngestSettings;
use gapcert::options::AuditOptions;
use gapcert::report::{OutputFormat, Presentation};
use gapcert::Error;

use super::terminal::stdout_terminal;
use crate::cli::{AuditFlags, BoundArg, GateArg, ReportFormatArg, SimpleFormatArg, VerdictArg};

/// An audit's settings, resolved from its flags.
pub struct AuditRequest {
    pub audit: AuditSettings,
    pub ingest: IngestSettings,
    pub format: OutputFormat,
    /// Whether `--gate` was given (the demo exits 0 without it).
    pub gate_given: bool,
    /// How the table, Markdown and HTML present the runs.
    pub presentation: Presentation,
}

/// Checks the audit flags.
pub fn resolve_audit(flags: &AuditFlags) -> Result<AuditRequest, Error> {
    let options = AuditOptions {
        confidence: flags.confidence,
        holdout_bound: match flags.holdout_bound {
            BoundArg::Binomial => HoldoutBound::Binomial,
            BoundArg::Hoeffding => HoldoutBound::Hoeffding,
        },
        claim_accuracy: flags.claim_accuracy,
        familywise: flags.familywise,
        same_holdout: flags.same_holdout,
        tolerance: flags.tolerance,
        max_width: flags.max_width,
        percent: flags.percent,
        lenient: flags.lenient,
        map: flags.map.clone(),
        map_file: flags.map_file.clone(),
        gate: match flags.gate.unwrap_or(GateArg::Unproven) {
            GateArg::Unproven => Gate::Unproven,
            GateArg::Refuted => Gate::Refuted,
            GateArg::Never => Gate::Never,
        },
        gate_allow: flags.gate_allow.clone(),
        claims: flags.claims.clone(),
        separator: flags.separator.clone(),
        decimal_comma: flags.decimal_comma,
        keep: flags.keep.clone(),
    };
    let format = output_format(flags.format, flags.output.as_deref())?;
    let (audit, ingest) = options.resolve()?;
    Ok(AuditRequest {
        audit,
        ingest,
        format,
        gate_given: flags.gate.is_some(),
        presentation: presentation(flags),
    })
}

/// Colours and width of standard output (colours only on a terminal without
/// `NO_COLOR`; the width from `COLUMNS` when set, else the terminal's), and the
/// runs `--only` and `--top` choose.
fn presentation(flags: &AuditFlags) -> Presentation {
    let (color, width) = stdout_terminal();
    Presentation {
        color,
        width,
        only: flags
            .only
            .iter()
            .map(|verdict| match verdict {
                VerdictArg::Certified => Verdict::Certified,
                VerdictArg::Unproven => Verdict::Unproven,
                VerdictArg::Refuted => Verdict::Refuted,
                VerdictArg::NoClaim => Verdict::NoClaim,
            })
            .collect(),
        top: flags.top,
        explain: flags.explain,
    }
}

/// The format an output file's extension names, if any.
pub fn format_of_extension(path: &std::path::Path) -> Option<OutputFormat> {
    let extension = path.extension()?.to_str()?.to_ascii_lowercase();
    Some(match extension.as_str() {
        "json" => OutputFormat::Json,
        "ndjson" | "jsonl" => OutputFormat::Ndjson,
        "csv" => OutputFormat::Csv,
        "parquet" => OutputFormat::Parquet,
        "md" | "markdown" => OutputFormat::Markdown,
        "xml" => OutputFormat::Junit,
        _ => return None,
    })
}

/// `--format`, or the format `--output`'s extension names (a table written to
/// `audit.csv` would be read back as a broken log). A format that contradicts the
/// extension is a usage error: one of the two is a slip.
pub fn output_format(
    format: Option<ReportFormatArg>,
    output: Option<&std::path::Path>,
) -> Result<OutputFormat, Error> {
    let named = output.and_then(format_of_extension);
    match (format.map(report_format), named) {
        (None, named) => Ok(named.unwrap_or(OutputFormat::Table)),
        (Some(format), Some(named)) if format != named => {
            let path = output.map(|p| p.display().to_string()).unwrap_or_default();
            Err(Error::Usage(format!(
                "--format {} writes {}, but --output {path} names {} by its extension; change one of them",
                format.name(),
                format.description(),
                named.description()
            )))
        }
        (Some(format), _) => Ok(format),
    }
}

/// `--format` of audits.
pub fn report_format(format: ReportFormatArg) -> OutputFormat {
    match format {
        ReportFormatArg::Table => OutputFormat::Table,
        ReportFormatArg::Json => OutputFormat::Json,
        ReportFormatArg::Ndjson => OutputFormat::Ndjson,
        ReportFormatArg::Csv => OutputFormat::Csv,
        ReportFormatArg::Parquet => OutputFormat::Parquet,
        ReportFormatArg::Markdown => OutputFormat::Markdown,
        ReportFormatArg::Junit => OutputFormat::Junit,
    }
}

/// `--format` of the other commands.
pub fn simple_format(format: SimpleFormatArg) -> OutputFormat {
    match format {
        SimpleFormatArg::Table => OutputFormat::Table,
        SimpleFormatArg::Json => OutputFormat::Json,
    }
}
