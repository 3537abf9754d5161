//! The terminal table: worst runs first, a one-line summary and the cautions.

use std::io::{self, Write};

use comfy_table::{presets, Attribute, Cell, CellAlignment, Color, ContentArrangement, Table};

use super::document::AuditDocument;
use super::text::{percent, sorted_worst_first, summary_line};
use crate::audit::{RunResult, Verdict};

/// Renders the table; `color` only when writing to a terminal without `NO_COLOR`.
pub fn write_table(doc: &AuditDocument, out: &mut dyn Write, color: bool) -> io::Result<()> {
    let mut table = Table::new();
    table
        .load_preset(presets::UTF8_FULL_CONDENSED)
        .set_content_arrangement(ContentArrangement::Dynamic);
    if !color {
        table.force_no_tty();
    }
    let method = doc.settings.holdout_bound.as_str();
    table.set_header(vec![
        "verdict",
        "run",
        "held-out error",
        &format!("{method} interval"),
        "claim",
        "upper bound",
        "VC allowance",
        "held-out needed",
        "train needed",
        "findings",
    ]);
    for run in sorted_worst_first(&doc.runs) {
        table.add_row(row_cells(run, color, doc.settings.holdout_bound));
    }
    for column in 2..9 {
        if let Some(c) = table.column_mut(column) {
            c.set_cell_alignment(CellAlignment::Right);
        }
    }
    writeln!(out, "{table}")?;
    writeln!(out, "{}", summary_line(doc))?;
    writeln!(out)?;
    for caution in &doc.cautions {
        writeln!(out, "  note: {caution}")?;
    }
    Ok(())
}

fn row_cells(run: &RunResult, color: bool, method: crate::audit::HoldoutBound) -> Vec<Cell> {
    let verdict = Cell::new(run.verdict.as_str());
    let verdict = if color {
        match run.verdict {
            Verdict::Refuted => verdict.fg(Color::Red).add_attribute(Attribute::Bold),
            Verdict::Unproven => verdict.fg(Color::Yellow),
            Verdict::Certified => verdict.fg(Color::Green),
            Verdict::NoClaim => verdict.fg(Color::DarkGrey),
        }
    } else {
        verdict
    };
    let interval = match method {
        crate::audit::HoldoutBound::Binomial => run.binomial_interval,
        crate::audit::HoldoutBound::Hoeffding => run.hoeffding_interval,
    };
    vec![
        verdict,
        Cell::new(printable(&run.run)),
        Cell::new(format!(
            "{} ({}/{})",
            percent(run.holdout_error_rate),
            run.holdout_misclassified,
            run.holdout_n
        )),
        Cell::new(format!(
            "{} – {}",
            percent(interval[0]),
            percent(interval[1])
        )),
        Cell::new(
            run.claim_error_rate
                .map(percent)
                .unwrap_or_else(|| "—".into()),
        ),
        Cell::new(percent(run.error_upper_bound)),
        Cell::new(
            run.vc_allowance
                .map(|a| format!("{a:.3}"))
                .unwrap_or_else(|| "—".into()),
        ),
        Cell::new(
            run.holdout_needed
                .map(group_thousands)
                .unwrap_or_else(|| "—".into()),
        ),
        Cell::new(
            run.train_needed
                .map(group_thousands)
                .unwrap_or_else(|| "—".into()),
        ),
        Cell::new(
            run.findings
                .iter()
                .map(|f| f.code.as_str())
                .collect::<Vec<_>>()
                .join(", "),
        ),
    ]
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

/// 1234567 → "1,234,567".
pub fn group_thousands(value: u64) -> String {
    let digits = value.to_string();
    let mut grouped = String::with_capacity(digits.len() + digits.len() / 3);
    for (index, ch) in digits.chars().enumerate() {
        if index > 0 && (digits.len() - index) % 3 == 0 {
            grouped.push(',');
        }
        grouped.push(ch);
    }
    grouped
}
