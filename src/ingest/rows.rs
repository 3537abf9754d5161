//! Turning one table into validated runs: per-row choice among the rate, accuracy and
//! count columns, range and consistency checks, family resolution.

use chrono::{DateTime, NaiveDate, NaiveDateTime, Utc};
use polars::prelude::DataFrame;

use super::columns::{bind_columns, column_name, extract_f64, extract_i64, extract_text};
use super::problem::Problem;
use super::settings::IngestSettings;
use super::RunInput;
use crate::theory::growth::{resolve, FamilyParams};

/// Accuracy and error rate logged together must sum to 1 within this (SPEC §3).
const ACCURACY_RATE_TOLERANCE: f64 = 1e-6;
/// A count and a rate logged together may differ by half a count (rounding of the
/// count) plus this much on the rate scale (rates logged with three or more decimals).
const COUNT_RATE_TOLERANCE: f64 = 5e-4;

/// A row that `--lenient` skipped, with every reason.
#[derive(Clone, Debug, PartialEq, Eq, serde::Serialize, serde::Deserialize)]
pub struct SkippedRow {
    pub source: String,
    pub reasons: Vec<String>,
}

/// The runs of one table plus the problems of the rows that could not be used.
pub struct TableRuns {
    pub runs: Vec<RunInput>,
    /// Problems per bad row, in row order (each inner list non-empty).
    pub bad_rows: Vec<(usize, Vec<Problem>)>,
    /// Problems that concern the whole file (a missing required column).
    pub file_problems: Vec<Problem>,
}

/// Reads every run of `df`. `label` names the file in `source` and in problems.
pub fn table_runs(
    label: &str,
    df: &DataFrame,
    settings: &IngestSettings,
    mut cell_problems: Vec<Problem>,
) -> TableRuns {
    let binding = bind_columns(df, &settings.column_map);
    let height = df.height();
    let mut file_problems = Vec::new();
    let has = |name: &str| binding.index.contains_key(name);
    let mapped = |canonical: &str| {
        settings
            .column_map
            .iter()
            .rev()
            .find(|(c, _)| c == canonical)
            .map(|(_, theirs)| format!(" (mapped to `{theirs}`)"))
            .unwrap_or_default()
    };
    if !has("holdout_n") {
        file_problems.push(Problem::file(
            label,
            format!(
                "missing required column holdout_n{}; use --map holdout_n=<your column> if it has another name",
                mapped("holdout_n")
            ),
        ));
    }
    if !has("holdout_error_rate") && !has("holdout_accuracy") && !has("holdout_misclassified") {
        file_problems.push(Problem::file(
            label,
            "missing held-out error: need one of the columns holdout_error_rate, holdout_accuracy or holdout_misclassified (or --map one to your column)",
        ));
    }
    if !file_problems.is_empty() {
        return TableRuns {
            runs: Vec::new(),
            bad_rows: Vec::new(),
            file_problems,
        };
    }

    let problems = &mut cell_problems;
    let float = |name: &str, problems: &mut Vec<Problem>| -> Vec<Option<f64>> {
        match binding.index.get(name) {
            Some(&index) => extract_f64(label, df, index, problems),
            None => vec![None; height],
        }
    };
    let integer = |name: &str, problems: &mut Vec<Problem>| -> Vec<Option<i64>> {
        match binding.index.get(name) {
            Some(&index) => extract_i64(label, df, index, problems),
            None => vec![None; height],
        }
    };
    let text = |name: &str| -> Vec<Option<String>> {
        match binding.index.get(name) {
            Some(&index) => extract_text(df, index),
            None => vec![None; height],
        }
    };
    let name_of = |canonical: &'static str| -> String {
        binding
            .index
            .get(canonical)
            .map(|&index| column_name(df, index))
            .unwrap_or_else(|| canonical.to_string())
    };

    let run_ids = text("run");
    let families = text("family");
    let dim = integer("dim", problems);
    let vc_dim = integer("vc_dim", problems);
    let size = integer("size", problems);
    let weights = integer("weights", problems);
    let layers = integer("layers", problems);
    let units = integer("units", problems);
    let leaves = integer("leaves", problems);
    let features = integer("features", problems);
    let train_n = integer("train_n", problems);
    let train_rate = float("train_error_rate", problems);
    let train_accuracy = float("train_accuracy", problems);
    let train_count = integer("train_misclassified", problems);
    let holdout_n = integer("holdout_n", problems);
    let holdout_rate = float("holdout_error_rate", problems);
    let holdout_accuracy = float("holdout_accuracy", problems);
    let holdout_count = integer("holdout_misclassified", problems);
    let holdout_sets = text("holdout_set");
    let candidates = integer("candidates", problems);
    let claimed_accuracy = float("claimed_accuracy", problems);
    let claimed_error = float("claimed_error_rate", problems);
    let logged_at = text("logged_at");

    // Problems found while typing cells, grouped by row.
    let mut row_problems: Vec<Vec<Problem>> = vec![Vec::new(); height];
    for problem in cell_problems.drain(..) {
        match problem.row {
            Some(row) if row >= 1 && row <= height => row_problems[row - 1].push(problem),
            _ => file_problems.push(problem),
        }
    }

    let scale = if settings.percent { 100.0 } else { 1.0 };
    let range_text = if settings.percent {
        "[0, 100]"
    } else {
        "[0, 1]"
    };
    let mut runs = Vec::with_capacity(height);
    let mut bad_rows = Vec::new();
    for i in 0..height {
        let row = i + 1;
        let mut found = std::mem::take(&mut row_problems[i]);
        let mut check_fraction = |canonical: &'static str, value: Option<f64>| -> Option<f64> {
            let value = value?;
            let name = name_of(canonical);
            if value.is_nan() {
                found.push(Problem::cell(label, row, &name, format!("{name} is NaN")));
                None
            } else if value.is_infinite() {
                found.push(Problem::cell(
                    label,
                    row,
                    &name,
                    format!("{name} = {value} is not finite"),
                ));
                None
            } else if !(0.0..=scale).contains(&value) {
                let hint = if !settings.percent && value <= 100.0 && value > 1.0 {
                    " (pass --percent if the logs hold percentages)"
                } else {
                    ""
                };
                found.push(Problem::cell(
                    label,
                    row,
                    &name,
                    format!("{name} = {value} is outside {range_text}{hint}"),
                ));
                None
            } else {
                Some(value / scale)
            }
        };
        let t_rate = check_fraction("train_error_rate", train_rate[i]);
        let t_accuracy = check_fraction("train_accuracy", train_accuracy[i]);
        let h_rate = check_fraction("holdout_error_rate", holdout_rate[i]);
        let h_accuracy = check_fraction("holdout_accuracy", holdout_accuracy[i]);
        let c_accuracy = check_fraction("claimed_accuracy", claimed_accuracy[i]);
        let c_error = check_fraction("claimed_error_rate", claimed_error[i]);

        let mut positive_count = |canonical: &'static str, value: Option<i64>| -> Option<u64> {
            let value = value?;
            if value < 1 {
                let name = name_of(canonical);
                found.push(Problem::cell(
                    label,
                    row,
                    &name,
                    format!("{name} = {value} must be at least 1"),
                ));
                None
            } else {
                Some(value as u64)
            }
        };
        let h_n = positive_count("holdout_n", holdout_n[i]);
        let t_n = positive_count("train_n", train_n[i]);
        let k_candidates = positive_count("candidates", candidates[i]);

        if holdout_n[i].is_none() && !row_has_problem_in(&found, &name_of("holdout_n")) {
            let name = name_of("holdout_n");
            found.push(Problem::cell(
                label,
                row,
                &name,
                format!("{name} is empty (required)"),
            ));
        }

        let holdout = error_of_row(
            label,
            row,
            ErrorColumns {
                rate: (name_of("holdout_error_rate"), h_rate),
                accuracy: (name_of("holdout_accuracy"), h_accuracy),
                count: (name_of("holdout_misclassified"), holdout_count[i]),
            },
            h_n,
            &mut found,
        );
        if holdout.is_none()
            && holdout_rate[i].is_none()
            && holdout_accuracy[i].is_none()
            && holdout_count[i].is_none()
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
                rate: (name_of("train_error_rate"), t_rate),
                accuracy: (name_of("train_accuracy"), t_accuracy),
                count: (name_of("train_misclassified"), train_count[i]),
            },
            t_n,
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
                            name_of("claimed_error_rate"),
                            error * scale,
                            name_of("claimed_accuracy"),
                            accuracy * scale
                        ),
                    ));
                }
                Some(error)
            }
            (Some(error), None) => Some(error),
            (None, Some(accuracy)) => Some(1.0 - accuracy),
            (None, None) => settings.default_claim_accuracy.map(|a| 1.0 - a),
        };

        let family_key = families[i].clone();
        let params = FamilyParams {
            dim: dim[i],
            vc_dim: vc_dim[i],
            size: size[i],
            weights: weights[i],
            layers: layers[i],
            units: units[i],
            leaves: leaves[i],
            features: features[i],
        };
        let family = match family_key.as_deref() {
            Some(key) => match resolve(key, &params) {
                Ok(family) => family,
                Err(error) => {
                    let name = name_of(canonical_param(error.parameter));
                    found.push(Problem::cell(label, row, &name, error.message));
                    None
                }
            },
            None => None,
        };

        let logged = match logged_at[i].as_deref() {
            Some(text) => match parse_timestamp(text) {
                Some(time) => Some(time.to_rfc3339_opts(chrono::SecondsFormat::AutoSi, true)),
                None => {
                    let name = name_of("logged_at");
                    found.push(Problem::cell(
                        label,
                        row,
                        &name,
                        format!("{name} = {text:?} is not a timestamp (RFC 3339 or YYYY-MM-DD[ HH:MM[:SS]])"),
                    ));
                    None
                }
            },
            None => None,
        };

        if !found.is_empty() {
            bad_rows.push((row, found));
            continue;
        }
        let (Some(holdout_n), Some(holdout)) = (h_n, holdout) else {
            continue; // unreachable: a missing value always leaves a problem above
        };
        let source = format!("{label}:{row}");
        runs.push(RunInput {
            run: run_ids[i].clone().unwrap_or_else(|| source.clone()),
            source,
            family_key: family_key.map(|k| k.to_ascii_lowercase()),
            family,
            train_n: t_n,
            train_error_rate: train.map(|t| t.rate),
            holdout_n,
            holdout_error_rate: holdout.rate,
            holdout_misclassified: holdout.count,
            misclassified_derived: holdout.count_derived,
            holdout_set: holdout_sets[i].clone(),
            candidates: k_candidates.unwrap_or(1),
            claim_error_rate,
            logged_at: logged,
        });
    }
    TableRuns {
        runs,
        bad_rows,
        file_problems,
    }
}

fn row_has_problem_in(found: &[Problem], column: &str) -> bool {
    found.iter().any(|p| p.column.as_deref() == Some(column))
}

fn canonical_param(parameter: &str) -> &'static str {
    match parameter {
        "dim" => "dim",
        "vc_dim" => "vc_dim",
        "size" => "size",
        "weights" => "weights",
        "layers" => "layers",
        "units" => "units",
        "leaves" => "leaves",
        "features" => "features",
        _ => "family",
    }
}

struct ErrorColumns {
    rate: (String, Option<f64>),
    accuracy: (String, Option<f64>),
    count: (String, Option<i64>),
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
                &count_name,
                format!("{count_name} = {count} is negative"),
            ));
            None
        }
        Some(count) => match n {
            Some(n) if count as u64 > n => {
                found.push(Problem::cell(
                    label,
                    row,
                    &count_name,
                    format!("{count_name} = {count} is more than the {n} examples"),
                ));
                None
            }
            Some(_) => Some(count as u64),
            None => {
                found.push(Problem::cell(
                    label,
                    row,
                    &count_name,
                    format!("{count_name} = {count} is given but the example count is missing"),
                ));
                None
            }
        },
        None => None,
    };
    let logged_rate = rate.or(accuracy.map(|a| 1.0 - a));
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
