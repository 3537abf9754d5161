//! The audit document (SPEC §7): what every report format shows and what a
//! certificate records.

use serde::{Deserialize, Serialize};

use crate::audit::claims::ClaimResult;
use crate::audit::splits::SplitEntry;
use crate::audit::{AuditSettings, FindingCode, Gate, HoldoutBound, RunResult, Summary};
use crate::ingest::{IngestSettings, InputFile, SkippedFile, SkippedRow};

/// The cautions printed once under every report (SPEC §9).
pub const CAUTIONS: &[&str] = &[
    "These guarantees assume the held-out examples were drawn i.i.d. from the distribution the model will meet in use, and were not used to train or tune the model beyond the K candidates counted for each run.",
    "Each bound holds with the stated confidence, not with certainty; with many runs, some bounds will fail unless --familywise is used.",
    "A certificate is a statement about error rates only, not about fairness, safety or fitness for a regulated use, for which local regulation and qualified review apply.",
];

#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct ToolInfo {
    pub name: String,
    pub version: String,
}

impl ToolInfo {
    pub fn current() -> ToolInfo {
        ToolInfo {
            name: "gapcert".to_string(),
            version: env!("CARGO_PKG_VERSION").to_string(),
        }
    }
}

/// Every setting that affects a number, as recorded in the document.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct DocumentSettings {
    pub confidence: f64,
    pub holdout_bound: HoldoutBound,
    pub familywise: bool,
    pub tolerance: f64,
    pub max_width: f64,
    pub gate: Gate,
    /// `--gate-allow` codes.
    #[serde(default)]
    pub gate_allow: Vec<FindingCode>,
    pub same_holdout: bool,
    pub percent: bool,
    pub lenient: bool,
    pub claim_accuracy: Option<f64>,
    /// `--map` pairs, canonical → log column.
    pub column_map: Vec<(String, String)>,
    /// Claims files (`--claims`), as given.
    #[serde(default)]
    pub claims: Vec<String>,
    /// The map file's sections for some files (renames and scale).
    #[serde(default)]
    pub map_sections: Vec<crate::ingest::columns::MapSection>,
    /// `--separator` (as a character), `--decimal-comma`, `--keep`.
    #[serde(default)]
    pub separator: Option<char>,
    #[serde(default)]
    pub decimal_comma: bool,
    #[serde(default)]
    pub keep: Vec<String>,
}

impl DocumentSettings {
    pub fn new(audit: &AuditSettings, ingest: &IngestSettings) -> DocumentSettings {
        DocumentSettings {
            confidence: audit.confidence,
            holdout_bound: audit.holdout_bound,
            familywise: audit.familywise,
            tolerance: audit.tolerance,
            max_width: audit.max_width,
            gate: audit.gate,
            gate_allow: audit.gate_allow.clone(),
            same_holdout: audit.same_holdout,
            percent: ingest.percent,
            lenient: ingest.lenient,
            claim_accuracy: ingest.default_claim_accuracy,
            column_map: ingest.column_map.clone(),
            claims: ingest
                .claims_files
                .iter()
                .map(|p| p.display().to_string())
                .collect(),
            map_sections: ingest.sections.clone(),
            separator: ingest.separator.map(char::from),
            decimal_comma: ingest.decimal_comma,
            keep: ingest.keep.clone(),
        }
    }

    pub fn audit_settings(&self) -> AuditSettings {
        AuditSettings {
            confidence: self.confidence,
            holdout_bound: self.holdout_bound,
            familywise: self.familywise,
            same_holdout: self.same_holdout,
            tolerance: self.tolerance,
            max_width: self.max_width,
            gate: self.gate,
            gate_allow: self.gate_allow.clone(),
        }
    }

    pub fn ingest_settings(&self) -> IngestSettings {
        IngestSettings {
            percent: self.percent,
            lenient: self.lenient,
            column_map: self.column_map.clone(),
            default_claim_accuracy: self.claim_accuracy,
            claims_files: self.claims.iter().map(std::path::PathBuf::from).collect(),
            cancel: crate::error::Cancel::default(),
            sections: self.map_sections.clone(),
            separator: self.separator.and_then(|c| u8::try_from(c).ok()),
            decimal_comma: self.decimal_comma,
            keep: self.keep.clone(),
        }
    }
}

/// The whole audit as one document.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct AuditDocument {
    pub tool: ToolInfo,
    pub generated_at: String,
    pub settings: DocumentSettings,
    pub inputs: Vec<InputFile>,
    pub runs: Vec<RunResult>,
    /// The claims of the claims files (SPEC §10).
    #[serde(default)]
    pub claims: Vec<ClaimResult>,
    /// The claims files read, hashed.
    #[serde(default)]
    pub claim_files: Vec<InputFile>,
    /// The held-out splits' wear (SPEC §11).
    #[serde(default)]
    pub splits: Vec<SplitEntry>,
    pub summary: Summary,
    pub skipped_rows: Vec<SkippedRow>,
    pub skipped_files: Vec<SkippedFile>,
    pub cautions: Vec<String>,
    /// `file: note` lines of reading the logs, said under `-v` (not written out).
    #[serde(skip)]
    pub notes: Vec<String>,
}

/// The current time, RFC 3339 UTC, whole seconds.
pub fn now_rfc3339() -> String {
    chrono::Utc::now().to_rfc3339_opts(chrono::SecondsFormat::Secs, true)
}
