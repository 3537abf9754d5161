//! Options as a caller gives them (command-line flags, Python keywords), and the one
//! step that checks them into the settings the rest of the library reads. Every check
//! of an option, and its wording, is here.

use std::path::PathBuf;

use crate::audit::{AuditSettings, Gate, HoldoutBound};
use crate::error::{describe_io_error, Error};
use crate::ingest::{columns, IngestSettings};

/// The audit's options before any check, with the command line's defaults.
#[derive(Clone, Debug, PartialEq)]
pub struct AuditOptions {
    pub confidence: f64,
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
}

impl Default for AuditOptions {
    fn default() -> Self {
        AuditOptions {
            confidence: 0.95,
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
        }
    }
}

impl AuditOptions {
    /// Checks every option and returns the audit's and the reading's settings.
    pub fn resolve(&self) -> Result<(AuditSettings, IngestSettings), Error> {
        check_confidence(self.confidence)?;
        check_positive("--tolerance", self.tolerance)?;
        check_positive("--max-width", self.max_width)?;
        let scale = if self.percent { 100.0 } else { 1.0 };
        let default_claim_accuracy = match self.claim_accuracy {
            Some(claim) if (0.0..=scale).contains(&claim) => Some(claim / scale),
            Some(claim) => {
                return Err(Error::Usage(format!(
                    "--claim-accuracy {claim} is outside [0, {scale}]{}",
                    if self.percent {
                        ""
                    } else {
                        " (pass --percent for percentages)"
                    }
                )))
            }
            None => None,
        };
        let mut column_map = Vec::new();
        if let Some(path) = &self.map_file {
            let text = std::fs::read_to_string(path).map_err(|error| {
                Error::Usage(format!(
                    "{}: cannot read the map file ({})",
                    path.display(),
                    describe_io_error(&error)
                ))
            })?;
            column_map.extend(
                columns::parse_map_file(&path.display().to_string(), &text)
                    .map_err(Error::Usage)?,
            );
        }
        for pair in &self.map {
            column_map.push(columns::parse_map_pair(pair).map_err(Error::Usage)?);
        }
        columns::check_column_map(&column_map).map_err(Error::Usage)?;
        let audit = AuditSettings {
            confidence: self.confidence,
            holdout_bound: self.holdout_bound,
            familywise: self.familywise,
            same_holdout: self.same_holdout,
            tolerance: self.tolerance,
            max_width: self.max_width,
            gate: self.gate,
        };
        let ingest = IngestSettings {
            percent: self.percent,
            lenient: self.lenient,
            column_map,
            default_claim_accuracy,
        };
        Ok((audit, ingest))
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
