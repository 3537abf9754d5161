//! The terminal table: worst runs first, a one-line summary and the cautions.

use std::io::{self, Write};

use comfy_table::{
    presets, Attribute, Cell, CellAlignment, Color, ColumnConstraint, ContentArrangement, Table,
    Width,
};

use super::document::AuditDocument;
use super::text::{
    group_thousands, left_out_line, percent, printable, shown_runs, summary_line, wrap,
    Presentation,
};
use crate::audit::{RunResult, Verdict};

/// Column indices of the table, in display order.
const RUN: usize = 1;
const HOLDOUT_ERROR: usize = 2;
const COMPARED: usize = 6;
const ERRORS: usize = 7;
const CERTIFIABLE: usize = 8;
const HOLDOUT_NEEDED: usize = 9;
const INTERVAL: usize = 10;
const VC_ALLOWANCE: usize = 11;
const TRAIN_NEEDED: usize = 12;
const FINDINGS: usize = 13;

/// The columns shown only when they fit, most useful first. The verdict, the run, the
/// claimed accuracy and the two one-sided bounds that decide the verdict always stay.
const OPTIONAL_BY_PRIORITY: [usize; 9] = [
    HOLDOUT_ERROR,
    COMPARED,
    ERRORS,
    CERTIFIABLE,
    HOLDOUT_NEEDED,
    INTERVAL,
    VC_ALLOWANCE,
    TRAIN_NEEDED,
    // Last: the codes are also listed, with their sentences, under the table.
    FINDINGS,
];

/// Run names are kept whole up to this many characters before an optional column is
/// shown, and wrap at [`RUN_NARROWEST`] when even the fixed columns do not fit.
const RUN_COMFORTABLE_WIDTH: u16 = 16;
const RUN_NARROWEST: u16 = 8;

/// The headers, in display order (`method` names the two-sided interval).
pub fn headers(method: &str) -> [String; 14] {
    [
        "verdict".into(),
        "run".into(),
        "held-out error".into(),
        "claimed accuracy".into(),
        "lower bound".into(),
        "upper bound".into(),
        "K".into(),
        "errors / examples".into(),
        "certifiable accuracy".into(),
        "held-out needed".into(),
        format!("{method} interval"),
        "VC allowance".into(),
        "train needed".into(),
        "findings".into(),
    ]
}

/// Renders the table of the runs `presentation` shows, worst first, then why each
/// run got its verdict (the explanation and the findings in words), the summary and
/// the cautions. On a terminal narrower than the table (`presentation.width`), cells
/// wrap at spaces, never inside a number, verdict or code; optional columns that do
/// not fit are left out ([`OPTIONAL_BY_PRIORITY`]), and a line says which. Without a
/// width every column is printed.
pub fn write_table(
    doc: &AuditDocument,
    out: &mut dyn Write,
    presentation: &Presentation,
) -> io::Result<()> {
    super::claims::write_claims_text(&doc.claims, out, presentation.width)?;
    let (shown, left_out) = shown_runs(&doc.runs, doc.summary.runs, presentation);
    let color = presentation.color;
    let width = presentation.width;
    let mut table = Table::new();
    table
        .load_preset(presets::UTF8_FULL_CONDENSED)
        .force_no_tty();
    if color {
        table.enforce_styling();
    }
    table.set_header(headers(doc.settings.holdout_bound.as_str()).to_vec());
    for run in &shown {
        table.add_row(row_cells(
            run,
            &doc.claims,
            color,
            doc.settings.holdout_bound,
        ));
    }
    for column in 2..13 {
        if let Some(c) = table.column_mut(column) {
            c.set_cell_alignment(CellAlignment::Right);
        }
    }
    let hidden = width
        .map(|width| fit_to_width(&mut table, width))
        .unwrap_or_default();
    if !shown.is_empty() {
        writeln!(out, "{table}")?;
    }
    if !hidden.is_empty() {
        writeln!(
            out,
            "{}",
            wrap(
                &format!(
                    "Left out to fit the terminal ({} columns): {}. A wider terminal, or --format markdown, csv or json, shows every column.",
                    width.unwrap_or_default(),
                    hidden.join(", ")
                ),
                width,
                "",
                ""
            )
        )?;
    }
    if let Some(line) = left_out_line(shown.len(), left_out, presentation) {
        writeln!(out, "{}", wrap(&line, width, "", ""))?;
    }
    if !shown.is_empty() {
        writeln!(out)?;
        writeln!(out, "Why:")?;
        let settings = doc.settings.audit_settings();
        for run in &shown {
            let name = printable(&run.run);
            writeln!(
                out,
                "{}",
                wrap(
                    &super::text::why_text(run, &doc.claims),
                    width,
                    &format!("  {name}: "),
                    "      "
                )
            )?;
            if let Some(carried) = super::text::carried_line(run) {
                writeln!(
                    out,
                    "{}",
                    wrap(&printable(&carried), width, "    · ", "      ")
                )?;
            }
            for finding in &run.findings {
                let message = crate::audit::explain::finding_sentence(run, finding, &settings);
                writeln!(
                    out,
                    "{}",
                    wrap(
                        &format!("{}: {}", finding.code.as_str(), printable(&message)),
                        width,
                        "    · ",
                        "      "
                    )
                )?;
            }
        }
    }
    writeln!(out)?;
    super::splits::write_splits_text(&doc.splits, out, width)?;
    writeln!(out, "{}", wrap(&summary_line(doc), width, "", ""))?;
    writeln!(out)?;
    for caution in &doc.cautions {
        writeln!(out, "{}", wrap(caution, width, "  note: ", "        "))?;
    }
    Ok(())
}

/// Hides the optional columns of `table` that do not fit in `width` characters (see
/// [`OPTIONAL_BY_PRIORITY`]) and returns their headers. Every column may wrap at spaces but
/// never inside a word (a number, a verdict, a finding's code), except run names,
/// which may break on a narrow terminal (see [`RUN_COMFORTABLE_WIDTH`]).
fn fit_to_width(table: &mut Table, width: u16) -> Vec<String> {
    let headers: Vec<String> = match table.header() {
        Some(header) => header.cell_iter().map(|cell| cell.content()).collect(),
        None => return Vec::new(),
    };
    let longest_word: Vec<u16> = (0..headers.len())
        .map(|column| {
            let longest = std::iter::once(headers[column].clone())
                .chain(
                    table
                        .column_cells_iter(column)
                        .flatten()
                        .map(|cell| cell.content()),
                )
                .flat_map(|text| {
                    text.split_whitespace()
                        .map(|word| word.chars().count())
                        .max()
                })
                .max()
                .unwrap_or(1);
            u16::try_from(longest).unwrap_or(u16::MAX)
        })
        .collect();
    let mut narrowest = longest_word.clone();
    narrowest[RUN] = narrowest[RUN].min(RUN_COMFORTABLE_WIDTH);
    // Each shown column adds its content, one space of padding on each side and one
    // border; the table adds one more border.
    let cost = |content: u16| usize::from(content) + 3;
    let mut shown: Vec<bool> = (0..headers.len())
        .map(|column| !OPTIONAL_BY_PRIORITY.contains(&column))
        .collect();
    let mut used = 1
        + (0..headers.len())
            .filter(|&c| shown[c])
            .map(|c| cost(narrowest[c]))
            .sum::<usize>();
    // A terminal too narrow even for the fixed columns narrows the run names.
    let overflow = u16::try_from(used.saturating_sub(usize::from(width))).unwrap_or(u16::MAX);
    if overflow > 0 {
        let floor = narrowest[RUN].min(RUN_NARROWEST);
        let run = narrowest[RUN].saturating_sub(overflow).max(floor);
        used -= usize::from(narrowest[RUN] - run);
        narrowest[RUN] = run;
    }
    // Optional columns join in priority order while they fit; one that does not fit
    // leaves room for a narrower one after it.
    for column in OPTIONAL_BY_PRIORITY {
        if column < headers.len() && used + cost(narrowest[column]) <= usize::from(width) {
            shown[column] = true;
            used += cost(narrowest[column]);
        }
    }
    let hidden = (0..headers.len())
        .filter(|&c| !shown[c])
        .map(|c| headers[c].clone())
        .collect();
    // Room left over goes to the run names first, so that they break only when they must.
    let spare = u16::try_from(usize::from(width).saturating_sub(used)).unwrap_or(0);
    narrowest[RUN] = longest_word[RUN].min(narrowest[RUN].saturating_add(spare));
    for (column, &show) in shown.iter().enumerate() {
        let constraint = if show {
            // comfy-table's widths include the two spaces of padding.
            ColumnConstraint::LowerBoundary(Width::Fixed(narrowest[column].saturating_add(2)))
        } else {
            ColumnConstraint::Hidden
        };
        if let Some(c) = table.column_mut(column) {
            c.set_constraint(constraint);
        }
    }
    table
        .set_width(width)
        .set_content_arrangement(ContentArrangement::Dynamic);
    hidden
}

fn row_cells(
    run: &RunResult,
    claims: &[crate::audit::claims::ClaimResult],
    color: bool,
    method: crate::audit::HoldoutBound,
) -> Vec<Cell> {
    let (shown_verdict, verdict_words) = super::text::verdict_text(run, claims);
    let verdict = Cell::new(printable(&verdict_words));
    let verdict = if color {
        match shown_verdict {
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
    let dash = || "—".to_string();
    vec![
        verdict,
        Cell::new(printable(&run.run)),
        Cell::new(percent(run.holdout_error_rate)),
        Cell::new(
            run.claim_error_rate
                .map(|c| percent(1.0 - c))
                .unwrap_or_else(dash),
        ),
        Cell::new(percent(run.error_lower_bound)),
        Cell::new(percent(run.error_upper_bound)),
        Cell::new(group_thousands(run.candidates)),
        Cell::new(format!("{}/{}", run.holdout_misclassified, run.holdout_n)),
        Cell::new(percent(run.certifiable_accuracy)),
        Cell::new(run.holdout_needed.map(group_thousands).unwrap_or_else(dash)),
        // No spaces: the interval never breaks across lines.
        Cell::new(format!("{}–{}", percent(interval[0]), percent(interval[1]))),
        Cell::new(
            run.vc_allowance
                .map(|a| format!("{a:.3}"))
                .unwrap_or_else(dash),
        ),
        Cell::new(run.train_needed.map(group_thousands).unwrap_or_else(dash)),
        Cell::new(
            run.findings
                .iter()
                .map(|f| f.code.as_str())
                .collect::<Vec<_>>()
                .join(", "),
        ),
    ]
}

#[cfg(test)]
mod tests {
    use super::*;
    use crate::audit::AuditSettings;
    use crate::ingest::IngestSettings;

    /// The demo's headers (the default binomial bound).
    fn all_headers() -> [String; 14] {
        headers("binomial")
    }

    fn demo_table(width: Option<u16>) -> (AuditDocument, String) {
        let doc = crate::audit_sources(
            &crate::demo::sources(),
            &AuditSettings::default(),
            &IngestSettings::default(),
        )
        .expect("the demo logs audit");
        let mut out = Vec::new();
        let presentation = Presentation {
            width,
            ..Presentation::default()
        };
        write_table(&doc, &mut out, &presentation).expect("writing to memory");
        (doc, String::from_utf8(out).expect("UTF-8"))
    }

    fn table_lines(text: &str) -> Vec<&str> {
        text.lines()
            .filter(|line| line.starts_with(['┌', '│', '╞', '├', '└']))
            .collect()
    }

    #[test]
    fn without_a_terminal_every_column_is_printed_on_one_line() {
        let (_, text) = demo_table(None);
        let header = table_lines(&text)[1];
        for name in all_headers() {
            assert!(
                header.contains(name.as_str()),
                "{name} missing from {header}"
            );
        }
        assert!(!text.contains("Left out"));
    }

    #[test]
    fn narrow_terminals_get_whole_words_and_a_note_of_what_is_left_out() {
        for width in [60u16, 72, 80, 100, 120, 160, 240] {
            let (doc, text) = demo_table(Some(width));
            let lines = table_lines(&text);
            for line in &lines {
                assert!(
                    line.chars().count() <= usize::from(width),
                    "{width} columns: line too wide: {line}"
                );
            }
            // Verdicts and the numbers that decide them are never broken: each run's
            // verdict, claim and upper bound appear whole on the run's first line. A
            // row starts where the verdict cell is filled; its run name is the run
            // cells of its lines put together (names may wrap on narrow terminals).
            let body = lines
                .iter()
                .skip_while(|line| !line.starts_with('╞'))
                .skip(1)
                .take_while(|line| line.starts_with('│'));
            let mut rows: Vec<(String, &str)> = Vec::new();
            for line in body {
                let cells: Vec<&str> = line.trim_matches('│').split('┆').map(str::trim).collect();
                if !cells[0].is_empty() {
                    rows.push((String::new(), line));
                }
                if let Some((name, _)) = rows.last_mut() {
                    name.push_str(cells[1]);
                }
            }
            assert_eq!(rows.len(), doc.runs.len(), "{width} columns\n{text}");
            for run in &doc.runs {
                let (_, first) = rows
                    .iter()
                    .find(|(name, _)| *name == run.run)
                    .unwrap_or_else(|| {
                        panic!("{width} columns: run {} not found\n{text}", run.run)
                    });
                assert!(first.contains(run.verdict.as_str()), "{width}: {first}");
                assert!(
                    first.contains(&percent(run.error_upper_bound)),
                    "{width}: {first}"
                );
                assert!(
                    first.contains(&percent(run.error_lower_bound)),
                    "{width}: {first}"
                );
                if let Some(claim) = run.claim_error_rate {
                    assert!(first.contains(&percent(1.0 - claim)), "{width}: {first}");
                }
            }
            // Every column is either in the header or named in the note, not both.
            let header_lines: Vec<&str> = lines[1..]
                .iter()
                .take_while(|line| !line.starts_with('╞'))
                .copied()
                .collect();
            let mut headers: Vec<String> = Vec::new();
            for line in &header_lines {
                let cells = line.trim_matches('│').split('┆');
                for (index, cell) in cells.enumerate() {
                    if headers.len() <= index {
                        headers.push(String::new());
                    }
                    let words = cell.trim();
                    if !words.is_empty() {
                        if !headers[index].is_empty() {
                            headers[index].push(' ');
                        }
                        headers[index].push_str(words);
                    }
                }
            }
            // The note may wrap: its lines up to the next blank line.
            let note_text: Option<String> = text.find("Left out").map(|at| {
                text[at..]
                    .split("\n\n")
                    .next()
                    .unwrap_or("")
                    .replace('\n', " ")
            });
            let note = note_text.as_deref();
            for name in all_headers() {
                let shown = headers.contains(&name);
                let noted = note.is_some_and(|note| note.contains(name.as_str()));
                assert!(
                    shown != noted,
                    "{width} columns: {name} shown {shown}, noted {noted}\n{text}"
                );
            }
            if width >= 240 {
                assert!(note.is_none(), "{text}");
            }
        }
    }
}
