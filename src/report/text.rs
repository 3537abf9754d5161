//! Wording shared by the human-readable reports.

use super::document::AuditDocument;
use crate::audit::claims::ClaimResult;
pub use crate::audit::result::worst_first;
use crate::audit::{GateResult, RunResult, Verdict};

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
    sorted.sort_by(|a, b| worst_first(a, b));
    sorted
}

/// Wraps `text` to `width` columns (None: no wrapping), words whole, the first line
/// after `first` and the others after `indent`; one string with line breaks.
pub fn wrap(text: &str, width: Option<u16>, first: &str, indent: &str) -> String {
    let Some(width) = width.map(usize::from) else {
        return format!("{first}{text}");
    };
    let mut out = String::with_capacity(text.len() + 16);
    let mut line = String::from(first);
    let mut line_has_word = false;
    for word in text.split(' ').filter(|w| !w.is_empty()) {
        let needed = line.chars().count() + usize::from(line_has_word) + word.chars().count();
        if line_has_word && needed > width {
            out.push_str(&line);
            out.push('\n');
            line = String::from(indent);
            line_has_word = false;
        }
        if line_has_word {
            line.push(' ');
        }
        line.push_str(word);
        line_has_word = true;
    }
    out.push_str(&line);
    out
}

/// How a human-readable report (table, Markdown, HTML) presents the runs: which it
/// shows, and for the table, the terminal's colours and width. The data formats
/// (JSON, NDJSON, CSV, Parquet) always carry every run.
#[derive(Clone, Debug, Default, PartialEq)]
pub struct Presentation {
    /// Colours (only on a terminal, without `NO_COLOR`).
    pub color: bool,
    /// The width to fit (the terminal's, or `COLUMNS`); None: no limit.
    pub width: Option<u16>,
    /// Show only runs with these verdicts (empty: all).
    pub only: Vec<Verdict>,
    /// Show at most this many runs, worst first (None: up to [`DEFAULT_SHOWN`]).
    pub top: Option<usize>,
    /// The flat formats (JSON lines, CSV, Parquet) carry each run's explanation
    /// (`--explain`); otherwise codes and numbers only.
    pub explain: bool,
}

/// Runs a human-readable report lists when `--top` is not given: a larger audit is
/// summarised and its worst runs are shown (a terminal table of 200,000 runs helps
/// nobody and took seconds and a gigabyte to lay out).
pub const DEFAULT_SHOWN: usize = 1000;

/// The runs a human-readable report shows, worst first, and how many of the audit's
/// `total` runs it leaves out (by `--only`, then by `--top` or [`DEFAULT_SHOWN`]).
/// `runs` may be fewer than `total` when a streamed audit kept only the worst.
pub fn shown_runs<'a>(
    runs: &'a [RunResult],
    total: usize,
    presentation: &Presentation,
) -> (Vec<&'a RunResult>, usize) {
    let mut sorted: Vec<&RunResult> = if presentation.only.is_empty() {
        runs.iter().collect()
    } else {
        runs.iter()
            .filter(|r| presentation.only.contains(&r.verdict))
            .collect()
    };
    let limit = presentation.top.unwrap_or(DEFAULT_SHOWN);
    if sorted.len() > limit {
        // Only the worst `limit` need sorting.
        sorted.select_nth_unstable_by(limit, |a, b| worst_first(a, b));
        sorted.truncate(limit);
    }
    sorted.sort_by(|a, b| worst_first(a, b));
    let left_out = total.max(runs.len()) - sorted.len();
    (sorted, left_out)
}

/// "Showing the 1,000 worst of 200,000 runs (…)": said under a report that leaves
/// runs out; None when it shows them all.
pub fn left_out_line(shown: usize, left_out: usize, presentation: &Presentation) -> Option<String> {
    if left_out == 0 {
        return None;
    }
    let total = shown + left_out;
    let only = if presentation.only.is_empty() {
        String::new()
    } else {
        let names: Vec<&str> = presentation.only.iter().map(|v| v.as_str()).collect();
        format!(" ({} only)", names.join(", "))
    };
    Some(format!(
        "Showing {} of {} runs, worst first{only}; {} left out. --top N and --only VERDICTS choose what is shown; --format json, ndjson, csv or parquet carries every run.",
        group_thousands(shown as u64),
        group_thousands(total as u64),
        group_thousands(left_out as u64)
    ))
}

/// Skipped rows with a claim named one by one in the summary line.
const SKIPPED_NAMED: usize = 10;

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
    if s.copies_set_aside > 0 {
        line.push_str(&format!(
            " Rows read: {} ({} audited, {} skipped, {} copies of runs read elsewhere set aside).",
            s.rows_read, s.runs, s.rows_skipped, s.copies_set_aside
        ));
    } else {
        line.push_str(&format!(
            " Rows read: {} ({} audited, {} skipped).",
            s.rows_read, s.runs, s.rows_skipped
        ));
    }
    if s.claims > 0 {
        line.push_str(&format!(
            " Claims: {} ({} certified, {} unproven, {} refuted).",
            s.claims, s.claims_certified, s.claims_unproven, s.claims_refuted
        ));
    }
    line.push_str(if doc.settings.percent {
        " Rates and claims read as percentages"
    } else {
        " Rates and claims read as fractions"
    });
    let other_scale = doc
        .settings
        .map_sections
        .iter()
        .any(|section| section.percent.is_some_and(|p| p != doc.settings.percent));
    line.push_str(if other_scale {
        ", except in files the map file's sections read otherwise."
    } else {
        "."
    });
    if s.gate_findings > 0 {
        line.push_str(&format!(
            " {} run(s) fail the gate on a finding that suggests a slip (see their findings; --gate-allow CODE if intended).",
            s.gate_findings
        ));
    }
    if s.claim_gate_findings > 0 {
        line.push_str(&format!(
            " {} claim(s) of the claims files fail the gate on a finding that suggests a slip (see their findings; --gate-allow CODE if intended).",
            s.claim_gate_findings
        ));
    }
    let with_claim: Vec<String> = doc
        .skipped_rows
        .iter()
        .filter(|row| row.carries_claim)
        .take(SKIPPED_NAMED)
        .map(|row| format!("{} ({})", row.source, row.reasons.join("; ")))
        .collect();
    if !with_claim.is_empty() {
        let more = s.claims_skipped.saturating_sub(with_claim.len());
        line.push_str(&format!(
            " {} skipped row(s) carried a claim that could not be audited, which fails the gate: {}{}.",
            s.claims_skipped,
            with_claim.join(", "),
            if more > 0 {
                format!(", and {more} more (JSON lists every one)")
            } else {
                String::new()
            }
        ));
    }
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

/// The verdict column of a run: its own verdict, or for a run without a claim of its
/// own the verdict of the strictest claims-file claim about it alone (`accuracy` or
/// `error`), naming the claim.
pub fn verdict_text(run: &RunResult, claims: &[ClaimResult]) -> (Verdict, String) {
    if run.verdict == Verdict::NoClaim {
        if let Some(claim) = crate::audit::splits::file_claim_on(claims, &run.run) {
            return (
                claim.verdict,
                format!("{} (claim {})", claim.verdict.as_str(), claim.claim),
            );
        }
    }
    (run.verdict, run.verdict.as_str().to_string())
}

/// Why a run got its verdict, in words: its explanation, and for a run without a
/// claim of its own that a claims file judges (see [`verdict_text`]), that claim's
/// verdict and evidence, so the sentence agrees with the verdict column.
pub fn why_text(run: &RunResult, claims: &[ClaimResult]) -> String {
    if run.verdict == Verdict::NoClaim {
        if let Some(claim) = crate::audit::splits::file_claim_on(claims, &run.run) {
            return format!(
                "{} The claims file's claim {} about it is {}: {}",
                run.explanation,
                claim.claim,
                claim.verdict.as_str(),
                claim.evidence
            );
        }
    }
    run.explanation.clone()
}

/// What a run carries besides its audit, in words: the `--keep` columns and the
/// sources of the copies set aside; `None` when neither.
pub fn carried_line(run: &RunResult) -> Option<String> {
    let mut parts = Vec::new();
    if !run.kept.is_empty() {
        let cells: Vec<String> = run
            .kept
            .iter()
            .map(|(name, value)| format!("{name} = {}", value.as_deref().unwrap_or("(empty)")))
            .collect();
        parts.push(cells.join(", "));
    }
    if !run.copies.is_empty() {
        parts.push(format!(
            "also read, identical, at {} (counted once)",
            run.copies.join(", ")
        ));
    }
    (!parts.is_empty()).then(|| parts.join("; "))
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

/// [`printable`] line by line, for messages on stderr: a message of several lines (an
/// error listing every problem) keeps its line breaks, and no escape sequence from a
/// log cell or a file name reaches the terminal.
pub fn printable_lines(text: &str) -> String {
    text.split('\n')
        .map(printable)
        .collect::<Vec<_>>()
        .join("\n")
}

pub use crate::decimal::group_thousands;
