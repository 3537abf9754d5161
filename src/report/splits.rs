//! Held-out split wear (SPEC §11) in the human-readable reports: a splits section in
//! the table and the Markdown, and a chart per split in the HTML page.

use std::io::{self, Write};

use comfy_table::{presets, CellAlignment, Table};

use super::escape::escape_markdown;
use super::text::{group_thousands, percent, printable, wrap};
use crate::audit::splits::SplitEntry;

/// Splits a report lists: the most compared first (the ones reuse has cost most).
pub const SPLITS_SHOWN: usize = 20;

/// The splits worth a section: those compared more than once, or whose best run
/// makes a claim; the most compared first.
pub fn splits_worth_showing(splits: &[SplitEntry]) -> Vec<&SplitEntry> {
    let mut shown: Vec<&SplitEntry> = splits.iter().collect();
    shown.sort_by(|a, b| b.candidates.cmp(&a.candidates).then(b.runs.cmp(&a.runs)));
    shown
}

fn left_text(entry: &SplitEntry) -> String {
    let text = left_number(entry);
    match &entry.claim {
        Some(claim) => format!("{text} (claim {claim})"),
        None => text,
    }
}

/// What a reader should know about a split beyond its numbers: its findings (runs
/// of other sizes), another spelling of its name, a wear history that covers fewer
/// runs than K counts.
pub fn split_notes(entry: &SplitEntry) -> Vec<String> {
    let mut notes: Vec<String> = entry
        .findings
        .iter()
        .map(|finding| format!("{} ({})", finding.message, finding.code.as_str()))
        .collect();
    if !entry.spellings.is_empty() {
        let others: Vec<String> = entry
            .spellings
            .iter()
            .filter(|s| **s != entry.split)
            .map(|s| format!("`{s}`"))
            .collect();
        notes.push(format!(
            "split `{}` is also spelled {} (split_names_differ_in_case): they are counted as separate splits, each with a smaller K; spell the split one way",
            entry.split,
            others.join(", ")
        ));
    }
    let dated = entry.history.len() as u64;
    if dated > 0 && dated < entry.runs {
        notes.push(format!(
            "split `{}`: the wear history covers {} of its {} runs ({} lack logged_at), so it stops short of K = {}",
            entry.split,
            group_thousands(dated),
            group_thousands(entry.runs),
            group_thousands(entry.runs - dated),
            group_thousands(entry.candidates)
        ));
    }
    notes
}

fn left_number(entry: &SplitEntry) -> String {
    match entry.comparisons_left {
        Some(left) if left >= crate::theory::reuse::CANDIDATES_CAP - entry.candidates => {
            "10¹² or more".to_string()
        }
        Some(left) => group_thousands(left),
        None if entry.claim_error_rate.is_some() => "— (not certified now)".to_string(),
        None => "— (no claim)".to_string(),
    }
}

/// The splits section of the terminal report: a table when it fits `width` (or
/// without a width), otherwise two wrapped lines per split, so that no name or
/// number is ever broken.
pub fn write_splits_text(
    splits: &[SplitEntry],
    out: &mut dyn Write,
    width: Option<u16>,
) -> io::Result<()> {
    if splits.is_empty() {
        return Ok(());
    }
    let shown = splits_worth_showing(splits);
    writeln!(
        out,
        "Held-out splits ({}), most compared first:",
        group_thousands(splits.len() as u64)
    )?;
    let mut table = Table::new();
    table
        .load_preset(presets::UTF8_FULL_CONDENSED)
        .force_no_tty();
    table.set_header(vec![
        "split",
        "K",
        "best run",
        "best error",
        "certifiable now",
        "used once",
        "reuse cost",
        "comparisons left",
    ]);
    for entry in shown.iter().take(SPLITS_SHOWN) {
        table.add_row(vec![
            printable(&entry.split),
            group_thousands(entry.candidates),
            printable(&entry.best_run),
            format!(
                "{} ({}/{})",
                percent(entry.best_error_rate),
                entry.best_misclassified,
                entry.holdout_n
            ),
            percent(entry.certifiable_now),
            percent(entry.certifiable_fresh),
            format!("{:.2} pts", entry.reuse_cost * 100.0),
            left_text(entry),
        ]);
    }
    for column in [1, 3, 4, 5, 6, 7] {
        if let Some(c) = table.column_mut(column) {
            c.set_cell_alignment(CellAlignment::Right);
        }
    }
    let rendered = table.to_string();
    let fits = width.map_or(true, |w| {
        rendered
            .lines()
            .all(|line| line.chars().count() <= usize::from(w))
    });
    if fits {
        writeln!(out, "{rendered}")?;
    } else {
        for entry in shown.iter().take(SPLITS_SHOWN) {
            let first = format!(
                "{}: K = {}, best run {} with {} errors ({}/{})",
                printable(&entry.split),
                group_thousands(entry.candidates),
                printable(&entry.best_run),
                percent(entry.best_error_rate),
                entry.best_misclassified,
                entry.holdout_n
            );
            writeln!(out, "{}", wrap(&first, width, "  ", "      "))?;
            let second = format!(
                "certifiable now {} (used once {}, reuse cost {:.2} pts); comparisons left: {}",
                percent(entry.certifiable_now),
                percent(entry.certifiable_fresh),
                entry.reuse_cost * 100.0,
                left_text(entry)
            );
            writeln!(out, "{}", wrap(&second, width, "      ", "      "))?;
        }
    }
    if shown.len() > SPLITS_SHOWN {
        writeln!(
            out,
            "{} more splits in the JSON and HTML reports.",
            group_thousands((shown.len() - SPLITS_SHOWN) as u64)
        )?;
    }
    for entry in shown.iter().take(SPLITS_SHOWN) {
        for note in split_notes(entry) {
            writeln!(out, "{}", wrap(&printable(&note), width, "", "  "))?;
        }
    }
    let note = "certifiable now: the accuracy the split's best run can certify with K models compared on it; used once: with K = 1; comparisons left: more models the split can take before the best run's claim stops being certified.";
    writeln!(out, "{}", wrap(note, width, "", ""))?;
    writeln!(out)
}

/// The splits section of the Markdown report.
pub fn write_splits_markdown(splits: &[SplitEntry], out: &mut dyn Write) -> io::Result<()> {
    if splits.is_empty() {
        return Ok(());
    }
    writeln!(out, "**Held-out splits** (most compared first)")?;
    writeln!(out)?;
    writeln!(out, "| split | K | best run | best error | certifiable now | used once | reuse cost | comparisons left |")?;
    writeln!(out, "|---|---:|---|---:|---:|---:|---:|---:|")?;
    let shown = splits_worth_showing(splits);
    for entry in shown.iter().take(SPLITS_SHOWN) {
        writeln!(
            out,
            "| {} | {} | {} | {} ({}/{}) | {} | {} | {:.2} pts | {} |",
            escape_markdown(&entry.split),
            group_thousands(entry.candidates),
            escape_markdown(&entry.best_run),
            percent(entry.best_error_rate),
            entry.best_misclassified,
            entry.holdout_n,
            percent(entry.certifiable_now),
            percent(entry.certifiable_fresh),
            entry.reuse_cost * 100.0,
            escape_markdown(&left_text(entry)),
        )?;
    }
    if shown.len() > SPLITS_SHOWN {
        writeln!(out)?;
        writeln!(
            out,
            "{} more splits in the JSON and HTML reports.",
            shown.len() - SPLITS_SHOWN
        )?;
    }
    let notes: Vec<String> = shown
        .iter()
        .take(SPLITS_SHOWN)
        .flat_map(|entry| split_notes(entry))
        .collect();
    if !notes.is_empty() {
        writeln!(out)?;
        for note in notes {
            writeln!(out, "- {}", escape_markdown(&note))?;
        }
    }
    writeln!(out)
}

/// The splits as a polars DataFrame, one row per split with the fields of the JSON
/// entries (the wear history as JSON text), for programs that embed gapcert.
pub fn splits_frame(
    splits: &[SplitEntry],
) -> polars::prelude::PolarsResult<polars::prelude::DataFrame> {
    use polars::prelude::*;
    let text = |name: &str, f: &dyn Fn(&SplitEntry) -> Option<String>| -> Column {
        Series::new(name.into(), splits.iter().map(f).collect::<Vec<_>>()).into()
    };
    let float = |name: &str, f: &dyn Fn(&SplitEntry) -> Option<f64>| -> Column {
        Series::new(name.into(), splits.iter().map(f).collect::<Vec<_>>()).into()
    };
    let count = |name: &str, f: &dyn Fn(&SplitEntry) -> Option<u64>| -> Column {
        Series::new(name.into(), splits.iter().map(f).collect::<Vec<_>>()).into()
    };
    let columns = vec![
        text("split", &|s| Some(s.split.clone())),
        count("holdout_n", &|s| Some(s.holdout_n)),
        count("candidates", &|s| Some(s.candidates)),
        count("runs", &|s| Some(s.runs)),
        text("first_logged_at", &|s| s.first_logged_at.clone()),
        text("last_logged_at", &|s| s.last_logged_at.clone()),
        text("best_run", &|s| Some(s.best_run.clone())),
        float("best_error_rate", &|s| Some(s.best_error_rate)),
        count("best_misclassified", &|s| Some(s.best_misclassified)),
        float("claim_error_rate", &|s| s.claim_error_rate),
        float("certifiable_now", &|s| Some(s.certifiable_now)),
        float("certifiable_fresh", &|s| Some(s.certifiable_fresh)),
        float("reuse_cost", &|s| Some(s.reuse_cost)),
        count("comparisons_left", &|s| s.comparisons_left),
        text("size_mismatch", &|s| Some(s.size_mismatch.to_string())),
        float("delta", &|s| Some(s.delta)),
        text("history", &|s| serde_json::to_string(&s.history).ok()),
    ];
    DataFrame::new(splits.len(), columns)
}
