//! Reading claims files (SPEC §10): any log format, one claim per row, every problem
//! listed with file and row before anything is audited.
//!
//! Problems found here concern a row on its own (an unknown kind, a value out of
//! range, a baseline missing or superfluous, one discordant count without the
//! other); those that need the runs (no run matches, counts that disagree with the
//! logs) are found when the claims are joined to the runs (`audit/claims.rs`).

use std::path::PathBuf;

use sha2::{Digest, Sha256};

use super::columns::{extract_f64, extract_i64, text_cells, text_series};
use super::discover::LogFormat;
use super::{formats, hex, InputFile};
use crate::claim::{ClaimInput, ClaimKind};
use crate::decimal::percent_to_fraction;
use crate::error::{describe_io_error, Error, Problem};

/// The columns of a claims file (matched case-insensitively).
pub const CLAIM_COLUMNS: [&str; 8] = [
    "claim",
    "statement",
    "kind",
    "run",
    "baseline",
    "value",
    "run_only_errors",
    "baseline_only_errors",
];

/// What the claims files held.
#[derive(Clone, Debug, Default)]
pub struct ClaimsRead {
    /// The rows that passed their own checks.
    pub claims: Vec<ClaimInput>,
    /// The files, hashed (certificates record them).
    pub inputs: Vec<InputFile>,
    /// Problems of the other rows (the audit fails with them, together with the
    /// problems the valid rows meet when joined to the runs).
    pub problems: Vec<Problem>,
}

/// Where a claims file's bytes come from: a file, or bytes in memory (the demo's).
#[derive(Clone, Debug)]
pub enum ClaimsSource<'a> {
    Path(PathBuf),
    Memory(&'a str, &'a [u8], LogFormat),
}

/// Reads every claims file: the valid claims and the problems of the others (a file
/// that cannot be found or read at all is an error). `percent`: values are
/// percentages (as with `--percent` for the logs).
pub fn read_claims(
    sources: &[ClaimsSource<'_>],
    percent: bool,
    delimited: formats::Delimited,
) -> Result<ClaimsRead, Error> {
    let mut read = ClaimsRead::default();
    let mut problems = Vec::new();
    let mut seen_paths: Vec<PathBuf> = Vec::new();
    for source in sources {
        let (label, bytes, format) = match source {
            ClaimsSource::Path(path) => {
                let label = path.display().to_string();
                // The same file given twice would repeat every claim (and name each
                // claim's identifier as used by itself).
                let identity = std::fs::canonicalize(path).unwrap_or_else(|_| path.clone());
                if seen_paths.contains(&identity) {
                    problems.push(Problem::file(
                        &label,
                        "this claims file is given more than once (--claims); give it once",
                    ));
                    continue;
                }
                seen_paths.push(identity);
                let Some(format) = LogFormat::from_path(path) else {
                    return Err(Error::Usage(format!(
                        "--claims {label}: unknown file type; claims files are read like logs (.csv, .tsv, .parquet, .jsonl, .ndjson, .json, .arrow, .ipc, .feather)"
                    )));
                };
                let bytes = std::fs::read(path).map_err(|error| {
                    Error::Usage(format!(
                        "--claims {label}: cannot read the claims file ({})",
                        describe_io_error(&error)
                    ))
                })?;
                (label, std::borrow::Cow::Owned(bytes), format)
            }
            ClaimsSource::Memory(label, bytes, format) => (
                label.to_string(),
                std::borrow::Cow::Borrowed(*bytes),
                *format,
            ),
        };
        read.inputs.push(InputFile {
            path: label.clone(),
            size: bytes.len() as u64,
            sha256: hex(&Sha256::digest(&bytes)),
            rows: 0,
        });
        match formats::read_table(&label, &bytes, format, &[], delimited) {
            Err(found) => problems.extend(found),
            Ok((df, cell_problems)) => {
                let before = read.claims.len();
                problems.extend(cell_problems);
                claims_of_table(
                    &label,
                    &df,
                    percent,
                    delimited.decimal_comma,
                    &mut read.claims,
                    &mut problems,
                );
                if let Some(input) = read.inputs.last_mut() {
                    input.rows = df.height();
                }
                if df.height() == 0 && read.claims.len() == before {
                    problems.push(Problem::file(&label, "the claims file holds no claims"));
                }
            }
        }
    }
    // Claim identifiers name claims in every report: each names one.
    // A hash of the identifiers seen so far (a scan of the earlier claims per claim
    // took a minute for 100,000 claims).
    let mut first_use: std::collections::HashMap<&str, usize> =
        std::collections::HashMap::with_capacity(read.claims.len());
    for (index, claim) in read.claims.iter().enumerate() {
        let first_index = *first_use.entry(claim.claim.as_str()).or_insert(index);
        if first_index != index {
            let first = &read.claims[first_index];
            problems.push(Problem::cell(
                &claim.file,
                claim.row,
                "claim",
                format!(
                    "the claim identifier `{}` is also used by {}: each claim needs its own",
                    claim.claim, first.source
                ),
            ));
        }
    }
    // Problems in row order, file by file (a problem of the whole file first).
    let file_order = |file: &str| read.inputs.iter().position(|input| input.path == file);
    problems.sort_by_key(|problem| (file_order(&problem.file), problem.row));
    read.problems = problems.into_iter().map(Problem::of_claims_file).collect();
    Ok(read)
}

/// The claims of one table, each row checked on its own.
fn claims_of_table(
    label: &str,
    df: &polars::prelude::DataFrame,
    percent: bool,
    decimal_comma: bool,
    claims: &mut Vec<ClaimInput>,
    problems: &mut Vec<Problem>,
) {
    let names: Vec<String> = df
        .get_column_names()
        .iter()
        .map(|n| n.trim().to_ascii_lowercase())
        .collect();
    let index = |column: &str| names.iter().position(|n| n == column);
    // Two columns meaning one (`value`, `VALUE`): which one holds the claims cannot be
    // told, so the file is refused, as a log with the same ambiguity is.
    let mut ambiguous = false;
    for column in CLAIM_COLUMNS {
        let header = df.get_column_names();
        let matching: Vec<String> = names
            .iter()
            .zip(header.iter())
            .filter(|(name, _)| *name == column)
            .map(|(_, original)| format!("`{}`", original.trim()))
            .collect();
        if matching.len() > 1 {
            ambiguous = true;
            problems.push(Problem::file(
                label,
                format!(
                    "the columns {} {} match {column} (names are matched ignoring case): rename all but one",
                    matching.join(" and "),
                    if matching.len() == 2 { "both" } else { "all" }
                ),
            ));
        }
    }
    if ambiguous {
        return;
    }
    // A malformed Parquet or Arrow file can decode into a column shorter than the
    // table (found by fuzzing: fuzz/regressions/claims-short-column.parquet).
    for column in df.columns() {
        if column.len() != df.height() {
            problems.push(Problem::file(
                label,
                format!(
                    "the file is malformed: column {} holds {} values but the table has {} rows",
                    column.name(),
                    column.len(),
                    df.height()
                ),
            ));
            return;
        }
    }
    for required in ["kind", "run", "value"] {
        if index(required).is_none() {
            problems.push(Problem::file(
                label,
                format!(
                    "missing column `{required}`; a claims file has the columns {}",
                    CLAIM_COLUMNS.join(", ")
                ),
            ));
        }
    }
    let (Some(kind_at), Some(run_at), Some(value_at)) =
        (index("kind"), index("run"), index("value"))
    else {
        return;
    };
    let height = df.height();
    let text = |at: Option<usize>| at.and_then(|at| text_series(df, at));
    let (claim_s, statement_s, kind_s, run_s, baseline_s) = (
        text(index("claim")),
        text(index("statement")),
        text(Some(kind_at)),
        text(Some(run_at)),
        text(index("baseline")),
    );
    fn cells(series: &Option<polars::prelude::Series>, height: usize) -> Vec<Option<&str>> {
        match series {
            Some(series) => text_cells(series),
            None => vec![None; height],
        }
    }
    let (ids, statements, kinds, runs, baselines) = (
        cells(&claim_s, height),
        cells(&statement_s, height),
        cells(&kind_s, height),
        cells(&run_s, height),
        cells(&baseline_s, height),
    );
    let mut cell_problems = Vec::new();
    let values = extract_f64(label, df, value_at, decimal_comma, &mut cell_problems);
    // The scale guard of the logs (SPEC §3), per file: under --percent, a file whose
    // every value lies within [0, 1] holds fractions.
    let mut read_values = values.iter().flatten().peekable();
    if percent
        && read_values.peek().is_some()
        && read_values.all(|value| (0.0..=1.0).contains(value))
    {
        problems.push(Problem::file(
            label,
            "every value in this claims file lies within [0, 1], so it holds fractions, but --percent reads them as percentages (0.94 would mean 0.94 %); write the values as percentages, or drop --percent",
        ));
        return;
    }
    let counts = |column: &str, problems: &mut Vec<Problem>| match index(column) {
        Some(at) => extract_i64(label, df, at, problems),
        None => vec![None; height],
    };
    let run_only = counts("run_only_errors", &mut cell_problems);
    let baseline_only = counts("baseline_only_errors", &mut cell_problems);
    problems.extend(cell_problems.iter().cloned());
    let rows_with_problems: std::collections::HashSet<usize> =
        cell_problems.iter().filter_map(|p| p.row).collect();
    for row in 0..height {
        let number = row + 1;
        if rows_with_problems.contains(&number) {
            continue;
        }
        let mut found = Vec::new();
        let kind = match kinds[row] {
            None => {
                found.push(Problem::cell(
                    label,
                    number,
                    "kind",
                    "kind is empty (required)",
                ));
                None
            }
            Some(text) => match ClaimKind::parse(text) {
                Some(kind) => Some(kind),
                None => {
                    let known: Vec<&str> = ClaimKind::ALL.iter().map(|k| k.as_str()).collect();
                    found.push(Problem::cell(
                        label,
                        number,
                        "kind",
                        format!("unknown kind `{text}`; the kinds are {}", known.join(", ")),
                    ));
                    None
                }
            },
        };
        let run = runs[row];
        if run.is_none() {
            found.push(Problem::cell(
                label,
                number,
                "run",
                "run is empty (required)",
            ));
        }
        let scale = if percent { 100.0 } else { 1.0 };
        let value = match values[row] {
            None => {
                found.push(Problem::cell(
                    label,
                    number,
                    "value",
                    "value is empty (required)",
                ));
                None
            }
            Some(value) if (0.0..=scale).contains(&value) => Some(if percent {
                percent_to_fraction(value)
            } else {
                value
            }),
            Some(value) => {
                let hint = if !percent && value > 1.0 && value <= 100.0 {
                    " (write it as a fraction, or pass --percent if the claims are percentages)"
                } else {
                    ""
                };
                found.push(Problem::cell(
                    label,
                    number,
                    "value",
                    format!(
                        "value = {value} is outside [0, {}]{hint}",
                        if percent { "100" } else { "1" }
                    ),
                ));
                None
            }
        };
        let baseline = baselines[row];
        if let Some(kind) = kind {
            match (kind.compares(), baseline) {
                (true, None) => found.push(Problem::cell(
                    label,
                    number,
                    "baseline",
                    format!("a `{}` claim needs a baseline: the run it is compared with", kind.as_str()),
                )),
                (false, Some(base)) => found.push(Problem::cell(
                    label,
                    number,
                    "baseline",
                    format!(
                        "baseline `{base}` is given, but a `{}` claim is about one run (baselines are for beats and not_worse)",
                        kind.as_str()
                    ),
                )),
                _ => {}
            }
        }
        if let Some(base) = baseline {
            if base.contains(['*', '?']) {
                found.push(Problem::cell(
                    label,
                    number,
                    "baseline",
                    format!("baseline `{base}` is a pattern; a baseline is one run, named exactly"),
                ));
            }
            if Some(base) == run {
                found.push(Problem::cell(
                    label,
                    number,
                    "baseline",
                    format!(
                        "run and baseline are both `{base}`: a run cannot be compared with itself"
                    ),
                ));
            }
        }
        let count = |value: Option<i64>, column: &str, found: &mut Vec<Problem>| match value {
            Some(v) if v < 0 => {
                found.push(Problem::cell(
                    label,
                    number,
                    column,
                    format!("{column} = {v} is negative"),
                ));
                None
            }
            other => other.map(|v| v as u64),
        };
        let r = count(run_only[row], "run_only_errors", &mut found);
        let s = count(baseline_only[row], "baseline_only_errors", &mut found);
        match (run_only[row].is_some(), baseline_only[row].is_some()) {
            (true, false) => found.push(Problem::cell(
                label,
                number,
                "baseline_only_errors",
                "run_only_errors is given without baseline_only_errors: a paired comparison needs both counts",
            )),
            (false, true) => found.push(Problem::cell(
                label,
                number,
                "run_only_errors",
                "baseline_only_errors is given without run_only_errors: a paired comparison needs both counts",
            )),
            (true, true) => {
                if kind.is_some_and(|k| !k.compares()) {
                    found.push(Problem::row(
                        label,
                        number,
                        "discordant counts are given, but they belong to a comparison (beats, not_worse)",
                    ));
                }
                if run.is_some_and(|r| r.contains(['*', '?'])) {
                    found.push(Problem::row(
                        label,
                        number,
                        "discordant counts are given for a pattern; they describe one pair of runs, so name the run exactly",
                    ));
                }
            }
            (false, false) => {}
        }
        let (Some(kind), Some(run), Some(value), true) = (kind, run, value, found.is_empty())
        else {
            problems.extend(found);
            continue;
        };
        let source = format!("{label}:{number}");
        claims.push(ClaimInput {
            claim: ids[row]
                .map(str::to_string)
                .unwrap_or_else(|| source.clone()),
            source,
            file: label.to_string(),
            row: number,
            statement: statements[row].map(str::to_string),
            kind,
            run: run.to_string(),
            baseline: baseline.map(str::to_string),
            value,
            run_only_errors: r,
            baseline_only_errors: s,
        });
    }
}
