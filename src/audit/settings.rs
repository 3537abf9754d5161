//! Resolved audit settings: validated once from the command line, read everywhere else.

use serde::{Deserialize, Serialize};

use super::finding::FindingCode;

/// Which held-out bound decides the verdict and fills the one-sided bounds.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum HoldoutBound {
    /// Exact binomial tail inversion (Clopper & Pearson 1934).
    Binomial,
    /// Hoeffding's inequality (Hoeffding 1963).
    Hoeffding,
}

impl HoldoutBound {
    pub fn as_str(self) -> &'static str {
        match self {
            HoldoutBound::Binomial => "binomial",
            HoldoutBound::Hoeffding => "hoeffding",
        }
    }
}

/// Which verdicts make the exit code 1.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum Gate {
    /// Fail when any claim is not certified (unproven or refuted).
    Unproven,
    /// Fail only when a claim is refuted.
    Refuted,
    /// Never fail on verdicts.
    Never,
}

impl Gate {
    pub fn as_str(self) -> &'static str {
        match self {
            Gate::Unproven => "unproven",
            Gate::Refuted => "refuted",
            Gate::Never => "never",
        }
    }
}

/// Every setting that changes a number or a verdict of the audit.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct AuditSettings {
    pub confidence: f64,
    pub holdout_bound: HoldoutBound,
    pub familywise: bool,
    pub same_holdout: bool,
    pub tolerance: f64,
    pub max_width: f64,
    pub gate: Gate,
    /// Findings that do not fail the gate (`--gate-allow`); see
    /// [`FindingCode::blocks_gate`].
    pub gate_allow: Vec<FindingCode>,
}

impl Default for AuditSettings {
    fn default() -> Self {
        AuditSettings {
            confidence: 0.95,
            holdout_bound: HoldoutBound::Binomial,
            familywise: false,
            same_holdout: false,
            tolerance: 0.05,
            max_width: 0.10,
            gate: Gate::Unproven,
            gate_allow: Vec::new(),
        }
    }
}

impl AuditSettings {
    /// δ = 1 − confidence before any correction, from the confidence's decimal digits
    /// (0.95 gives 0.05, not 0.050000000000000044).
    pub fn delta(&self) -> f64 {
        crate::decimal::complement(self.confidence)
    }
}
