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
    };
    let (audit, ingest) = options.resolve()?;
    Ok(AuditRequest {
        audit,
        ingest,
        format: report_format(flags.format),
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
    }
}

/// `--format` of the other commands.
pub fn simple_format(format: SimpleFormatArg) -> OutputFormat {
    match format {
        SimpleFormatArg::Table => OutputFormat::Table,
        SimpleFormatArg::Json => OutputFormat::Json,
    }
}
