//! Certificates: the audit document plus what is needed to check it later, and
//! `gapcert verify`, which re-hashes the inputs, recomputes the audit with the recorded
//! settings and names every difference.
//!
//! The seal is a set of SHA-256 digests over the certificate's own sections (each
//! setting separately, the inputs, the runs). It detects edits made to the file after
//! it was written and names the edited part; it is not a signature: anyone who edits
//! the file can recompute it. Authenticity needs a signature from outside gapcert.

use std::collections::BTreeMap;
use std::path::{Path, PathBuf};

use serde::{Deserialize, Serialize};
use sha2::{Digest, Sha256};

use crate::error::{describe_io_error, Error};
use crate::ingest::{hex, InputFile};
use crate::report::atomic::write_atomically;
use crate::report::document::{AuditDocument, ToolInfo};

pub use crate::report::own_outputs::CERTIFICATE_FORMAT;

/// Relative differences below this are rounding, not drift.
const NUMERIC_DRIFT_TOLERANCE: f64 = 1e-12;

/// What a certificate adds to the audit document.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CertificateInfo {
    pub format: String,
    /// The paths given to `gapcert audit`, as typed (empty for the demo).
    pub paths: Vec<String>,
    /// Whether the audit was `gapcert demo` (built-in logs).
    pub demo: bool,
    /// The working folder the paths are relative to.
    pub working_dir: String,
    /// SHA-256 per setting, and of the inputs and runs sections.
    pub seal: BTreeMap<String, String>,
}

/// A certificate file: the audit document with a `certificate` section.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct Certificate {
    #[serde(flatten)]
    pub document: AuditDocument,
    pub certificate: CertificateInfo,
}

fn digest_json<T: Serialize>(value: &T) -> String {
    let bytes = serde_json::to_vec(value).unwrap_or_default();
    hex(&Sha256::digest(bytes))
}

/// The seal of a document: one digest per setting, plus inputs and runs.
pub fn seal(document: &AuditDocument) -> BTreeMap<String, String> {
    let mut seal = BTreeMap::new();
    if let Ok(serde_json::Value::Object(settings)) = serde_json::to_value(&document.settings) {
        for (name, value) in settings {
            seal.insert(format!("settings.{name}"), digest_json(&value));
        }
    }
    seal.insert("inputs".into(), digest_json(&document.inputs));
    seal.insert("runs".into(), digest_json(&document.runs));
    seal.insert("claims".into(), digest_json(&document.claims));
    seal.insert("claim_files".into(), digest_json(&document.claim_files));
    seal.insert("tool".into(), digest_json(&document.tool));
    seal
}

/// The certificate of `document`, audited from `paths` as typed (empty for the demo's
/// built-in logs), relative to the current working folder.
pub fn certify(document: &AuditDocument, paths: &[String]) -> Certificate {
    let working_dir = std::env::current_dir()
        .map(|d| d.display().to_string())
        .unwrap_or_default();
    Certificate {
        document: document.clone(),
        certificate: CertificateInfo {
            format: CERTIFICATE_FORMAT.to_string(),
            paths: paths.to_vec(),
            demo: paths.is_empty(),
            working_dir,
            seal: seal(document),
        },
    }
}

/// Writes a certificate for `document` (atomically).
pub fn write_certificate(
    path: &Path,
    document: &AuditDocument,
    paths: &[String],
) -> Result<(), Error> {
    let certificate = certify(document, paths);
    write_atomically(path, |out| {
        serde_json::to_writer_pretty(&mut *out, &certificate)?;
        out.write_all(b"\n")
    })
    .map_err(|error| {
        Error::Io(format!(
            "{}: cannot write ({}); nothing was written there",
            path.display(),
            describe_io_error(&error)
        ))
    })
}

/// One difference between a certificate and the present.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Drift {
    /// `input_changed`, `input_missing`, `input_added`, `setting_edited`, `runs_edited`,
    /// `inputs_edited`, `claims_edited`, `tool_version`, `run_changed`, `run_missing`,
    /// `run_added`, `claims_file_changed`, `claims_file_missing`, `claim_changed`,
    /// `claim_missing`, `claim_added`, `audit_failed`.
    pub kind: &'static str,
    pub subject: String,
    pub detail: String,
}

/// Reads and checks a certificate file.
pub fn read_certificate(path: &Path) -> Result<Certificate, Error> {
    let text = std::fs::read_to_string(path).map_err(|error| {
        Error::Io(format!(
            "{}: cannot read the certificate ({})",
            path.display(),
            describe_io_error(&error)
        ))
    })?;
    let certificate: Certificate = serde_json::from_str(&text).map_err(|error| {
        Error::Usage(format!(
            "{}: not a gapcert certificate ({error})",
            path.display()
        ))
    })?;
    if certificate.certificate.format != CERTIFICATE_FORMAT {
        return Err(Error::Usage(format!(
            "{}: unknown certificate format {:?} (expected {CERTIFICATE_FORMAT:?})",
            path.display(),
            certificate.certificate.format
        )));
    }
    Ok(certificate)
}

/// Compares a certificate with the present state of its inputs and of the tool.
pub fn find_drift(certificate: &Certificate) -> Vec<Drift> {
    let mut drift = Vec::new();
    let recorded = &certificate.document;
    let info = &certificate.certificate;

    // 1. Was the certificate edited after it was written?
    let present_seal = seal(recorded);
    for (name, digest) in &info.seal {
        match present_seal.get(name) {
            Some(now) if now == digest => {}
            _ => {
                let kind = if name.starts_with("settings.") {
                    "setting_edited"
                } else if name == "runs" {
                    "runs_edited"
                } else if name == "claims" || name == "claim_files" {
                    "claims_edited"
                } else if name == "inputs" {
                    "inputs_edited"
                } else {
                    "certificate_edited"
                };
                drift.push(Drift {
                    kind,
                    subject: name.trim_start_matches("settings.").to_string(),
                    detail: format!("`{name}` in the certificate no longer matches its seal: it was edited after the certificate was written"),
                });
            }
        }
    }
    for name in present_seal.keys() {
        if !info.seal.contains_key(name) {
            drift.push(Drift {
                kind: "certificate_edited",
                subject: name.clone(),
                detail: format!("`{name}` is not covered by the seal"),
            });
        }
    }

    // 2. The tool version.
    let current = ToolInfo::current();
    if recorded.tool.version != current.version {
        drift.push(Drift {
            kind: "tool_version",
            subject: "gapcert".into(),
            detail: format!(
                "written by gapcert {}, verified with {}",
                recorded.tool.version, current.version
            ),
        });
    }

    // 3. Inputs: re-discover and re-hash.
    let base = PathBuf::from(&info.working_dir);
    let relative_to_base =
        !info.demo && base.is_dir() && info.paths.iter().all(|p| base.join(p).exists());
    let resolve = |p: &str| -> PathBuf {
        if relative_to_base {
            base.join(p)
        } else {
            PathBuf::from(p)
        }
    };
    let audit_settings = recorded.settings.audit_settings();
    let mut ingest_settings = recorded.settings.ingest_settings();
    // Claims files were given like the logs, relative to the same folder.
    let claims_base_ok = base.is_dir()
        && recorded
            .settings
            .claims
            .iter()
            .all(|p| base.join(p).exists());
    ingest_settings.claims_files = recorded
        .settings
        .claims
        .iter()
        .map(|p| {
            if claims_base_ok {
                base.join(p)
            } else {
                PathBuf::from(p)
            }
        })
        .collect();
    for (recorded_path, path) in recorded
        .settings
        .claims
        .iter()
        .zip(&ingest_settings.claims_files)
    {
        if !path.exists() {
            drift.push(Drift {
                kind: "claims_file_missing",
                subject: recorded_path.clone(),
                detail: "the claims file given to the audit no longer exists".into(),
            });
        }
    }
    ingest_settings.claims_files.retain(|p| p.exists());
    let present: Result<AuditDocument, String> = if info.demo {
        crate::api::audit_sources_with_claims(
            &crate::demo::sources(),
            &crate::demo::claims_sources(),
            &audit_settings,
            &ingest_settings,
        )
        .map_err(|e| e.to_string())
    } else {
        let paths: Vec<PathBuf> = info.paths.iter().map(|p| resolve(p)).collect();
        let missing: Vec<&String> = info.paths.iter().filter(|p| !resolve(p).exists()).collect();
        for path in &missing {
            drift.push(Drift {
                kind: "input_missing",
                subject: path.to_string(),
                detail: "the path given to the audit no longer exists".into(),
            });
        }
        let present_paths: Vec<PathBuf> = paths.into_iter().filter(|p| p.exists()).collect();
        if present_paths.is_empty() {
            Err("none of the audited paths exist".to_string())
        } else {
            crate::api::audit_paths(&present_paths, &audit_settings, &ingest_settings)
                .map_err(|e| e.to_string())
        }
    };

    let now_inputs: Vec<InputFile> = match &present {
        Ok(doc) => doc.inputs.clone(),
        Err(_) => Vec::new(),
    };
    let strip = |path: &str| -> String {
        if relative_to_base {
            Path::new(path)
                .strip_prefix(&base)
                .map(|p| p.display().to_string())
                .unwrap_or_else(|_| path.to_string())
        } else {
            path.to_string()
        }
    };
    let now_by_path: BTreeMap<String, &InputFile> =
        now_inputs.iter().map(|i| (strip(&i.path), i)).collect();
    for input in &recorded.inputs {
        match now_by_path.get(&input.path) {
            Some(now) if now.sha256 == input.sha256 => {}
            Some(now) => drift.push(Drift {
                kind: "input_changed",
                subject: input.path.clone(),
                detail: format!(
                    "content changed: SHA-256 {}… → {}…, {} → {} bytes",
                    &input.sha256[..12.min(input.sha256.len())],
                    &now.sha256[..12.min(now.sha256.len())],
                    input.size,
                    now.size
                ),
            }),
            None => {
                if present.is_ok() || !Path::new(&resolve(&input.path)).exists() {
                    drift.push(Drift {
                        kind: "input_missing",
                        subject: input.path.clone(),
                        detail: "the file is gone".into(),
                    })
                } else if let Ok(bytes) = std::fs::read(resolve(&input.path)) {
                    let digest = hex(&Sha256::digest(&bytes));
                    if digest != input.sha256 {
                        drift.push(Drift {
                            kind: "input_changed",
                            subject: input.path.clone(),
                            detail: "content changed (SHA-256 differs)".into(),
                        });
                    }
                }
            }
        }
    }
    let recorded_paths: std::collections::BTreeSet<&str> =
        recorded.inputs.iter().map(|i| i.path.as_str()).collect();
    for path in now_by_path.keys() {
        if !recorded_paths.contains(path.as_str()) {
            drift.push(Drift {
                kind: "input_added",
                subject: path.clone(),
                detail: "a log file that was not part of the certified audit".into(),
            });
        }
    }

    // 4. Recompute and compare run by run.
    match present {
        Err(error) => drift.push(Drift {
            kind: "audit_failed",
            subject: "audit".into(),
            detail: format!(
                "the audit cannot be recomputed: {}",
                error.lines().next().unwrap_or("")
            ),
        }),
        Ok(doc) => {
            let now_runs: BTreeMap<String, &crate::audit::RunResult> = doc
                .runs
                .iter()
                .map(|r| (strip_source(&strip, &r.source), r))
                .collect();
            for run in &recorded.runs {
                match now_runs.get(&run.source) {
                    None => drift.push(Drift {
                        kind: "run_missing",
                        subject: run.run.clone(),
                        detail: format!("{} is no longer in the logs", run.source),
                    }),
                    Some(now) => {
                        let changes = compare_runs(run, now);
                        if !changes.is_empty() {
                            drift.push(Drift {
                                kind: "run_changed",
                                subject: run.run.clone(),
                                detail: changes.join("; "),
                            });
                        }
                    }
                }
            }
            compare_claims(recorded, &doc, &strip, &mut drift);
            let recorded_sources: std::collections::BTreeSet<&str> =
                recorded.runs.iter().map(|r| r.source.as_str()).collect();
            for (source, run) in &now_runs {
                if !recorded_sources.contains(source.as_str()) {
                    drift.push(Drift {
                        kind: "run_added",
                        subject: run.run.clone(),
                        detail: format!("{source} was not in the certified audit"),
                    });
                }
            }
        }
    }
    drift
}

/// Claims files (by path and hash) and claims (by identifier): every difference.
fn compare_claims(
    recorded: &AuditDocument,
    now: &AuditDocument,
    strip: &dyn Fn(&str) -> String,
    drift: &mut Vec<Drift>,
) {
    let now_files: BTreeMap<String, &InputFile> = now
        .claim_files
        .iter()
        .map(|f| (strip(&f.path), f))
        .collect();
    for file in &recorded.claim_files {
        match now_files.get(&file.path) {
            Some(present) if present.sha256 == file.sha256 => {}
            Some(present) => drift.push(Drift {
                kind: "claims_file_changed",
                subject: file.path.clone(),
                detail: format!(
                    "content changed: SHA-256 {}… → {}…",
                    &file.sha256[..12.min(file.sha256.len())],
                    &present.sha256[..12.min(present.sha256.len())]
                ),
            }),
            None => {}
        }
    }
    let now_claims: BTreeMap<&str, &crate::audit::claims::ClaimResult> =
        now.claims.iter().map(|c| (c.claim.as_str(), c)).collect();
    for claim in &recorded.claims {
        match now_claims.get(claim.claim.as_str()) {
            None => drift.push(Drift {
                kind: "claim_missing",
                subject: claim.claim.clone(),
                detail: format!("{} is no longer in the claims files", claim.source),
            }),
            Some(present) => {
                let mut changes = Vec::new();
                if present.verdict != claim.verdict {
                    changes.push(format!(
                        "verdict {} → {}",
                        claim.verdict.as_str(),
                        present.verdict.as_str()
                    ));
                }
                if present.kind != claim.kind
                    || present.run != claim.run
                    || present.baseline != claim.baseline
                    || differs(present.value, claim.value)
                {
                    changes
                        .push("the claim itself was edited (kind, run, baseline or value)".into());
                }
                for (name, a, b) in [
                    ("lower", claim.lower, present.lower),
                    ("upper", claim.upper, present.upper),
                ] {
                    if differs(a, b) {
                        changes.push(format!("{name} {a} → {b}"));
                    }
                }
                if present.method != claim.method {
                    changes.push(format!(
                        "method {} → {}",
                        claim.method.as_str(),
                        present.method.as_str()
                    ));
                }
                if !changes.is_empty() {
                    drift.push(Drift {
                        kind: "claim_changed",
                        subject: claim.claim.clone(),
                        detail: changes.join("; "),
                    });
                }
            }
        }
    }
    let recorded_ids: std::collections::BTreeSet<&str> =
        recorded.claims.iter().map(|c| c.claim.as_str()).collect();
    for claim in &now.claims {
        if !recorded_ids.contains(claim.claim.as_str()) {
            drift.push(Drift {
                kind: "claim_added",
                subject: claim.claim.clone(),
                detail: format!("{} was not in the certified audit", claim.source),
            });
        }
    }
}

fn strip_source(strip: &dyn Fn(&str) -> String, source: &str) -> String {
    match source.rsplit_once(':') {
        Some((file, row)) => format!("{}:{row}", strip(file)),
        None => source.to_string(),
    }
}

fn differs(a: f64, b: f64) -> bool {
    if a == b {
        return false;
    }
    (a - b).abs() > NUMERIC_DRIFT_TOLERANCE * a.abs().max(b.abs()).max(1e-300)
}

fn differs_opt(a: Option<f64>, b: Option<f64>) -> bool {
    match (a, b) {
        (Some(a), Some(b)) => differs(a, b),
        (None, None) => false,
        _ => true,
    }
}

/// Names each field of a run that changed.
fn compare_runs(recorded: &crate::audit::RunResult, now: &crate::audit::RunResult) -> Vec<String> {
    let mut changes = Vec::new();
    if recorded.verdict != now.verdict {
        changes.push(format!(
            "verdict {} → {}",
            recorded.verdict.as_str(),
            now.verdict.as_str()
        ));
    }
    let numbers: [(&str, f64, f64); 7] = [
        (
            "error_upper_bound",
            recorded.error_upper_bound,
            now.error_upper_bound,
        ),
        (
            "error_lower_bound",
            recorded.error_lower_bound,
            now.error_lower_bound,
        ),
        (
            "binomial_interval_lo",
            recorded.binomial_interval[0],
            now.binomial_interval[0],
        ),
        (
            "binomial_interval_hi",
            recorded.binomial_interval[1],
            now.binomial_interval[1],
        ),
        (
            "hoeffding_interval_lo",
            recorded.hoeffding_interval[0],
            now.hoeffding_interval[0],
        ),
        (
            "hoeffding_interval_hi",
            recorded.hoeffding_interval[1],
            now.hoeffding_interval[1],
        ),
        (
            "holdout_error_rate",
            recorded.holdout_error_rate,
            now.holdout_error_rate,
        ),
    ];
    for (name, a, b) in numbers {
        if differs(a, b) {
            changes.push(format!("{name} {a} → {b}"));
        }
    }
    let optional: [(&str, Option<f64>, Option<f64>); 4] = [
        ("vc_allowance", recorded.vc_allowance, now.vc_allowance),
        ("vc_bound", recorded.vc_bound, now.vc_bound),
        (
            "claim_error_rate",
            recorded.claim_error_rate,
            now.claim_error_rate,
        ),
        (
            "train_error_rate",
            recorded.train_error_rate,
            now.train_error_rate,
        ),
    ];
    for (name, a, b) in optional {
        if differs_opt(a, b) {
            changes.push(format!("{name} {a:?} → {b:?}"));
        }
    }
    if recorded.holdout_n != now.holdout_n
        || recorded.holdout_misclassified != now.holdout_misclassified
    {
        changes.push(format!(
            "held-out {}/{} → {}/{}",
            recorded.holdout_misclassified,
            recorded.holdout_n,
            now.holdout_misclassified,
            now.holdout_n
        ));
    }
    if recorded.candidates != now.candidates {
        changes.push(format!(
            "candidates {} → {}",
            recorded.candidates, now.candidates
        ));
    }
    if recorded.holdout_needed != now.holdout_needed || recorded.train_needed != now.train_needed {
        changes.push("sample sizes needed changed".into());
    }
    changes
}

/// What `gapcert verify` found: every difference between a certificate and the present.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Verification {
    /// The certificate's path, as given.
    pub certificate: String,
    /// No drift at all.
    pub verified: bool,
    pub drift: Vec<Drift>,
    /// Inputs, claims files, runs and claims the certificate records.
    #[serde(skip)]
    pub inputs: usize,
    #[serde(skip)]
    pub claim_files: usize,
    #[serde(skip)]
    pub runs: usize,
    #[serde(skip)]
    pub claims: usize,
}

/// Reads the certificate at `path`, re-hashes its inputs, recomputes the audit with
/// the recorded settings and names every difference.
pub fn verify(path: &Path) -> Result<Verification, Error> {
    let certificate = read_certificate(path)?;
    let drift = find_drift(&certificate);
    Ok(Verification {
        certificate: path.display().to_string(),
        verified: drift.is_empty(),
        drift,
        inputs: certificate.document.inputs.len(),
        claim_files: certificate.document.claim_files.len(),
        runs: certificate.document.runs.len(),
        claims: certificate.document.claims.len(),
    })
}
