//! The audit's result types. Every report format is a view of these.

use serde::{Deserialize, Serialize};

/// The verdict on a run's claim (SPEC §4).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum Verdict {
    Certified,
    Unproven,
    Refuted,
    NoClaim,
}

impl Verdict {
    pub fn as_str(self) -> &'static str {
        match self {
            Verdict::Certified => "certified",
            Verdict::Unproven => "unproven",
            Verdict::Refuted => "refuted",
            Verdict::NoClaim => "no_claim",
        }
    }

    /// Sort key: worst first.
    pub fn severity(self) -> u8 {
        match self {
            Verdict::Refuted => 0,
            Verdict::Unproven => 1,
            Verdict::Certified => 2,
            Verdict::NoClaim => 3,
        }
    }
}

/// Codes of the findings (SPEC §4).
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash, Serialize, Deserialize)]
#[serde(rename_all = "snake_case")]
pub enum FindingCode {
    HoldoutReused,
    HoldoutSmall,
    GapBeyondTheory,
    HoldoutEasierThanTrain,
    TheoryVacuous,
    TheoryUnavailable,
    MisclassifiedDerived,
}

impl FindingCode {
    pub fn as_str(self) -> &'static str {
        match self {
            FindingCode::HoldoutReused => "holdout_reused",
            FindingCode::HoldoutSmall => "holdout_small",
            FindingCode::GapBeyondTheory => "gap_beyond_theory",
            FindingCode::HoldoutEasierThanTrain => "holdout_easier_than_train",
            FindingCode::TheoryVacuous => "theory_vacuous",
            FindingCode::TheoryUnavailable => "theory_unavailable",
            FindingCode::MisclassifiedDerived => "misclassified_derived",
        }
    }
}

/// A finding: a code plus a sentence for people.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Finding {
    pub code: FindingCode,
    pub message: String,
}

/// Everything the audit says about one run; field names are SPEC §7's.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct RunResult {
    pub run: String,
    pub source: String,
    pub family: Option<String>,
    pub train_n: Option<u64>,
    pub train_error_rate: Option<f64>,
    pub holdout_n: u64,
    pub holdout_error_rate: f64,
    pub holdout_misclassified: u64,
    pub holdout_set: Option<String>,
    /// K: the number of models compared on this run's held-out split (after grouping).
    pub candidates: u64,
    /// The failure probability each held-out bound of this run is computed at: δ/K
    /// (δ already divided by the number of claims under `--familywise`).
    pub delta: f64,
    pub hoeffding_interval: [f64; 2],
    pub binomial_interval: [f64; 2],
    pub error_upper_bound: f64,
    pub error_lower_bound: f64,
    pub vc_dim: Option<u64>,
    pub growth_ln: Option<f64>,
    pub vc_allowance: Option<f64>,
    pub vc_bound: Option<f64>,
    pub observed_gap: Option<f64>,
    pub certified_gap_max: Option<f64>,
    pub claim_error_rate: Option<f64>,
    pub verdict: Verdict,
    pub holdout_needed: Option<u64>,
    pub train_needed: Option<u64>,
    pub findings: Vec<Finding>,
    pub logged_at: Option<String>,
}

impl RunResult {
    pub fn has_finding(&self, code: FindingCode) -> bool {
        self.findings.iter().any(|f| f.code == code)
    }
}

/// Verdict counts and the gate result.
#[derive(Clone, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
pub struct Summary {
    pub runs: usize,
    pub certified: usize,
    pub unproven: usize,
    pub refuted: usize,
    pub no_claim: usize,
    /// Rows read from the inputs (audited plus skipped).
    pub rows_read: usize,
    /// Rows skipped under `--lenient`: bad rows, plus every row of a log skipped
    /// whole.
    pub rows_skipped: usize,
    /// Files in folders that are not logs, plus logs skipped under `--lenient`.
    pub files_skipped: usize,
    /// Runs whose held-out split is unknown, so reuse could not be checked.
    pub reuse_unchecked: usize,
    pub gate: GateResult,
}

impl Summary {
    /// Counts one audited run.
    pub fn count(&mut self, result: &RunResult) {
        self.runs += 1;
        match result.verdict {
            Verdict::Certified => self.certified += 1,
            Verdict::Unproven => self.unproven += 1,
            Verdict::Refuted => self.refuted += 1,
            Verdict::NoClaim => self.no_claim += 1,
        }
        if result.holdout_set.is_none() && result.candidates == 1 {
            self.reuse_unchecked += 1;
        }
    }

    /// Sets `gate` from the counts.
    pub fn apply_gate(&mut self, gate: super::Gate) {
        let fails = match gate {
            super::Gate::Unproven => self.unproven + self.refuted > 0,
            super::Gate::Refuted => self.refuted > 0,
            super::Gate::Never => false,
        };
        self.gate = if fails {
            GateResult::Fail
        } else {
            GateResult::Pass
        };
    }
}

#[derive(Clone, Copy, Debug, Default, PartialEq, Eq, Serialize, Deserialize)]
#[serde(rename_all = "lowercase")]
pub enum GateResult {
    #[default]
    Pass,
    Fail,
}
