//! Findings: what deserves a reviewer's look in a run, as a code and a sentence
//! (SPEC §4; the plausibility findings of a claim that looks like a slip).

use serde::{Deserialize, Serialize};

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
    ClaimBelowHalf,
    ClaimLooksLikeErrorRate,
    ClaimLooksLikeAccuracy,
    HoldoutNEqualsTrainN,
    SplitSizeMismatch,
    RunIdRepeated,
    SplitNamesDifferInCase,
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
            FindingCode::ClaimBelowHalf => "claim_below_half",
            FindingCode::ClaimLooksLikeErrorRate => "claim_looks_like_error_rate",
            FindingCode::ClaimLooksLikeAccuracy => "claim_looks_like_accuracy",
            FindingCode::HoldoutNEqualsTrainN => "holdout_n_equals_train_n",
            FindingCode::SplitSizeMismatch => "split_size_mismatch",
            FindingCode::RunIdRepeated => "run_id_repeated",
            FindingCode::SplitNamesDifferInCase => "split_names_differ_in_case",
        }
    }

    /// Every code, in the order reports list them.
    pub const ALL: [FindingCode; 14] = [
        FindingCode::HoldoutReused,
        FindingCode::HoldoutSmall,
        FindingCode::GapBeyondTheory,
        FindingCode::HoldoutEasierThanTrain,
        FindingCode::TheoryVacuous,
        FindingCode::TheoryUnavailable,
        FindingCode::MisclassifiedDerived,
        FindingCode::ClaimBelowHalf,
        FindingCode::ClaimLooksLikeErrorRate,
        FindingCode::ClaimLooksLikeAccuracy,
        FindingCode::HoldoutNEqualsTrainN,
        FindingCode::SplitSizeMismatch,
        FindingCode::RunIdRepeated,
        FindingCode::SplitNamesDifferInCase,
    ];

    /// The code spelled as in reports.
    pub fn parse(text: &str) -> Option<FindingCode> {
        FindingCode::ALL
            .into_iter()
            .find(|code| code.as_str() == text)
    }

    /// Findings that suggest the claim or the log says something else than meant (a
    /// slip of scale, of column or of a split's spelling): a run that carries a claim
    /// (or a claim of a claims file about it) and one of these fails the gate unless
    /// `--gate-allow` names the code.
    pub fn blocks_gate(self) -> bool {
        matches!(
            self,
            FindingCode::ClaimBelowHalf
                | FindingCode::ClaimLooksLikeErrorRate
                | FindingCode::ClaimLooksLikeAccuracy
                | FindingCode::HoldoutNEqualsTrainN
                | FindingCode::SplitNamesDifferInCase
        )
    }
}

/// A finding: a code plus a sentence for people.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Finding {
    pub code: FindingCode,
    pub message: String,
}
