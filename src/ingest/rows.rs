//! Turning one table into validated runs: per-row choice among the rate, accuracy and
//! count columns, range and consistency checks, family resolution.

use chrono::{DateTime, NaiveDate, NaiveDateTime, Utc};

use polars::prelude::{DataFrame, Series};
use rayon::prelude::*;

use super::columns::{
    bind_columns, cell_kind, column_name, extract_f64, extract_i64, text_cells, text_series,
    CellKind, FIRST_PARAMETER_SLOT, FIRST_SLOT_AFTER_PARAMETERS,
};
use super::settings::IngestSettings;
use crate::decimal::{complement, percent_to_fraction};
use crate::error::Problem;
use crate::run::{ClaimForm, RunInput};
use crate::theory::growth::{resolve, FamilyParams, FAMILY_PARAMETERS};

/// Accuracy and error rate logged together must sum to 1 within this (SPEC §3).
const ACCURACY_RATE_TOLERANCE: f64 = 1e-6;
/// A count and a rate logged together may differ by half a count (rounding of the
/// count) plus this much on the rate scale (rates logged with three or more decimals).
const COUNT_RATE_TOLERANCE: f64 = 5e-4;

/// The typed cells of one canonical column, and the problems of the cells that do
/// not read as their kind.
fn extract_column<'a>(
    label: &str,
    df: &DataFrame,
    decimal_comma: bool,
    binding: &super::columns::ColumnBinding,
    (name, kind): (&'static str, CellKind),
    text: &'a Option<Series>,
) -> (ColumnCells<'a>, Vec<Problem>) {
    let mut problems = Vec::new();
    let cells = match (binding.index.get(name), kind) {
        (None, _) => ColumnCells::Absent,
        (Some(&index), CellKind::Float) => {
            ColumnCells::Float(extract_f64(label, df, index, decimal_comma, &mut problems))
        }
        (Some(&index), CellKind::Integer) => {
            ColumnCells::Integer(extract_i64(label, df, index, &mut problems))
        }
        (Some(_), CellKind::Text) => match text {
            Some(series) => ColumnCells::Text(text_cells(series)),
            None => ColumnCells::Absent,
        },
    };
    (cells, problems)
}

/// Tables with fewer rows than this are read on one thread.
const PARALLEL_ROWS: usize = 4096;

/// A row that `--lenient` skipped, with every reason.
#[derive(Clone, Debug, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct SkippedRow {
    pub source: String,
    pub reasons: Vec<String>,
    /// The row carried a claim (a claim cell, or `--claim-accuracy` applied to it):
    /// the gate fails on it, since the claim could not be audited.
    #[serde(default)]
    pub carries_claim: bool,
}

/// The runs of one table plus the problems of the rows that could not be used.
pub struct TableRuns {
    pub runs: Vec<RunInput>,
    /// Problems per bad row, in row order (each inner list non-empty).
    pub bad_rows: Vec<(usize, Vec<Problem>)>,
    /// The rows of `bad_rows` that carry a claim (a claim cell, or
    /// `--claim-accuracy`).
    pub claim_rows: Vec<usize>,
    /// Problems that concern the whole file (a missing required column).
    pub file_problems: Vec<Problem>,
    /// Rates, accuracies and claims seen, and whether any was above 1 (for the check
    /// that a file read with `--percent` holds percentages).
    pub scale: ScaleEvidence,
    /// Renames that did not apply to this file (said under `-v`).
    pub notes: Vec<String>,
    /// Per `--keep` name: whether this file has the column.
    pub kept_found: Vec<bool>,
}

/// What a file's rate, accuracy and claim cells say about their scale.
#[derive(Clone, Copy, Debug, Default, PartialEq, Eq)]
pub struct ScaleEvidence {
    pub values: usize,
    pub above_one: bool,
}

impl ScaleEvidence {
    pub fn add(&mut self, other: ScaleEvidence) {
        self.values += other.values;
        self.above_one |= other.above_one;
    }
}

/// The rate, accuracy and claim columns, whose scale `--percent` sets.
const SCALED_COLUMNS: [&str; 6] = [
    "train_error_rate",
    "train_accuracy",
    "holdout_error_rate",
    "holdout_accuracy",
    "claimed_accuracy",
    "claimed_error_rate",
];

/// When a delimited file was read as one column whose name holds another separator
/// (a semicolon-separated export saved as `.csv`), says so: otherwise the only
/// message is a missing column that the user can see in their header.
fn other_separator_hint(df: &DataFrame) -> String {
    let names = df.get_column_names();
    let [name] = names.as_slice() else {
        return String::new();
    };
    let name = name.as_str();
    let Some(separator) = [';', '\t', '|'].into_iter().find(|&c| name.contains(c)) else {
        return String::new();
    };
    let shown: String = name.chars().take(60).collect();
    let ellipsis = if shown.len() < name.len() { "…" } else { "" };
    let advice = match separator {
        '\t' => "the file looks tab-separated: name it .tsv",
        ';' => "the file looks semicolon-separated, but .csv files are read as comma-separated and .tsv files as tab-separated",
        _ => "the file looks separated by vertical bars, but .csv files are read as comma-separated and .tsv files as tab-separated",
    };
    format!(
        " (the header was read as the single column `{}{ellipsis}`; {advice})",
        shown.escape_debug()
    )
}

/// Reads every run of `df`, a batch of rows that starts after `row_offset` rows of
/// its file. `label` names the file in `source` and in problems; `cell_problems` are
/// numbered within the batch, and every row number that comes out is the file's.
pub fn table_runs(
    label: &str,
    df: &DataFrame,
    row_offset: usize,
    settings: &IngestSettings,
    mut cell_problems: Vec<Problem>,
) -> TableRuns {
    let binding = bind_columns(df, &settings.column_map);
    let height = df.height();
    let mut file_problems: Vec<Problem> = binding
        .ambiguities
        .iter()
        .map(|message| Problem::file(label, message.clone()))
        .collect();
    let has = |name: &str| binding.index.contains_key(name);
    let header: Vec<&str> = df.get_column_names().iter().map(|n| n.as_str()).collect();
    let mapped = |canonical: &str| {
        settings
            .column_map
            .iter()
            .find(|(c, _)| c == canonical)
            .map(|(_, theirs)| {
                format!(
                    " (mapped to `{theirs}`: {})",
                    super::columns::missing_mapped_hint(theirs, &header)
                )
            })
    };
    let ambiguous = |name: &str| binding.ambiguities.iter().any(|a| a.contains(name));
    if !has("holdout_n") && !ambiguous("holdout_n") {
        file_problems.push(Problem::file(
            label,
            match mapped("holdout_n") {
                Some(why) => format!("missing required column holdout_n{why}{}", other_separator_hint(df)),
                None => format!(
                    "missing required column holdout_n; use --map holdout_n=<your column> if it has another name{}",
                    other_separator_hint(df)
                ),
            },
        ));
    }
    let error_columns = [
        "holdout_error_rate",
        "holdout_accuracy",
        "holdout_misclassified",
    ];
    if !error_columns.iter().any(|c| has(c)) && !error_columns.iter().any(|c| ambiguous(c)) {
        let why: Vec<String> = error_columns
            .iter()
            .filter_map(|c| mapped(c).map(|why| format!("{c}{why}")))
            .collect();
        file_problems.push(Problem::file(
            label,
            if why.is_empty() {
                "missing held-out error: need one of the columns holdout_error_rate, holdout_accuracy or holdout_misclassified (or --map one to your column)".to_string()
            } else {
                format!("missing held-out error: {}", why.join("; "))
            },
        ));
    }
    if !file_problems.is_empty() {
        return TableRuns {
            runs: Vec::new(),
            bad_rows: Vec::new(),
            claim_rows: Vec::new(),
            file_problems,
            scale: ScaleEvidence::default(),
            notes: Vec::new(),
            kept_found: Vec::new(),
        };
    }

    // Extract every canonical column (in parallel: each is an independent pass).
    let specs: Vec<(&'static str, CellKind)> = super::columns::CANONICAL_COLUMNS
        .iter()
        .map(|&name| (name, cell_kind(name)))
        .collect();
    // `--keep` columns, as text (absent from this file: empty).
    let kept_columns: Vec<Option<Series>> = settings
        .keep
        .iter()
        .map(|name| {
            header
                .iter()
                .position(|column| column.trim().eq_ignore_ascii_case(name))
                .and_then(|index| text_series(df, index))
        })
        .collect();
    let kept_found: Vec<bool> = kept_columns.iter().map(Option::is_some).collect();
    let kept_cells: Vec<Vec<Option<&str>>> = kept_columns
        .iter()
        .map(|series| match series {
            Some(series) => text_cells(series),
            None => vec![None; height],
        })
        .collect();
    // Text cells are borrowed from these Series (kept alive for the whole table).
    let text_columns: Vec<Option<Series>> = specs
        .iter()
        .map(|&(name, kind)| match (binding.index.get(name), kind) {
            (Some(&index), CellKind::Text) => text_series(df, index),
            _ => None,
        })
        .collect();
    // Columns are independent passes: in parallel, except for small tables (a sweep's
    // one-run files), where handing work to threads costs more than it saves.
    let extracted: Vec<(ColumnCells<'_>, Vec<Problem>)> = if height < PARALLEL_ROWS {
        specs
            .iter()
            .zip(text_columns.iter())
            .map(|(spec, text)| {
                extract_column(label, df, settings.decimal_comma, &binding, *spec, text)
            })
            .collect()
    } else {
        specs
            .par_iter()
            .zip(text_columns.par_iter())
            .map(|(spec, text)| {
                extract_column(label, df, settings.decimal_comma, &binding, *spec, text)
            })
            .collect()
    };
    let mut columns: Vec<ColumnCells<'_>> = Vec::with_capacity(extracted.len());
    // A column of a type that holds no numbers (a list, say) is one problem of the
    // file; its empty cells are not problems of every row as well.
    let mut unreadable: Vec<bool> = Vec::with_capacity(extracted.len());
    for (cells, mut problems) in extracted {
        unreadable.push(problems.iter().any(|problem| problem.row.is_none()));
        cell_problems.append(&mut problems);
        columns.push(cells);
    }
    // A malformed file can decode into a column shorter or longer than the table
    // (found by fuzzing: fuzz/regressions/ingest_parquet-short-column.parquet).
    for (&(canonical, _), cells) in specs.iter().zip(&columns) {
        let length = match cells {
            ColumnCells::Absent => continue,
            ColumnCells::Float(cells) => cells.len(),
            ColumnCells::Integer(cells) => cells.len(),
            ColumnCells::Text(cells) => cells.len(),
        };
        if length != height {
            let name = binding
                .index
                .get(canonical)
                .map(|&index| column_name(df, index))
                .unwrap_or_else(|| canonical.to_string());
            file_problems.push(Problem::file(
                label,
                format!("the file is malformed: column {name} holds {length} values but the table has {height} rows"),
            ));
        }
    }
    if !file_problems.is_empty() {
        return TableRuns {
            runs: Vec::new(),
            bad_rows: Vec::new(),
            claim_rows: Vec::new(),
            file_problems,
            scale: ScaleEvidence::default(),
            notes: Vec::new(),
            kept_found: Vec::new(),
        };
    }
    let names: Vec<String> = super::columns::CANONICAL_COLUMNS
        .iter()
        .map(|&canonical| {
            binding
                .index
                .get(canonical)
                .map(|&index| column_name(df, index))
                .unwrap_or_else(|| canonical.to_string())
        })
        .collect();
    let table = Extracted {
        label,
        row_offset,
        settings,
        columns,
        unreadable,
        names,
        kept: kept_cells,
    };

    let mut scale = ScaleEvidence::default();
    for canonical in SCALED_COLUMNS {
        if let Some(ColumnCells::Float(cells)) = table.columns.get(slot(canonical)) {
            for value in cells.iter().flatten() {
                scale.values += 1;
                scale.above_one |= *value > 1.0;
            }
        }
    }

    // Problems found while typing cells, grouped by row.
    let mut row_problems: Vec<Vec<Problem>> = vec![Vec::new(); height];
    for mut problem in cell_problems.drain(..) {
        match problem.row {
            Some(row) if row >= 1 && row <= height => {
                problem.row = Some(row + row_offset);
                row_problems[row - 1].push(problem)
            }
            Some(row) => {
                problem.row = Some(row + row_offset);
                file_problems.push(problem)
            }
            None => file_problems.push(problem),
        }
    }

    // Rows are independent: assemble them in parallel, keeping their order (rayon's
    // partition keeps the order within each side), straight into runs and bad rows.
    let assemble = |(i, found): (usize, Vec<Problem>)| match table.assemble(i, found) {
        Ok(run) => rayon::iter::Either::Left(run),
        Err(problems) => rayon::iter::Either::Right((row_offset + i + 1, problems)),
    };
    let (runs, bad_rows): (Vec<RunInput>, Vec<(usize, Vec<Problem>)>) = if height < PARALLEL_ROWS {
        let mut runs = Vec::with_capacity(height);
        let mut bad_rows = Vec::new();
        for item in row_problems.into_iter().enumerate() {
            match assemble(item) {
                rayon::iter::Either::Left(run) => runs.push(run),
                rayon::iter::Either::Right(bad) => bad_rows.push(bad),
            }
        }
        (runs, bad_rows)
    } else {
        row_problems
            .into_par_iter()
            .enumerate()
            .partition_map(assemble)
    };
    let claim_rows = bad_rows
        .iter()
        .filter(|(row, problems)| table.carries_claim(row - row_offset - 1, problems))
        .map(|(row, _)| *row)
        .collect();
    TableRuns {
        runs,
        bad_rows,
        claim_rows,
        file_problems,
        scale,
        notes: binding.notes,
        kept_found,
    }
}

/// The position of a canonical column in `CANONICAL_COLUMNS` (resolved at compile
/// time for the literal names used here, so the per-cell lookups cost nothing; the
/// family parameters, read in a loop, are found by their position).
#[inline(always)]
fn slot(canonical: &str) -> usize {
    const AFTER: usize = FIRST_SLOT_AFTER_PARAMETERS;
    match canonical {
        "run" => 0,
        "family" => 1,
        "train_n" => AFTER,
        "train_error_rate" => AFTER + 1,
        "train_accuracy" => AFTER + 2,
        "train_misclassified" => AFTER + 3,
        "holdout_n" => AFTER + 4,
        "holdout_error_rate" => AFTER + 5,
        "holdout_accuracy" => AFTER + 6,
        "holdout_misclassified" => AFTER + 7,
        "holdout_set" => AFTER + 8,
        "candidates" => AFTER + 9,
        "claimed_accuracy" => AFTER + 10,
        "claimed_error_rate" => AFTER + 11,
        "logged_at" => AFTER + 12,
        parameter => FAMILY_PARAMETERS
            .iter()
            .position(|p| *p == parameter)
            .map_or(usize::MAX, |index| FIRST_PARAMETER_SLOT + index),
    }
}

enum ColumnCells<'a> {
    Absent,
    Float(Vec<Option<f64>>),
    Integer(Vec<Option<i64>>),
    Text(Vec<Option<&'a str>>),
}

/// The typed columns of one table, and what is needed to assemble its rows. The
/// accessors are always inlined so that [`slot`] of a literal name folds to a constant.
struct Extracted<'a> {
    label: &'a str,
    /// Rows of the file before this batch.
    row_offset: usize,
    settings: &'a IngestSettings,
    /// In the order of `CANONICAL_COLUMNS`.
    columns: Vec<ColumnCells<'a>>,
    /// Per column, in the same order: the whole column could not be read (its type
    /// holds no numbers), which is already a problem of the file.
    unreadable: Vec<bool>,
    /// The column name as written in the file, per canonical field in the order of
    /// `CANONICAL_COLUMNS` (for messages).
    names: Vec<String>,
    /// The `--keep` columns' cells.
    kept: Vec<Vec<Option<&'a str>>>,
}

impl Extracted<'_> {
    #[inline(always)]
    fn float(&self, canonical: &str, i: usize) -> Option<f64> {
        match self.columns.get(slot(canonical)) {
            Some(ColumnCells::Float(cells)) => cells[i],
            _ => None,
        }
    }

    #[inline(always)]
    fn integer(&self, canonical: &str, i: usize) -> Option<i64> {
        self.integer_at(slot(canonical), i)
    }

    #[inline(always)]
    fn integer_at(&self, slot: usize, i: usize) -> Option<i64> {
        match self.columns.get(slot) {
            Some(ColumnCells::Integer(cells)) => cells[i],
            _ => None,
        }
    }

    #[inline(always)]
    fn text(&self, canonical: &str, i: usize) -> Option<&str> {
        match self.columns.get(slot(canonical)) {
            Some(ColumnCells::Text(cells)) => cells[i],
            _ => None,
        }
    }

    #[inline(always)]
    fn unreadable(&self, canonical: &str) -> bool {
        self.unreadable
            .get(slot(canonical))
            .copied()
            .unwrap_or(false)
    }

    #[inline(always)]
    fn name(&self, canonical: &str) -> &str {
        self.names
            .get(slot(canonical))
            .map(String::as_str)
            .unwrap_or("")
    }

    /// Whether row `i` (0-based) carries a claim: a claim cell (readable or not), or
    /// `--claim-accuracy`, which applies to every row without one.
    fn carries_claim(&self, i: usize, problems: &[Problem]) -> bool {
        let columns = ["claimed_accuracy", "claimed_error_rate"];
        self.settings.default_claim_accuracy.is_some()
            || columns.iter().any(|column| self.float(column, i).is_some())
            || problems.iter().any(|problem| {
                problem.column.as_deref().is_some_and(|name| {
                    columns
                        .iter()
                        .any(|column| !self.name(column).is_empty() && self.name(column) == name)
                })
            })
    }

    /// Validates row `i` (0-based) into a run, or returns every problem of the row.
    fn assemble(&self, i: usize, mut found: Vec<Problem>) -> Result<RunInput, Vec<Problem>> {
        // A problem without a column before any check is a record that could not be
        // read at all (invalid JSON, or JSON that is not an object): its cells are all
        // missing, and saying so column by column would only repeat that.
        if found.iter().any(|problem| problem.column.is_none()) {
            return Err(found);
        }
        let label = self.label;
        let settings = self.settings;
        let row = self.row_offset + i + 1;
        let scale = if settings.percent { 100.0 } else { 1.0 };
        let range_text = if settings.percent {
            "[0, 100]"
        } else {
            "[0, 1]"
        };
        let mut check_fraction = |canonical: &'static str| -> Option<f64> {
            let value = self.float(canonical, i)?;
            if (0.0..=scale).contains(&value) {
                return Some(if settings.percent {
                    percent_to_fraction(value)
                } else {
                    value
                });
            }
            let name = self.name(canonical);
            if value.is_nan() {
                found.push(Problem::cell(label, row, name, format!("{name} is NaN")));
            } else if value.is_infinite() {
                found.push(Problem::cell(
                    label,
                    row,
                    name,
                    format!("{name} = {value} is not finite"),
                ));
            } else {
                let hint = if !settings.percent && value <= 100.0 && value > 1.0 {
                    " (pass --percent if the logs hold percentages)"
                } else {
                    ""
                };
                found.push(Problem::cell(
                    label,
                    row,
                    name,
                    format!("{name} = {value} is outside {range_text}{hint}"),
                ));
            }
            None
        };
        let t_rate = check_fraction("train_error_rate");
        let t_accuracy = check_fraction("train_accuracy");
        let h_rate = check_fraction("holdout_error_rate");
        let h_accuracy = check_fraction("holdout_accuracy");
        let c_accuracy = check_fraction("claimed_accuracy");
        let c_error = check_fraction("claimed_error_rate");

        let mut positive_count = |canonical: &'static str| -> Option<u64> {
            let value = self.integer(canonical, i)?;
            if value < 1 {
                let name = self.name(canonical);
                found.push(Problem::cell(
                    label,
                    row,
                    name,
                    format!("{name} = {value} must be at least 1"),
                ));
                None
            } else {
                Some(value as u64)
            }
        };
        let h_n = positive_count("holdout_n");
        let t_n = positive_count("train_n");
        let k_candidates = positive_count("candidates");

        let holdout_n_name = self.name("holdout_n");
        if self.integer("holdout_n", i).is_none()
            && !row_has_problem_in(&found, holdout_n_name)
            && !self.unreadable("holdout_n")
        {
            found.push(Problem::cell(
                label,
                row,
                holdout_n_name,
                format!("{holdout_n_name} is empty (required)"),
            ));
        }

        let holdout_count = self.integer("holdout_misclassified", i);
        let holdout = error_of_row(
            label,
            row,
            ErrorColumns {
                rate: (self.name("holdout_error_rate"), h_rate),
                accuracy: (self.name("holdout_accuracy"), h_accuracy),
                count: (self.name("holdout_misclassified"), holdout_count),
            },
            h_n,
            row_has_problem_in(&found, holdout_n_name),
            &mut found,
        );
        // A cell that did not parse is already reported; it is not "empty".
        let unparsed = || {
            [
                "holdout_error_rate",
                "holdout_accuracy",
                "holdout_misclassified",
            ]
            .iter()
            .any(|&canonical| {
                let name = self.name(canonical);
                self.unreadable(canonical) || (!name.is_empty() && row_has_problem_in(&found, name))
            })
        };
        if holdout.is_none()
            && self.float("holdout_error_rate", i).is_none()
            && self.float("holdout_accuracy", i).is_none()
            && holdout_count.is_none()
            && !unparsed()
        {
            found.push(Problem::row(
                label,
                row,
                "no held-out error: holdout_error_rate, holdout_accuracy and holdout_misclassified are all empty",
            ));
        }
        let train = error_of_row(
            label,
            row,
            ErrorColumns {
                rate: (self.name("train_error_rate"), t_rate),
                accuracy: (self.name("train_accuracy"), t_accuracy),
                count: (
                    self.name("train_misclassified"),
                    self.integer("train_misclassified", i),
                ),
            },
            t_n,
            row_has_problem_in(&found, self.name("train_n")),
            &mut found,
        );

        // The claim, as an error rate.
        let claim_error_rate = match (c_error, c_accuracy) {
            (Some(error), Some(accuracy)) => {
                if (error + accuracy - 1.0).abs() > ACCURACY_RATE_TOLERANCE {
                    found.push(Problem::row(
                        label,
                        row,
                        format!(
                            "{} = {} and {} = {} disagree (they must sum to 1)",
                            self.name("claimed_error_rate"),
                            error * scale,
                            self.name("claimed_accuracy"),
                            accuracy * scale
                        ),
                    ));
                }
                Some(error)
            }
            (Some(error), None) => Some(error),
            (None, Some(accuracy)) => Some(complement(accuracy)),
            (None, None) => settings.default_claim_accuracy.map(complement),
        };
        let claim_form = match (c_error, c_accuracy) {
            (Some(_), _) => Some(ClaimForm::ErrorRate),
            (None, Some(_)) => Some(ClaimForm::Accuracy),
            (None, None) => claim_error_rate.map(|_| ClaimForm::DefaultAccuracy),
        };

        let family_key = self.text("family", i);
        let family = match family_key {
            Some(key) => {
                let params = FamilyParams::from_values(std::array::from_fn(|index| {
                    self.integer_at(FIRST_PARAMETER_SLOT + index, i)
                }));
                match resolve(key, &params) {
                    Ok(family) => family,
                    Err(error) => {
                        let name = self.name(error.parameter);
                        found.push(Problem::cell(label, row, name, error.message));
                        None
                    }
                }
            }
            None => None,
        };

        let logged = match self.text("logged_at", i) {
            // Most logs write this form: it is checked and kept as written, which is
            // what parsing and formatting it again would give.
            Some(text) if is_valid_plain_utc_second(text) => Some(text.to_string()),
            Some(text) => match parse_timestamp(text) {
                Some(time) => Some(time.to_rfc3339_opts(chrono::SecondsFormat::AutoSi, true)),
                None => {
                    let name = self.name("logged_at");
                    found.push(Problem::cell(
                        label,
                        row,
                        name,
                        format!("{name} = {text:?} is not a timestamp (RFC 3339 or YYYY-MM-DD[ HH:MM[:SS]])"),
                    ));
                    None
                }
            },
            None => None,
        };

        let (Some(holdout_n), Some(holdout), true) = (h_n, holdout, found.is_empty()) else {
            // A missing required value always leaves a problem above.
            return Err(found);
        };
        let mut source = String::with_capacity(label.len() + 21);
        source.push_str(label);
        source.push(':');
        source.push_str(itoa::Buffer::new().format(row));
        Ok(RunInput {
            run: self
                .text("run", i)
                .map(str::to_string)
                .unwrap_or_else(|| source.clone()),
            source,
            family_key: family_key.map(|k| k.to_ascii_lowercase()),
            family,
            train_n: t_n,
            train_error_rate: train.map(|t| t.rate),
            holdout_n,
            holdout_error_rate: holdout.rate,
            holdout_misclassified: holdout.count,
            misclassified_derived: holdout.count_derived,
            holdout_set: self.text("holdout_set", i).map(str::to_string),
            candidates: k_candidates.unwrap_or(1),
            claim_error_rate,
            claim_form,
            logged_at: logged,
            copies: Vec::new(),
            id_repeated: false,
            kept: self
                .settings
                .keep
                .iter()
                .zip(&self.kept)
                .map(|(name, cells)| (name.clone(), cells[i].map(str::to_string)))
                .collect(),
        })
    }
}

fn row_has_problem_in(found: &[Problem], column: &str) -> bool {
    found.iter().any(|p| p.column.as_deref() == Some(column))
}

struct ErrorColumns<'a> {
    rate: (&'a str, Option<f64>),
    accuracy: (&'a str, Option<f64>),
    count: (&'a str, Option<i64>),
}

struct ObservedError {
    rate: f64,
    count: u64,
    count_derived: bool,
}

/// Chooses among rate, accuracy and count for one row (an empty cell is missing) and
/// checks that those present agree.
fn error_of_row(
    label: &str,
    row: usize,
    columns: ErrorColumns,
    n: Option<u64>,
    n_reported: bool,
    found: &mut Vec<Problem>,
) -> Option<ObservedError> {
    let (rate_name, rate) = columns.rate;
    let (accuracy_name, accuracy) = columns.accuracy;
    let (count_name, count) = columns.count;
    let before = found.len();
    if let (Some(rate), Some(accuracy)) = (rate, accuracy) {
        if (rate + accuracy - 1.0).abs() > ACCURACY_RATE_TOLERANCE {
            found.push(Problem::row(
                label,
                row,
                format!("{rate_name} = {rate} and {accuracy_name} = {accuracy} disagree (they must sum to 1 within 1e-6)"),
            ));
        }
    }
    let count = match count {
        Some(count) if count < 0 => {
            found.push(Problem::cell(
                label,
                row,
                count_name,
                format!("{count_name} = {count} is negative"),
            ));
            None
        }
        Some(count) => match n {
            Some(n) if count as u64 > n => {
                found.push(Problem::cell(
                    label,
                    row,
                    count_name,
                    format!("{count_name} = {count} is more than the {n} examples"),
                ));
                None
            }
            Some(_) => Some(count as u64),
            // An example count that is there but unreadable is reported already.
            None if n_reported => None,
            None => {
                found.push(Problem::cell(
                    label,
                    row,
                    count_name,
                    format!("{count_name} = {count} is given but the example count is missing"),
                ));
                None
            }
        },
        None => None,
    };
    let logged_rate = rate.or(accuracy.map(complement));
    if let (Some(logged_rate), Some(count), Some(n)) = (logged_rate, count, n) {
        let from_count = count as f64 / n as f64;
        if (from_count - logged_rate).abs() > COUNT_RATE_TOLERANCE + 0.5 / n as f64 {
            found.push(Problem::row(
                label,
                row,
                format!("{count_name} = {count} of {n} (rate {from_count:.6}) disagrees with the logged rate {logged_rate:.6}"),
            ));
        }
    }
    if found.len() > before {
        return None;
    }
    match (logged_rate, count, n) {
        (Some(rate), Some(count), Some(_)) => Some(ObservedError {
            rate,
            count,
            count_derived: false,
        }),
        (Some(rate), None, Some(n)) => Some(ObservedError {
            rate,
            count: (rate * n as f64).round().min(n as f64) as u64,
            count_derived: true,
        }),
        (Some(rate), None, None) => Some(ObservedError {
            rate,
            count: 0,
            count_derived: true,
        }),
        (None, Some(count), Some(n)) => Some(ObservedError {
            rate: count as f64 / n as f64,
            count,
            count_derived: false,
        }),
        _ => None,
    }
}

/// Whether `text` is a UTC time in whole seconds exactly as RFC 3339 output writes it
/// (`2024-09-02T08:14:05Z`, a year from 1000, seconds below 60), so that parsing and
/// formatting it again would give the same text.
fn is_plain_utc_second(text: &str) -> bool {
    let b = text.as_bytes();
    b.len() == 20
        && b.iter().enumerate().all(|(at, &c)| match at {
            4 | 7 => c == b'-',
            10 => c == b'T',
            13 | 16 => c == b':',
            19 => c == b'Z',
            _ => c.is_ascii_digit(),
        })
        && b[0] != b'0'
        && b[17] < b'6'
}

/// [`is_plain_utc_second`] and a real instant: month 1–12, a day the month has
/// (Gregorian leap years), hour below 24, minute below 60.
fn is_valid_plain_utc_second(text: &str) -> bool {
    if !is_plain_utc_second(text) {
        return false;
    }
    let b = text.as_bytes();
    let number = |from: usize, to: usize| {
        b[from..to]
            .iter()
            .fold(0u32, |value, digit| value * 10 + u32::from(digit - b'0'))
    };
    let (year, month, day) = (number(0, 4), number(5, 7), number(8, 10));
    let leap = year % 4 == 0 && (year % 100 != 0 || year % 400 == 0);
    let days = match month {
        1 | 3 | 5 | 7 | 8 | 10 | 12 => 31,
        4 | 6 | 9 | 11 => 30,
        2 if leap => 29,
        2 => 28,
        _ => return false,
    };
    (1..=days).contains(&day) && number(11, 13) < 24 && number(14, 16) < 60
}

/// RFC 3339, or `YYYY-MM-DD[ HH:MM[:SS[.fff]]]` (also with `T`), taken as UTC when
/// no offset is written.
pub fn parse_timestamp(text: &str) -> Option<DateTime<Utc>> {
    let text = text.trim();
    if let Ok(time) = DateTime::parse_from_rfc3339(text) {
        return Some(time.with_timezone(&Utc));
    }
    for format in [
        "%Y-%m-%d %H:%M:%S%.f",
        "%Y-%m-%dT%H:%M:%S%.f",
        "%Y-%m-%d %H:%M",
        "%Y-%m-%dT%H:%M",
    ] {
        if let Ok(naive) = NaiveDateTime::parse_from_str(text, format) {
            return Some(naive.and_utc());
        }
    }
    NaiveDate::parse_from_str(text, "%Y-%m-%d")
        .ok()
        .and_then(|date| date.and_hms_opt(0, 0, 0))
        .map(|naive| naive.and_utc())
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn slots_follow_the_canonical_column_order() {
        for (index, name) in super::super::columns::CANONICAL_COLUMNS.iter().enumerate() {
            assert_eq!(slot(name), index, "{name}");
        }
    }

    /// The shortcut that keeps a plain UTC timestamp as written must give what
    /// chrono's RFC 3339 formatting gives (common practice: RFC 3339 §5.6 form).
    #[test]
    fn plain_utc_seconds_read_back_as_written() {
        for text in [
            "2024-09-02T08:14:05Z",
            "1999-12-31T23:59:59Z",
            "2024-02-29T00:00:00Z",
            "9999-01-01T12:30:45Z",
            "1000-06-15T01:02:03Z",
        ] {
            assert!(is_plain_utc_second(text), "{text}");
            let formatted = parse_timestamp(text)
                .unwrap()
                .to_rfc3339_opts(chrono::SecondsFormat::AutoSi, true);
            assert_eq!(formatted, text);
        }
        for text in [
            "2024-09-02T08:14:05+00:00",
            "2024-09-02T08:14:05.5Z",
            "2024-09-02 08:14:05Z",
            "0999-09-02T08:14:05Z",
            "2016-12-31T23:59:60Z",
            "2024-09-02t08:14:05z",
        ] {
            assert!(!is_plain_utc_second(text), "{text}");
        }
        // Shaped right but not a date: refused like chrono refuses it.
        assert!(!is_valid_plain_utc_second("2024-02-30T00:00:00Z"));
        assert!(parse_timestamp("2024-02-30T00:00:00Z").is_none());
    }

    /// The hand-written check of the plain form accepts exactly what chrono's RFC 3339
    /// parser accepts (chrono is the reference), over every month and day edge, leap
    /// and century years, and hour and minute limits.
    #[test]
    fn plain_utc_check_agrees_with_chrono() {
        let mut checked = 0;
        for year in [
            1000, 1600, 1700, 1900, 1999, 2000, 2023, 2024, 2100, 2400, 9999,
        ] {
            for month in 0..=13 {
                for day in [0, 1, 28, 29, 30, 31, 32] {
                    for (hour, minute, second) in [(0, 0, 0), (23, 59, 59), (24, 0, 0), (12, 60, 0)]
                    {
                        let text = format!(
                            "{year:04}-{month:02}-{day:02}T{hour:02}:{minute:02}:{second:02}Z"
                        );
                        assert_eq!(
                            is_valid_plain_utc_second(&text),
                            parse_timestamp(&text).is_some(),
                            "{text}"
                        );
                        if let Some(time) = parse_timestamp(&text) {
                            let formatted =
                                time.to_rfc3339_opts(chrono::SecondsFormat::AutoSi, true);
                            assert_eq!(formatted, text);
                        }
                        checked += 1;
                    }
                }
            }
        }
        assert_eq!(checked, 11 * 14 * 7 * 4);
    }

    #[test]
    fn timestamps_in_the_documented_forms_parse() {
        for text in [
            "2024-09-02T08:14:05Z",
            "2024-09-03T16:02:44+02:00",
            "2024-09-02 10:40",
            "2024-09-02 10:40:07",
            "2024-09-02",
        ] {
            assert!(parse_timestamp(text).is_some(), "{text}");
        }
        assert!(parse_timestamp("yesterday").is_none());
        assert_eq!(
            parse_timestamp("2024-09-03T16:02:44+02:00")
                .unwrap()
                .to_rfc3339(),
            "2024-09-03T14:02:44+00:00"
        );
    }
}
