//! Options as a caller gives them (command-line flags, Python keywords), and the one
//! step that checks them into the settings the rest of the library reads. Every check
//! of an option, and its wording, is here.

use std::path::PathBuf;

use crate::audit::{AuditSettings, FindingCode, Gate, HoldoutBound};
use crate::error::{describe_io_error, Error};
use crate::ingest::{columns, IngestSettings};

/// The audit's options before any check, with the command line's defaults.
#[derive(Clone, Debug, PartialEq)]
pub struct AuditOptions {
    /// On the logs' scale; None is 0.95 (95 %).
    pub confidence: Option<f64>,
    pub holdout_bound: HoldoutBound,
    /// Claimed accuracy for runs that carry no claim, on the logs' scale.
    pub claim_accuracy: Option<f64>,
    pub familywise: bool,
    pub same_holdout: bool,
    pub tolerance: f64,
    pub max_width: f64,
    pub percent: bool,
    pub lenient: bool,
    /// `canonical=theirs` renames, in the order given.
    pub map: Vec<String>,
    /// A JSON file of renames.
    pub map_file: Option<PathBuf>,
    pub gate: Gate,
    /// Finding codes that do not fail the gate (`--gate-allow`).
    pub gate_allow: Vec<String>,
    /// Claims files (`--claims`).
    pub claims: Vec<PathBuf>,
    /// `--separator`: one character, or `\t` / `tab`.
    pub separator: Option<String>,
    /// `--decimal-comma`.
    pub decimal_comma: bool,
    /// `--keep`: extra columns carried into every output.
    pub keep: Vec<String>,
}

impl Default for AuditOptions {
    fn default() -> Self {
        AuditOptions {
            confidence: None,
            holdout_bound: HoldoutBound::Binomial,
            claim_accuracy: None,
            familywise: false,
            same_holdout: false,
            tolerance: 0.05,
            max_width: 0.10,
            percent: false,
            lenient: false,
            map: Vec::new(),
            map_file: None,
            gate: Gate::Unproven,
            gate_allow: Vec::new(),
            claims: Vec::new(),
            separator: None,
            decimal_comma: false,
            keep: Vec::new(),
        }
    }
}

impl AuditOptions {
    /// Checks every option and returns the audit's and the reading's settings.
    ///
    /// `--claim-accuracy` and `--confidence` are read on the logs' scale: fractions,
    /// or percentages under `--percent`. A value that only makes sense on the other
    /// scale is an error that says so (`--percent --claim-accuracy 0.95` would claim
    /// 0.95 % accuracy, which every run certifies).
    pub fn resolve(&self) -> Result<(AuditSettings, IngestSettings), Error> {
        let confidence = self.confidence_fraction()?;
        check_positive("--tolerance", self.tolerance)?;
        check_positive("--max-width", self.max_width)?;
        let default_claim_accuracy = match self.claim_accuracy {
            Some(claim) => Some(self.fraction_of("--claim-accuracy", claim)?),
            None => None,
        };
        let mut column_map: Vec<(String, String)> = Vec::new();
        let mut sections = Vec::new();
        if let Some(path) = &self.map_file {
            let text = std::fs::read_to_string(path).map_err(|error| {
                Error::Usage(format!(
                    "{}: cannot read the map file ({})",
                    path.display(),
                    describe_io_error(&error)
                ))
            })?;
            let (pairs, file_sections) =
                columns::parse_map_file(&path.display().to_string(), &text)
                    .map_err(Error::Usage)?;
            column_map.extend(pairs);
            sections = file_sections;
        }
        for pair in &self.map {
            let pair = columns::parse_map_pair(pair).map_err(Error::Usage)?;
            // The same rename in --map-file and --map is one rename.
            if !column_map.contains(&pair) {
                column_map.push(pair);
            }
        }
        columns::check_column_map(&column_map).map_err(Error::Usage)?;
        let mut gate_allow = Vec::new();
        for code in &self.gate_allow {
            match FindingCode::parse(code.trim()) {
                Some(code) if code.blocks_gate() => gate_allow.push(code),
                _ => {
                    let codes: Vec<&str> = FindingCode::ALL
                        .iter()
                        .filter(|c| c.blocks_gate())
                        .map(|c| c.as_str())
                        .collect();
                    return Err(Error::Usage(format!(
                        "--gate-allow {code}: only these findings fail the gate and can be allowed: {}",
                        codes.join(", ")
                    )));
                }
            }
        }
        let audit = AuditSettings {
            confidence,
            holdout_bound: self.holdout_bound,
            familywise: self.familywise,
            same_holdout: self.same_holdout,
            tolerance: self.tolerance,
            max_width: self.max_width,
            gate: self.gate,
            gate_allow,
        };
        let ingest = IngestSettings {
            percent: self.percent,
            lenient: self.lenient,
            column_map,
            default_claim_accuracy,
            claims_files: self.claims.clone(),
            cancel: crate::error::Cancel::default(),
            sections,
            separator: self.separator.as_deref().map(check_separator).transpose()?,
            decimal_comma: self.decimal_comma,
            keep: check_keep(&self.keep)?,
        };
        Ok((audit, ingest))
    }

    /// `--confidence` as a fraction: checked on the logs' scale.
    fn confidence_fraction(&self) -> Result<f64, Error> {
        let Some(confidence) = self.confidence else {
            return Ok(0.95);
        };
        let confidence = self.fraction_of("--confidence", confidence)?;
        check_confidence(confidence)?;
        Ok(confidence)
    }

    /// A rate given on the logs' scale (`flag` names it), as a fraction: under
    /// `--percent` a value in (1, 100] divided by 100 as the decimal it was written
    /// as; otherwise a value in [0, 1].
    fn fraction_of(&self, flag: &str, value: f64) -> Result<f64, Error> {
        if self.percent {
            if value > 1.0 && value <= 100.0 {
                return Ok(crate::decimal::percent_to_fraction(value));
            }
            if (0.0..=1.0).contains(&value) {
                return Err(Error::Usage(format!(
                    "{flag} {value} reads as {value} % under --percent (rates, claims, {flag} are all percentages there); write the percentage, for example {}",
                    value * 100.0
                )));
            }
            return Err(Error::Usage(format!(
                "{flag} {value} is outside [0, 100] (a percentage, under --percent)"
            )));
        }
        if (0.0..=1.0).contains(&value) {
            return Ok(value);
        }
        let hint = if value > 1.0 && value <= 100.0 {
            format!(
                " (write {}, or pass --percent if your logs hold percentages)",
                value / 100.0
            )
        } else {
            String::new()
        };
        Err(Error::Usage(format!(
            "{flag} {value} is outside [0, 1]{hint}"
        )))
    }
}

/// `--confidence`: strictly between 0 and 1. Returns δ = 1 − confidence, complemented
/// as the decimal it was written as (0.95 gives 0.05).
pub fn check_confidence(confidence: f64) -> Result<f64, Error> {
    if confidence > 0.0 && confidence < 1.0 {
        Ok(crate::decimal::complement(confidence))
    } else {
        Err(Error::Usage(format!(
            "--confidence {confidence} must be strictly between 0 and 1 (for example 0.95)"
        )))
    }
}

/// A tolerance or width: positive and finite.
pub fn check_positive(flag: &str, value: f64) -> Result<f64, Error> {
    if value > 0.0 && value.is_finite() {
        Ok(value)
    } else {
        Err(Error::Usage(format!("{flag} {value} must be positive")))
    }
}

/// A rate or accuracy given as a fraction: within [0, 1].
pub fn check_fraction(flag: &str, value: f64) -> Result<f64, Error> {
    if (0.0..=1.0).contains(&value) {
        Ok(value)
    } else {
        Err(Error::Usage(format!("{flag} {value} is outside [0, 1]")))
    }
}

/// `--separator`: one ASCII character that cannot be part of a number or a quote; a
/// tab may be written `\t` or `tab`.
pub fn check_separator(text: &str) -> Result<u8, Error> {
    let byte = match text {
        "\\t" | "\t" | "tab" => b'\t',
        one if one.len() == 1 && one.is_ascii() => one.as_bytes()[0],
        _ => {
            return Err(Error::Usage(format!(
                "--separator {text:?}: give one character, such as ';' or '|' (or \\t for a tab)"
            )))
        }
    };
    if byte.is_ascii_alphanumeric() || matches!(byte, b'"' | b'.' | b'-' | b'+' | b'\n' | b'\r') {
        return Err(Error::Usage(format!(
            "--separator {text:?}: that character is part of numbers or quoting; choose another"
        )));
    }
    Ok(byte)
}

/// `--keep`: names of extra columns, each once.
pub fn check_keep(names: &[String]) -> Result<Vec<String>, Error> {
    let mut kept: Vec<String> = Vec::new();
    for name in names.iter().map(|n| n.trim()).filter(|n| !n.is_empty()) {
        if kept.iter().any(|k| k.eq_ignore_ascii_case(name)) {
            return Err(Error::Usage(format!("--keep names `{name}` twice")));
        }
        // A kept column sits beside gapcert's own in the flat formats: one name, one
        // column.
        if crate::report::flat::FLAT_COLUMNS
            .iter()
            .any(|own| own.eq_ignore_ascii_case(name))
        {
            return Err(Error::Usage(format!(
                "--keep `{name}`: every output already has a column of that name (gapcert's own); keep columns gapcert does not write"
            )));
        }
        kept.push(name.to_string());
    }
    Ok(kept)
}
