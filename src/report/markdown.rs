//! Markdown for a pull-request comment: a summary, a table of the runs shown, and
//! why each got its verdict (the explanation and the findings in words).

use std::io::{self, Write};

use super::document::AuditDocument;
use super::escape::escape_markdown;
use super::text::{
    group_thousands, left_out_line, percent, shown_runs, summary_line, Presentation,
};

/// The verdict column (see [`super::text::verdict_text`]); a run's own verdict as is.
fn verdict_cell(
    run: &crate::audit::RunResult,
    claims: &[crate::audit::claims::ClaimResult],
) -> String {
    let (verdict, words) = super::text::verdict_text(run, claims);
    if words == verdict.as_str() {
        words
    } else {
        escape_markdown(&words)
    }
}

pub fn write_markdown(
    doc: &AuditDocument,
    out: &mut dyn Write,
    presentation: &Presentation,
) -> io::Result<()> {
    let s = &doc.summary;
    let badge = match s.gate {
        crate::audit::GateResult::Pass => "passes",
        crate::audit::GateResult::Fail => "**fails**",
    };
    writeln!(out, "### gapcert audit: the gate {badge}")?;
    writeln!(out)?;
    writeln!(out, "{}", escape_markdown(&summary_line(doc)))?;
    writeln!(out)?;
    super::claims::write_claims_markdown(&doc.claims, out)?;
    let (shown, left_out) = shown_runs(&doc.runs, doc.summary.runs, presentation);
    if !shown.is_empty() {
        writeln!(
            out,
            "| verdict | run | held-out error | claimed accuracy | K | lower bound | upper bound | certifiable accuracy | interval ({}) | held-out needed | findings |",
            doc.settings.holdout_bound.as_str()
        )?;
        writeln!(out, "|---|---|---:|---:|---:|---:|---:|---:|---:|---:|---|")?;
    }
    for run in &shown {
        let interval = match doc.settings.holdout_bound {
            crate::audit::HoldoutBound::Binomial => run.binomial_interval,
            crate::audit::HoldoutBound::Hoeffding => run.hoeffding_interval,
        };
        writeln!(
            out,
            "| {} | {} | {} ({}/{}) | {} | {} | {} | {} | {} | {}–{} | {} | {} |",
            verdict_cell(run, &doc.claims),
            escape_markdown(&run.run),
            percent(run.holdout_error_rate),
            run.holdout_misclassified,
            run.holdout_n,
            run.claim_error_rate
                .map(|c| percent(1.0 - c))
                .unwrap_or_else(|| "—".into()),
            group_thousands(run.candidates),
            percent(run.error_lower_bound),
            percent(run.error_upper_bound),
            percent(run.certifiable_accuracy),
            percent(interval[0]),
            percent(interval[1]),
            run.holdout_needed
                .map(group_thousands)
                .unwrap_or_else(|| "—".into()),
            run.findings
                .iter()
                .map(|f| f.code.as_str().replace('_', "\\_"))
                .collect::<Vec<_>>()
                .join(", "),
        )?;
    }
    if let Some(line) = left_out_line(shown.len(), left_out, presentation) {
        writeln!(out)?;
        writeln!(out, "{}", escape_markdown(&line))?;
    }
    if !shown.is_empty() {
        writeln!(out)?;
        writeln!(out, "**Why each verdict**")?;
        writeln!(out)?;
        let settings = doc.settings.audit_settings();
        for run in &shown {
            writeln!(
                out,
                "- **{}**: {}",
                escape_markdown(&run.run),
                escape_markdown(&super::text::why_text(run, &doc.claims))
            )?;
            if let Some(carried) = super::text::carried_line(run) {
                writeln!(out, "  - {}", escape_markdown(&carried))?;
            }
            for finding in &run.findings {
                let message = crate::audit::explain::finding_sentence(run, finding, &settings);
                writeln!(
                    out,
                    "  - `{}`: {}",
                    finding.code.as_str(),
                    escape_markdown(&message)
                )?;
            }
        }
    }
    writeln!(out)?;
    super::splits::write_splits_markdown(&doc.splits, out)?;
    for caution in &doc.cautions {
        writeln!(out, "> {}", escape_markdown(caution))?;
    }
    Ok(())
}
