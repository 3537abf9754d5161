//! One validated run, ready for the audit, and how its claim was written.

use crate::theory::growth::Family;

/// One validated run, ready for the audit.
#[derive(Clone, Debug, PartialEq)]
pub struct RunInput {
    pub run: String,
    /// `file:row`, 1-based data row.
    pub source: String,
    /// The family key as logged (lower case), known or not.
    pub family_key: Option<String>,
    /// The resolved family; `None` when absent or unknown.
    pub family: Option<Family>,
    pub train_n: Option<u64>,
    pub train_error_rate: Option<f64>,
    pub holdout_n: u64,
    pub holdout_error_rate: f64,
    pub holdout_misclassified: u64,
    /// The count was derived as round(rate × n) because only a rate was logged.
    pub misclassified_derived: bool,
    pub holdout_set: Option<String>,
    pub candidates: u64,
    pub claim_error_rate: Option<f64>,
    /// How the claim was written (None without a claim): the plausibility findings
    /// compare a claim with the observed error on the scale it was written in.
    pub claim_form: Option<ClaimForm>,
    /// Normalised RFC 3339 (UTC).
    pub logged_at: Option<String>,
    /// The sources of identical runs read elsewhere and set aside (see
    /// [`super::set_aside_copies`]).
    pub copies: Vec<String>,
    /// Another run shares this run's identifier with different values.
    pub id_repeated: bool,
    /// The `--keep` columns (name as asked, cell as text), in the order asked.
    pub kept: Vec<(String, Option<String>)>,
}

/// How a run's claim was written.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum ClaimForm {
    /// A `claimed_accuracy` cell.
    Accuracy,
    /// A `claimed_error_rate` cell.
    ErrorRate,
    /// No claim in the row: the accuracy of `--claim-accuracy`.
    DefaultAccuracy,
}
