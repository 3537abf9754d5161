//! The terminal table: worst runs first, a one-line summary and the cautions.

use std::io::{self, Write};

use comfy_table::{
    presets, Attribute, Cell, CellAlignment, Color, ColumnConstraint, ContentArrangement, Table,
    Width,
};

use super::document::AuditDocument;
use super::text::{group_thousands, percent, printable, sorted_worst_first, summary_line};
use crate::audit::{RunResult, Verdict};

/// Column indices of the table, in display order.
const RUN: usize = 1;
const INTERVAL: usize = 3;
const VC_ALLOWANCE: usize = 6;
const HOLDOUT_NEEDED: usize = 7;
const TRAIN_NEEDED: usize = 8;
const FINDINGS: usize = 9;

/// The columns shown only when they fit, most useful first. The verdict, the run, its
/// held-out error, the claim and the upper bound that decides the verdict always
/// stay.
const OPTIONAL_BY_PRIORITY: [usize; 5] = [
    FINDINGS,
    HOLDOUT_NEEDED,
    INTERVAL,
    VC_ALLOWANCE,
    TRAIN_NEEDED,
];

/// Run names are kept whole up to this many characters before an optional column is
/// shown, and wrap at [`RUN_NARROWEST`] when even the fixed columns do not fit.
const RUN_COMFORTABLE_WIDTH: u16 = 16;
const RUN_NARROWEST: u16 = 8;

/// Renders the table; `color` only when writing to a terminal without `NO_COLOR`.
/// `width` is the terminal's width (None when not writing to a terminal: then every
/// column is printed at full width). On a narrower terminal, cells wrap at spaces,
/// never inside a number, verdict or code; optional columns that do not fit that way
/// are left out ([`OPTIONAL_BY_PRIORITY`]), and a line says which.
pub fn write_table(
    doc: &AuditDocument,
    out: &mut dyn Write,
    color: bool,
    width: Option<u16>,
) -> io::Result<()> {
    let mut table = Table::new();
    table
        .load_preset(presets::UTF8_FULL_CONDENSED)
        .force_no_tty();
    if color {
        table.enforce_styling();
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
    let hidden = width
        .map(|width| fit_to_width(&mut table, width))
        .unwrap_or_default();
    writeln!(out, "{table}")?;
    if !hidden.is_empty() {
        writeln!(
            out,
            "Left out to fit the terminal ({} columns): {}. A wider terminal, or --format markdown, csv or json, shows every column.",
            width.unwrap_or_default(),
            hidden.join(", ")
        )?;
    }
    writeln!(out, "{}", summary_line(doc))?;
    writeln!(out)?;
    for caution in &doc.cautions {
        writeln!(out, "  note: {caution}")?;
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

#[cfg(test)]
mod tests {
    use super::*;
    use crate::audit::AuditSettings;
    use crate::ingest::IngestSettings;

    /// The demo's headers (the default binomial bound).
    const ALL_HEADERS: [&str; 10] = [
        "verdict",
        "run",
        "held-out error",
        "binomial interval",
        "claim",
        "upper bound",
        "VC allowance",
        "held-out needed",
        "train needed",
        "findings",
    ];

    fn demo_table(width: Option<u16>) -> (AuditDocument, String) {
        let doc = crate::audit_sources(
            &crate::demo::sources(),
            &AuditSettings::default(),
            &IngestSettings::default(),
        )
        .expect("the demo logs audit");
        let mut out = Vec::new();
        write_table(&doc, &mut out, false, width).expect("writing to memory");
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
        for name in ALL_HEADERS {
            assert!(header.contains(name), "{name} missing from {header}");
        }
        assert!(!text.contains("Left out"));
    }

    #[test]
    fn narrow_terminals_get_whole_words_and_a_note_of_what_is_left_out() {
        for width in [60u16, 72, 80, 100, 120, 160] {
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
                if let Some(claim) = run.claim_error_rate {
                    assert!(first.contains(&percent(claim)), "{width}: {first}");
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
            let note = text.lines().find(|line| line.starts_with("Left out"));
            for name in ALL_HEADERS {
                let shown = headers.iter().any(|header| header == name);
                let noted = note.is_some_and(|note| note.contains(name));
                assert!(
                    shown != noted,
                    "{width} columns: {name} shown {shown}, noted {noted}\n{text}"
                );
            }
            if width >= 160 {
                assert!(note.is_none(), "{text}");
            }
        }
    }
}
