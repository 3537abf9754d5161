//! What tells gapcert's own outputs apart from logs: the flat column names of the
//! runs and of the claims, the JSON document's members and the certificate format.
//! The writers use these lists and the readers recognise outputs by them
//! (`ingest::formats::own_report_kind`), so this file imports nothing: the readers
//! depend on it without depending on the writers. Tested against what the writers
//! produce in `tests/it/hostile.rs` and `tests/it/folders.rs`.

/// The flat column names, in output order: every column, [`EXPLANATION`] included;
/// without `--explain` the flat formats leave that one out.
pub const FLAT_COLUMNS: &[&str] = &[
    "run",
    "source",
    "family",
    "train_n",
    "train_error_rate",
    "holdout_n",
    "holdout_error_rate",
    "holdout_misclassified",
    "holdout_set",
    "candidates",
    "delta",
    "hoeffding_interval_lo",
    "hoeffding_interval_hi",
    "binomial_interval_lo",
    "binomial_interval_hi",
    "error_upper_bound",
    "error_lower_bound",
    "certifiable_accuracy",
    "vc_dim",
    "growth_ln",
    "vc_allowance",
    "vc_bound",
    "observed_gap",
    "certified_gap_max",
    "claim_error_rate",
    "verdict",
    "explanation",
    "holdout_needed",
    "train_needed",
    "findings",
    "logged_at",
    "copies",
];

/// The column of the verdict's sentence, written only with `--explain`: it restates
/// fields a program already has, and at a million runs it is a sixth of the bytes.
pub const EXPLANATION: &str = "explanation";

/// The flat claim columns, in output order (the JSON document's claim fields).
pub const CLAIM_COLUMNS: &[&str] = &[
    "claim",
    "source",
    "statement",
    "kind",
    "run",
    "baseline",
    "value",
    "runs_matched",
    "method",
    "delta",
    "lower",
    "upper",
    "threshold",
    "mcnemar_p",
    "verdict",
    "holdout_needed",
    "evidence",
];

/// The JSON document's members ([`super::document::AuditDocument`] as serde writes
/// it; in any order there): the last [`OPTIONAL_DOCUMENT_MEMBERS`] are absent from
/// documents of older versions.
pub const DOCUMENT_MEMBERS: &[&str] = &[
    "tool",
    "generated_at",
    "settings",
    "inputs",
    "runs",
    "summary",
    "skipped_rows",
    "skipped_files",
    "cautions",
    "claims",
    "claim_files",
    "splits",
];
pub const OPTIONAL_DOCUMENT_MEMBERS: usize = 3;

/// Identifies the certificate layout written (format 2: `root`, paths relative to
/// the certificate's folder; format 1 recorded the absolute `working_dir`).
pub const CERTIFICATE_FORMAT: &str = "gapcert-certificate/2";
