//! Wording shared by the human-readable reports.

use super::document::AuditDocument;
use crate::audit::{GateResult, RunResult};

/// A rate as a percentage with two decimals ("3.25%").
pub fn percent(rate: f64) -> String {
    let mut text = String::with_capacity(8);
    crate::decimal::push_percent(&mut text, rate);
    text.push('%');
    text
}

/// Runs sorted worst first: refuted, unproven, certified, no claim; within a verdict,
/// the largest excess of the upper bound over the claim first.
pub fn sorted_worst_first(runs: &[RunResult]) -> Vec<&RunResult> {
    let mut sorted: Vec<&RunResult> = runs.iter().collect();
    sorted.sort_by(|a, b| {
        a.verdict
            .severity()
            .cmp(&b.verdict.severity())
            .then_with(|| {
                let excess =
                    |r: &RunResult| r.error_upper_bound - r.claim_error_rate.unwrap_or(1.0);
                excess(b)
                    .partial_cmp(&excess(a))
                    .unwrap_or(std::cmp::Ordering::Equal)
            })
    });
    sorted
}

/// "24 runs: 9 certified, 5 unproven, 1 refuted, 9 without a claim. Gate (unproven): FAIL."
pub fn summary_line(doc: &AuditDocument) -> String {
    let s = &doc.summary;
    let gate = match s.gate {
        GateResult::Pass => "pass",
        GateResult::Fail => "FAIL",
    };
    let mut line = format!(
        "{} runs: {} certified, {} unproven, {} refuted, {} without a claim. Gate ({}): {}. Confidence {}, {} bound{}.",
        s.runs,
        s.certified,
        s.unproven,
        s.refuted,
        s.no_claim,
        doc.settings.gate.as_str(),
        gate,
        doc.settings.confidence,
        doc.settings.holdout_bound.as_str(),
        if doc.settings.familywise { ", family-wise" } else { "" }
    );
    line.push_str(&format!(
        " Rows read: {} ({} audited, {} skipped).",
        s.rows_read, s.runs, s.rows_skipped
    ));
    if s.files_skipped > 0 {
        line.push_str(&format!(" Files skipped: {}.", s.files_skipped));
    }
    if s.reuse_unchecked > 0 {
        line.push_str(&format!(
            " {} run(s) name no holdout_set, so reuse of their held-out split could not be checked.",
            s.reuse_unchecked
        ));
    }
    line
}

/// Text from the logs made safe for a terminal: line breaks and tabs become spaces
/// (one line per run), other control characters (escape sequences) become U+FFFD.
pub fn printable(text: &str) -> String {
    text.chars()
        .map(|c| match c {
            '\n' | '\r' | '\t' => ' ',
            c if c.is_control() => '\u{FFFD}',
            c => c,
        })
        .collect()
}

pub use crate::decimal::group_thousands;
