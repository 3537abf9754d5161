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
    /// Sections of a map file for the files their patterns match.
    #[serde(default)]
    pub sections: Vec<super::columns::MapSection>,
    /// `--separator`: the field separator of delimited text (None: by extension).
    #[serde(default)]
    pub separator: Option<u8>,
    /// `--decimal-comma`: decimal numbers in delimited text are written `0,93`.
    #[serde(default)]
    pub decimal_comma: bool,
    /// `--keep`: extra columns carried into every output, as named.
    #[serde(default)]
    pub keep: Vec<String>,
}

impl IngestSettings {
    /// The settings for the file `label`: the map file's sections that match it add
    /// their renames (over the general ones for the same column) and may set the
    /// scale. Borrowed when no section applies (the usual case).
    pub fn for_file(&self, label: &str) -> std::borrow::Cow<'_, IngestSettings> {
        let applying: Vec<&super::columns::MapSection> = self
            .sections
            .iter()
            .filter(|section| section.applies_to(label))
            .collect();
        if applying.is_empty() {
            return std::borrow::Cow::Borrowed(self);
        }
        let mut settings = self.clone();
        for section in applying {
            for (canonical, theirs) in &section.map {
                settings.column_map.retain(|(c, _)| c != canonical);
                settings
                    .column_map
                    .push((canonical.clone(), theirs.clone()));
            }
            if let Some(percent) = section.percent {
                settings.percent = percent;
            }
        }
        std::borrow::Cow::Owned(settings)
    }
}
