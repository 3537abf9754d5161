//! Markdown for a pull-request comment: a summary and a table.

use std::io::{self, Write};

use super::document::AuditDocument;
use super::escape::escape_markdown;
use super::text::{group_thousands, percent, sorted_worst_first, summary_line};

pub fn write_markdown(doc: &AuditDocument, out: &mut dyn Write) -> io::Result<()> {
    let s = &doc.summary;
    let badge = match s.gate {
        crate::audit::GateResult::Pass => "passes",
        crate::audit::GateResult::Fail => "**fails**",
    };
    writeln!(out, "### gapcert audit: the gate {badge}")?;
    writeln!(out)?;
    writeln!(out, "{}", escape_markdown(&summary_line(doc)))?;
    writeln!(out)?;
    writeln!(
        out,
        "| verdict | run | held-out error | interval ({}) | claim | upper bound | VC allowance | held-out needed | findings |",
        doc.settings.holdout_bound.as_str()
    )?;
    writeln!(out, "|---|---|---:|---:|---:|---:|---:|---:|---|")?;
    for run in sorted_worst_first(&doc.runs) {
        let interval = match doc.settings.holdout_bound {
            crate::audit::HoldoutBound::Binomial => run.binomial_interval,
            crate::audit::HoldoutBound::Hoeffding => run.hoeffding_interval,
        };
        writeln!(
            out,
            "| {} | {} | {} ({}/{}) | {} – {} | {} | {} | {} | {} | {} |",
            run.verdict.as_str(),
            escape_markdown(&run.run),
            percent(run.holdout_error_rate),
            run.holdout_misclassified,
            run.holdout_n,
            percent(interval[0]),
            percent(interval[1]),
            run.claim_error_rate
                .map(percent)
                .unwrap_or_else(|| "—".into()),
            percent(run.error_upper_bound),
            run.vc_allowance
                .map(|a| format!("{a:.3}"))
                .unwrap_or_else(|| "—".into()),
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
    writeln!(out)?;
    for caution in &doc.cautions {
        writeln!(out, "> {}", escape_markdown(caution))?;
    }
    Ok(())
}
