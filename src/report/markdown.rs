//! Markdown for a pull-request comment: a summary and a table.

use std::io::{self, Write};

use super::document::AuditDocument;
use super::table::group_thousands;
use super::text::{percent, sorted_worst_first, summary_line};

/// Escapes text for a Markdown table cell: table syntax, emphasis, links, entities and
/// HTML are backslash-escaped (CommonMark lets any ASCII punctuation be escaped so);
/// line breaks become spaces so a cell cannot end its row; other control characters
/// (an ESC starting a terminal escape sequence, a bell) and bidirectional overrides,
/// which would reorder the text around them, are shown as U+FFFD.
pub fn escape_markdown(text: &str) -> String {
    let mut escaped = String::with_capacity(text.len());
    for ch in text.chars() {
        match ch {
            '|' | '\\' | '`' | '*' | '_' | '[' | ']' | '<' | '>' | '#' | '!' | '~' | '&' => {
                escaped.push('\\');
                escaped.push(ch);
            }
            '\n' | '\r' | '\t' | '\u{2028}' | '\u{2029}' => escaped.push(' '),
            c if c.is_control() || is_bidi_control(c) => escaped.push('\u{FFFD}'),
            _ => escaped.push(ch),
        }
    }
    escaped
}

/// Unicode bidirectional embedding, override and isolate controls (UAX #9).
fn is_bidi_control(ch: char) -> bool {
    matches!(ch, '\u{202A}'..='\u{202E}' | '\u{2066}'..='\u{2069}' | '\u{200E}' | '\u{200F}' | '\u{061C}')
}

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
