//! Resolved settings for reading run logs.

use serde::{Deserialize, Serialize};

/// How raw log columns are read and interpreted.
#[derive(Clone, Debug, Default, PartialEq, Serialize, Deserialize)]
pub struct IngestSettings {
    /// Rates, accuracies and claims are percentages (0–100) rather than fractions.
    pub percent: bool,
    /// Skip bad rows (listing them) instead of failing the audit.
    pub lenient: bool,
    /// Renames: canonical column name → the column name used in the logs.
    pub column_map: Vec<(String, String)>,
    /// Claimed accuracy for rows that carry no claim of their own (a fraction, already scaled).
    pub default_claim_accuracy: Option<f64>,
    /// Claims files (`--claims`, SPEC §10), read like logs.
    pub claims_files: Vec<std::path::PathBuf>,
    /// Raised by the caller to stop reading (not a setting of the audit: never
    /// recorded).
    #[serde(skip)]
    pub cancel: crate::error::Cancel,
}
