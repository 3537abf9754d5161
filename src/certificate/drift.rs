//! Drift: what kinds of difference `verify` reports, and the comparison of a
//! certificate's document with the recomputed one, field by field. Every key of
//! either side is visited: a field only one side has is drift too, named by its path
//! (`summary.gate`, `splits[0].comparisons_left`, `runs[3].extra_key`). Runs are
//! matched by source, claims by identifier, input files by path; other arrays item
//! by item. Integers must be equal; other numbers agree within a relative 1e-12
//! (rounding, not drift).

use std::collections::{BTreeMap, BTreeSet};

use serde::Serialize;
use serde_json::{Map, Value};

/// Relative differences below this are rounding, not drift.
const NUMERIC_DRIFT_TOLERANCE: f64 = 1e-12;

/// What kind of difference a [`Drift`] is.
#[derive(Clone, Copy, Debug, PartialEq, Eq, PartialOrd, Ord, Serialize)]
#[serde(rename_all = "snake_case")]
pub enum DriftKind {
    /// A log's content changed (its SHA-256 differs).
    InputChanged,
    /// A path given to the audit, or a log it read, is not in the folder verified.
    InputMissing,
    /// A log the certified audit did not read.
    InputAdded,
    ClaimsFileChanged,
    ClaimsFileMissing,
    ClaimsFileAdded,
    /// The seal names a setting edited after writing.
    SettingEdited,
    /// The seal names the inputs, runs, claims or another section edited after writing.
    InputsEdited,
    RunsEdited,
    ClaimsEdited,
    CertificateEdited,
    /// Written by another version of gapcert.
    ToolVersion,
    /// A run recomputes differently (each changed field named).
    RunChanged,
    RunMissing,
    RunAdded,
    ClaimChanged,
    ClaimMissing,
    ClaimAdded,
    /// Any other field of the document recomputes to another value.
    FieldChanged,
    /// The certificate has a field the recomputed document does not.
    FieldAdded,
    /// The recomputed document has a field the certificate lacks.
    FieldMissing,
    /// The audit could not be recomputed.
    AuditFailed,
}

impl DriftKind {
    pub fn as_str(self) -> &'static str {
        match self {
            DriftKind::InputChanged => "input_changed",
            DriftKind::InputMissing => "input_missing",
            DriftKind::InputAdded => "input_added",
            DriftKind::ClaimsFileChanged => "claims_file_changed",
            DriftKind::ClaimsFileMissing => "claims_file_missing",
            DriftKind::ClaimsFileAdded => "claims_file_added",
            DriftKind::SettingEdited => "setting_edited",
            DriftKind::InputsEdited => "inputs_edited",
            DriftKind::RunsEdited => "runs_edited",
            DriftKind::ClaimsEdited => "claims_edited",
            DriftKind::CertificateEdited => "certificate_edited",
            DriftKind::ToolVersion => "tool_version",
            DriftKind::RunChanged => "run_changed",
            DriftKind::RunMissing => "run_missing",
            DriftKind::RunAdded => "run_added",
            DriftKind::ClaimChanged => "claim_changed",
            DriftKind::ClaimMissing => "claim_missing",
            DriftKind::ClaimAdded => "claim_added",
            DriftKind::FieldChanged => "field_changed",
            DriftKind::FieldAdded => "field_added",
            DriftKind::FieldMissing => "field_missing",
            DriftKind::AuditFailed => "audit_failed",
        }
    }
}

impl std::fmt::Display for DriftKind {
    fn fmt(&self, f: &mut std::fmt::Formatter<'_>) -> std::fmt::Result {
        f.pad(self.as_str())
    }
}

/// One difference between a certificate and the present.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Drift {
    pub kind: DriftKind,
    /// What differs: a file, a run or claim identifier, a setting, or a field's path
    /// in the document (`summary.gate`, `splits[0].comparisons_left`).
    pub subject: String,
    pub detail: String,
}

impl Drift {
    pub(super) fn new(
        kind: DriftKind,
        subject: impl Into<String>,
        detail: impl Into<String>,
    ) -> Drift {
        Drift {
            kind,
            subject: subject.into(),
            detail: detail.into(),
        }
    }
}

/// One field that differs between the certificate and the recomputed document.
struct FieldDifference {
    path: String,
    /// None: not in the certificate.
    written: Option<Value>,
    /// None: not in the recomputed document.
    present: Option<Value>,
}

impl FieldDifference {
    /// The difference, beginning with the field's path.
    fn describe(&self) -> String {
        format!("{} {}", self.path, self.change())
    }

    /// The difference, without the path.
    fn change(&self) -> String {
        match (&self.written, &self.present) {
            (Some(written), Some(present)) => format!("{} → {}", show(written), show(present)),
            (Some(written), None) => format!(
                "= {} in the certificate, not in the recomputed document",
                show(written)
            ),
            (None, Some(present)) => format!(
                "missing from the certificate (recomputed: {})",
                show(present)
            ),
            (None, None) => String::new(),
        }
    }

    fn kind(&self) -> DriftKind {
        match (&self.written, &self.present) {
            (Some(_), None) => DriftKind::FieldAdded,
            (None, Some(_)) => DriftKind::FieldMissing,
            _ => DriftKind::FieldChanged,
        }
    }
}

/// A value as shown in a drift detail: strings bare, long values cut.
pub(super) fn show(value: &Value) -> String {
    let text = match value {
        Value::String(text) => text.clone(),
        other => other.to_string(),
    };
    const LIMIT: usize = 80;
    if text.chars().count() > LIMIT {
        let cut: String = text.chars().take(LIMIT).collect();
        format!("{cut}…")
    } else {
        text
    }
}

fn child_path(path: &str, key: &str) -> String {
    if path.is_empty() {
        key.to_string()
    } else {
        format!("{path}.{key}")
    }
}

/// Every difference between two JSON values, by path.
fn compare_values(path: &str, written: &Value, present: &Value, out: &mut Vec<FieldDifference>) {
    match (written, present) {
        (Value::Object(a), Value::Object(b)) => {
            for (key, value) in a {
                let at = child_path(path, key);
                match b.get(key) {
                    Some(other) => compare_values(&at, value, other, out),
                    None => out.push(FieldDifference {
                        path: at,
                        written: Some(value.clone()),
                        present: None,
                    }),
                }
            }
            for (key, value) in b {
                if !a.contains_key(key) {
                    out.push(FieldDifference {
                        path: child_path(path, key),
                        written: None,
                        present: Some(value.clone()),
                    });
                }
            }
        }
        (Value::Array(a), Value::Array(b)) if a.len() == b.len() => {
            for (index, (x, y)) in a.iter().zip(b).enumerate() {
                compare_values(&format!("{path}[{index}]"), x, y, out);
            }
        }
        (Value::Number(a), Value::Number(b)) if numbers_agree(a, b) => {}
        _ if written == present => {}
        _ => out.push(FieldDifference {
            path: path.to_string(),
            written: Some(written.clone()),
            present: Some(present.clone()),
        }),
    }
}

/// Integers exactly; other numbers within [`NUMERIC_DRIFT_TOLERANCE`].
fn numbers_agree(a: &serde_json::Number, b: &serde_json::Number) -> bool {
    if a.is_f64() || b.is_f64() {
        match (a.as_f64(), b.as_f64()) {
            (Some(x), Some(y)) => !differs(x, y),
            _ => false,
        }
    } else {
        a == b
    }
}

fn differs(a: f64, b: f64) -> bool {
    if a == b {
        return false;
    }
    (a - b).abs() > NUMERIC_DRIFT_TOLERANCE * a.abs().max(b.abs()).max(1e-300)
}

/// The sections whose items are matched by a key rather than by position, the key,
/// and the kinds of drift of a changed, missing and added item.
const KEYED_SECTIONS: [(&str, &str, [DriftKind; 3]); 4] = [
    (
        "inputs",
        "path",
        [
            DriftKind::InputChanged,
            DriftKind::InputMissing,
            DriftKind::InputAdded,
        ],
    ),
    (
        "claim_files",
        "path",
        [
            DriftKind::ClaimsFileChanged,
            DriftKind::ClaimsFileMissing,
            DriftKind::ClaimsFileAdded,
        ],
    ),
    (
        "runs",
        "source",
        [
            DriftKind::RunChanged,
            DriftKind::RunMissing,
            DriftKind::RunAdded,
        ],
    ),
    (
        "claims",
        "claim",
        [
            DriftKind::ClaimChanged,
            DriftKind::ClaimMissing,
            DriftKind::ClaimAdded,
        ],
    ),
];

/// Every difference between the document as written and as recomputed.
pub(super) fn compare_documents(
    written: &Map<String, Value>,
    present: &Map<String, Value>,
    drift: &mut Vec<Drift>,
) {
    let mut present = present.clone();
    set_aside_later_reports(written, &mut present);
    for (section, key, kinds) in KEYED_SECTIONS {
        let (Some(Value::Array(a)), Some(Value::Array(b))) =
            (written.get(section), present.get(section))
        else {
            continue;
        };
        compare_keyed(section, key, kinds, a, b, drift);
    }
    let keyed = |name: &str| {
        KEYED_SECTIONS.iter().any(|(section, ..)| {
            *section == name
                && written.get(name).is_some_and(Value::is_array)
                && present.get(name).is_some_and(Value::is_array)
        })
    };
    let mut rest = Vec::new();
    for (name, value) in written {
        if name == "generated_at" || keyed(name) {
            continue;
        }
        match present.get(name) {
            Some(other) => compare_values(name, value, other, &mut rest),
            None => rest.push(FieldDifference {
                path: name.clone(),
                written: Some(value.clone()),
                present: None,
            }),
        }
    }
    for (name, value) in &present {
        if !written.contains_key(name) && name != "generated_at" {
            rest.push(FieldDifference {
                path: name.clone(),
                written: None,
                present: Some(value.clone()),
            });
        }
    }
    for difference in rest {
        // A different version is said once, by the tool check.
        if difference.path == "tool.version" {
            continue;
        }
        drift.push(Drift::new(
            difference.kind(),
            difference.path.clone(),
            difference.change(),
        ));
    }
}

/// gapcert's own reports written into an audited folder after the certificate (the
/// certificate itself among them) are left out of the recomputed skipped files: they
/// are outputs, not inputs.
fn set_aside_later_reports(written: &Map<String, Value>, present: &mut Map<String, Value>) {
    let known: BTreeSet<&str> = written
        .get("skipped_files")
        .and_then(Value::as_array)
        .map(|files| files.iter().filter_map(|f| f["path"].as_str()).collect())
        .unwrap_or_default();
    let Some(Value::Array(files)) = present.get_mut("skipped_files") else {
        return;
    };
    let before = files.len();
    files.retain(|file| {
        let own_report = file["reason"]
            .as_str()
            .is_some_and(|reason| reason.ends_with("not a log"));
        !own_report || file["path"].as_str().is_some_and(|p| known.contains(p))
    });
    let set_aside = (before - files.len()) as u64;
    if let Some(count) = present
        .get_mut("summary")
        .and_then(|summary| summary.get_mut("files_skipped"))
    {
        if let Some(n) = count.as_u64() {
            *count = Value::from(n.saturating_sub(set_aside));
        }
    }
}

/// Items matched by `key`: each changed item is one drift naming its changed fields,
/// each missing or added item one drift.
fn compare_keyed(
    section: &str,
    key: &str,
    [changed, missing, added]: [DriftKind; 3],
    written: &[Value],
    present: &[Value],
    drift: &mut Vec<Drift>,
) {
    let key_of = |item: &Value| item.get(key).map(show).unwrap_or_default();
    // Runs and claims are named by their identifier, files by their path.
    let name_of = |item: &Value| match section {
        "runs" => item.get("run").map(show).unwrap_or_else(|| key_of(item)),
        _ => key_of(item),
    };
    let present_by_key: BTreeMap<String, &Value> =
        present.iter().map(|item| (key_of(item), item)).collect();
    let mut seen = BTreeSet::new();
    for (index, item) in written.iter().enumerate() {
        let item_key = key_of(item);
        seen.insert(item_key.clone());
        let Some(now) = present_by_key.get(&item_key) else {
            let detail = match section {
                "runs" => format!("{item_key} is no longer in the logs"),
                "claims" => format!("{} is no longer in the claims files", show(&item["source"])),
                _ => "the file is not in the folder verified".to_string(),
            };
            drift.push(Drift::new(missing, name_of(item), detail));
            continue;
        };
        if matches!(section, "inputs" | "claim_files") && item["sha256"] != now["sha256"] {
            let digest = |v: &Value| {
                v["sha256"]
                    .as_str()
                    .unwrap_or("")
                    .chars()
                    .take(12)
                    .collect::<String>()
            };
            drift.push(Drift::new(
                changed,
                item_key,
                format!(
                    "content changed: SHA-256 {}… → {}…, {} → {} bytes",
                    digest(item),
                    digest(now),
                    show(&item["size"]),
                    show(&now["size"])
                ),
            ));
            continue;
        }
        let mut differences = Vec::new();
        compare_values(&format!("{section}[{index}]"), item, now, &mut differences);
        if differences.is_empty() {
            continue;
        }
        let detail = differences
            .iter()
            .map(FieldDifference::describe)
            .collect::<Vec<_>>()
            .join("; ");
        // A file recorded with its content unchanged but its entry edited.
        let kind = if matches!(section, "inputs" | "claim_files") {
            DriftKind::FieldChanged
        } else {
            changed
        };
        drift.push(Drift::new(kind, name_of(item), detail));
    }
    for item in present {
        if !seen.contains(&key_of(item)) {
            let detail = match section {
                "runs" => format!("{} was not in the certified audit", key_of(item)),
                "claims" => format!("{} was not in the certified audit", show(&item["source"])),
                "inputs" => "a log file that was not part of the certified audit".to_string(),
                _ => "a claims file that was not part of the certified audit".to_string(),
            };
            drift.push(Drift::new(added, name_of(item), detail));
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn every_differing_field_is_named_by_its_path() {
        let written = serde_json::json!({
            "summary": {"gate": "pass", "runs": 3},
            "splits": [{"comparisons_left": 100000}],
            "extra": 1,
        });
        let present = serde_json::json!({
            "summary": {"gate": "fail", "runs": 3},
            "splits": [{"comparisons_left": 137}],
        });
        let mut out = Vec::new();
        compare_values("", &written, &present, &mut out);
        let mut paths: Vec<&str> = out.iter().map(|d| d.path.as_str()).collect();
        paths.sort_unstable();
        assert_eq!(
            paths,
            ["extra", "splits[0].comparisons_left", "summary.gate"]
        );
    }

    #[test]
    fn numbers_agree_within_rounding_and_integers_exactly() {
        let number = |text: &str| serde_json::from_str::<serde_json::Number>(text).unwrap();
        assert!(numbers_agree(
            &number("0.1"),
            &number("0.10000000000000002")
        ));
        assert!(!numbers_agree(&number("0.1"), &number("0.1000001")));
        assert!(!numbers_agree(
            &number("9007199254740993"),
            &number("9007199254740992")
        ));
    }
}
