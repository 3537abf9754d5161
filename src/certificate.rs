//! Certificates: the audit document plus what is needed to check it later, and
//! `gapcert verify`, which re-hashes the inputs, recomputes the audit with the recorded
//! settings and names every difference.
//!
//! **What verify checks.** Every field of the document except `generated_at` is
//! recomputed from the inputs and compared with the certificate, key by key and item by
//! item: an edited headline (`summary.gate`), an edited split (`splits[0].
//! comparisons_left`) or a key added anywhere (`runs[3].extra_key`) is drift named by
//! its path, like a changed log. Runs are matched by source, claims by identifier and
//! files by path; numbers agree within a relative 1e-12 (rounding, not drift). The
//! certificate's own section is checked apart: its format, its paths (they decide what
//! is recomputed) and its seal. The seal is a set of SHA-256 digests over the
//! certificate's sections (each setting separately, the inputs, the runs, the claims);
//! it names which part was edited after writing; it is not a signature: anyone who
//! edits the file can recompute it, which is why the recomputation, not the seal,
//! decides. Authenticity needs a signature from outside gapcert.
//!
//! **Where the inputs are.** The paths in the document are the audit's, relative to
//! the folder it ran in; the certificate records that folder relative to its own
//! (`root`, "." when the certificate was written there). `verify` reads the inputs
//! from the certificate's folder (joined with `root`), or from `--root DIR`, and from
//! nowhere else: a file missing there is drift, never looked up in the folder the
//! audit ran in. A path that leads out of that folder (absolute, or with `..`) is
//! refused (exit 2) unless `--root` names a folder holding it. Certificates of format
//! 1 recorded the absolute `working_dir` instead; it is shown when an input is
//! missing, never read from. Tested in `tests/it/certificate.rs`.

use std::collections::{BTreeMap, BTreeSet};
use std::path::{Component, Path, PathBuf};

use serde::{Deserialize, Serialize};
use serde_json::{Map, Value};
use sha2::{Digest, Sha256};

use crate::error::{describe_io_error, Error};
use crate::ingest::hex;
use crate::report::atomic::write_atomically;
use crate::report::document::{AuditDocument, ToolInfo};
use crate::report::text::printable;

pub use crate::report::own_outputs::CERTIFICATE_FORMAT;

mod drift;
use drift::compare_documents;
pub use drift::{Drift, DriftKind};

/// Layouts `verify` reads: format 1 recorded the absolute `working_dir`.
const FORMATS_READ: [&str; 2] = ["gapcert-certificate/1", CERTIFICATE_FORMAT];

/// What a certificate adds to the audit document.
#[derive(Clone, Debug, PartialEq, Serialize, Deserialize)]
pub struct CertificateInfo {
    pub format: String,
    /// The paths given to `gapcert audit`, as typed (empty for the demo).
    pub paths: Vec<String>,
    /// Whether the audit was `gapcert demo` (built-in logs).
    pub demo: bool,
    /// The folder the audit ran in (which the paths are relative to), relative to the
    /// certificate's own folder, with `/` between names: "." when the certificate was
    /// written in that folder.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub root: Option<String>,
    /// Format 1: the absolute folder the audit ran in. Shown, never read from.
    #[serde(default, skip_serializing_if = "Option::is_none")]
    pub working_dir: Option<String>,
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
    if let Ok(Value::Object(settings)) = serde_json::to_value(&document.settings) {
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
/// built-in logs) in the folder `working_dir`, to be written at `certificate_path`.
/// Absolute paths inside `working_dir` are written relative to it, everywhere in the
/// document, so that a copy of the folder verifies like the original.
pub fn certify(
    document: &AuditDocument,
    paths: &[String],
    working_dir: &Path,
    certificate_path: &Path,
) -> Certificate {
    let folder = absolute(working_dir);
    let root = relative_folder(&folder_of(certificate_path), &folder);
    let renames = relative_renames(
        paths.iter().chain(&document.settings.claims),
        &[working_dir, &folder],
    );
    let document = rebased(document, &renames).unwrap_or_else(|| document.clone());
    let demo = paths.is_empty();
    let paths = paths
        .iter()
        .map(|path| {
            let mut path = Value::String(path.clone());
            rename_paths(&mut path, &renames);
            path.as_str().unwrap_or_default().to_string()
        })
        .collect();
    Certificate {
        certificate: CertificateInfo {
            format: CERTIFICATE_FORMAT.to_string(),
            paths,
            demo,
            root: Some(root),
            working_dir: None,
            seal: seal(&document),
        },
        document,
    }
}

/// For each absolute path among `given` that lies inside one of `folders` (the same
/// folder as given and with links resolved), what to write instead: the text of the
/// path and the text relative to the folder, longest first. The folder itself becomes
/// `.` (and its files `./name`, as an audit of `.` names them).
fn relative_renames<'a>(
    given: impl Iterator<Item = &'a String>,
    folders: &[&Path],
) -> Vec<(String, String)> {
    let mut renames = Vec::new();
    for path in given {
        if !Path::new(path).is_absolute() {
            continue;
        }
        let inside = folders
            .iter()
            .find_map(|folder| Path::new(path).strip_prefix(folder).ok());
        if let Some(rest) = inside {
            let rest = rest.display().to_string();
            let path = path.trim_end_matches('/').to_string();
            if rest.is_empty() {
                renames.push((format!("{path}/"), "./".to_string()));
                renames.push((path, ".".to_string()));
            } else {
                renames.push((path, rest));
            }
        }
    }
    renames.sort_by_key(|(from, _)| std::cmp::Reverse(from.len()));
    renames.dedup();
    renames
}

/// Applies `renames` to every string of `value`, wherever the path appears (a path
/// strictly inside the folder can only begin a longer path inside it too); the folder
/// itself (renamed `.`) only where it is the whole string, its files through `W/`.
fn rename_paths(value: &mut Value, renames: &[(String, String)]) {
    match value {
        Value::String(text) => {
            for (from, to) in renames {
                if to == "." {
                    if text.as_str() == from {
                        *text = to.clone();
                    }
                } else if text.contains(from.as_str()) {
                    *text = text.replace(from.as_str(), to);
                }
            }
        }
        Value::Array(items) => items
            .iter_mut()
            .for_each(|item| rename_paths(item, renames)),
        Value::Object(fields) => fields
            .values_mut()
            .for_each(|item| rename_paths(item, renames)),
        _ => {}
    }
}

/// `document` with `renames` applied to its paths; None when there is nothing to do.
fn rebased(document: &AuditDocument, renames: &[(String, String)]) -> Option<AuditDocument> {
    if renames.is_empty() {
        return None;
    }
    let mut value = serde_json::to_value(document).ok()?;
    rename_paths(&mut value, renames);
    let mut rebased: AuditDocument = serde_json::from_value(value).ok()?;
    rebased.notes = document.notes.clone();
    Some(rebased)
}

/// Writes a certificate for `document`, audited from `paths` in the current folder
/// (atomically).
pub fn write_certificate(
    path: &Path,
    document: &AuditDocument,
    paths: &[String],
) -> Result<(), Error> {
    let working_dir = std::env::current_dir().unwrap_or_else(|_| PathBuf::from("."));
    let certificate = certify(document, paths, &working_dir, path);
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

/// `path` made absolute, with links resolved where it exists.
fn absolute(path: &Path) -> PathBuf {
    std::fs::canonicalize(path)
        .or_else(|_| std::path::absolute(path))
        .map(|p| normalize(&p))
        .unwrap_or_else(|_| path.to_path_buf())
}

/// The folder a file at `path` lies in, absolute.
fn folder_of(path: &Path) -> PathBuf {
    match path.parent() {
        Some(parent) if !parent.as_os_str().is_empty() => absolute(parent),
        _ => absolute(Path::new(".")),
    }
}

/// `path` with `.` and `..` resolved by name (no file system access).
fn normalize(path: &Path) -> PathBuf {
    let mut out = PathBuf::new();
    for component in path.components() {
        match component {
            Component::CurDir => {}
            Component::ParentDir => {
                let popped =
                    matches!(out.components().next_back(), Some(Component::Normal(_))) && out.pop();
                if !popped && !out.has_root() {
                    out.push("..");
                }
            }
            other => out.push(other.as_os_str()),
        }
    }
    out
}

/// The path that leads from folder `from` to folder `to` (both absolute and
/// normalized), with `/` between names; `to` itself when they share no root.
fn relative_folder(from: &Path, to: &Path) -> String {
    let from_parts: Vec<Component> = from.components().collect();
    let to_parts: Vec<Component> = to.components().collect();
    if from_parts.first() != to_parts.first() {
        return to.display().to_string();
    }
    let common = from_parts
        .iter()
        .zip(&to_parts)
        .take_while(|(a, b)| a == b)
        .count();
    let mut parts: Vec<String> = vec!["..".to_string(); from_parts.len() - common];
    parts.extend(
        to_parts[common..]
            .iter()
            .map(|c| c.as_os_str().to_string_lossy().to_string()),
    );
    if parts.is_empty() {
        ".".to_string()
    } else {
        parts.join("/")
    }
}

/// A certificate as read: typed, and the document as written (every key, known or
/// not), without its `certificate` section.
struct ReadCertificate {
    certificate: Certificate,
    written: Map<String, Value>,
    /// Keys of the `certificate` section that no format has.
    unknown_keys: Vec<String>,
}

/// The keys of the `certificate` section.
const CERTIFICATE_KEYS: [&str; 6] = ["format", "paths", "demo", "root", "working_dir", "seal"];

/// Reads and checks a certificate file.
pub fn read_certificate(path: &Path) -> Result<Certificate, Error> {
    read_whole(path).map(|read| read.certificate)
}

fn read_whole(path: &Path) -> Result<ReadCertificate, Error> {
    let text = std::fs::read_to_string(path).map_err(|error| {
        Error::Io(format!(
            "{}: cannot read the certificate ({})",
            path.display(),
            describe_io_error(&error)
        ))
    })?;
    // An editor may save the file with a byte-order mark; JSON has none.
    let text = text.strip_prefix('\u{feff}').unwrap_or(&text);
    let not_a_certificate = |error: serde_json::Error| {
        Error::Usage(format!(
            "{}: not a gapcert certificate ({error})",
            path.display()
        ))
    };
    let value: Value = serde_json::from_str(text).map_err(not_a_certificate)?;
    let certificate: Certificate = match serde_json::from_value(value.clone()) {
        Ok(certificate) => certificate,
        // Read from the text again for the error alone, part by part: then its line
        // and column point at the value of the wrong type (an error from the parsed
        // value has neither, and one through the flattened document points at the
        // end of the file).
        Err(error) => {
            #[derive(Deserialize)]
            struct InfoOnly {
                #[allow(dead_code)]
                certificate: CertificateInfo,
            }
            let located = serde_json::from_str::<AuditDocument>(text)
                .err()
                .or_else(|| serde_json::from_str::<InfoOnly>(text).err());
            return Err(not_a_certificate(located.unwrap_or(error)));
        }
    };
    if !FORMATS_READ.contains(&certificate.certificate.format.as_str()) {
        return Err(Error::Usage(format!(
            "{}: unknown certificate format {:?} (expected {CERTIFICATE_FORMAT:?})",
            path.display(),
            certificate.certificate.format
        )));
    }
    let Value::Object(mut written) = value else {
        unreachable!("a certificate parsed from an object")
    };
    let unknown_keys = match written.remove("certificate") {
        Some(Value::Object(section)) => section
            .keys()
            .filter(|key| !CERTIFICATE_KEYS.contains(&key.as_str()))
            .cloned()
            .collect(),
        _ => Vec::new(),
    };
    Ok(ReadCertificate {
        certificate,
        written,
        unknown_keys,
    })
}

/// The folder a certificate's inputs are read from, and the tree they must lie in.
#[derive(Clone, Debug)]
struct Folder {
    /// The folder the recorded relative paths are joined to (absolute).
    base: PathBuf,
    /// No path may lead out of this folder (absolute).
    tree: PathBuf,
}

impl Folder {
    /// The certificate's own folder joined with its `root`, or `--root`.
    fn of(path: &Path, info: &CertificateInfo, root: Option<&Path>) -> Folder {
        match root {
            Some(root) => {
                let root = absolute(root);
                Folder {
                    base: root.clone(),
                    tree: root,
                }
            }
            None => {
                let tree = folder_of(path);
                let base = normalize(&tree.join(info.root.as_deref().unwrap_or(".")));
                Folder { base, tree }
            }
        }
    }

    /// Where a recorded path is read from: joined to the base unless absolute.
    fn resolve(&self, recorded: &str) -> PathBuf {
        self.base.join(recorded)
    }

    /// Whether a recorded path leads out of the tree.
    fn escapes(&self, recorded: &str) -> bool {
        !normalize(&self.resolve(recorded)).starts_with(&self.tree)
    }
}

/// Refuses a certificate whose paths lead out of the folder verified.
fn check_tree(
    path: &Path,
    certificate: &Certificate,
    folder: &Folder,
    root_given: bool,
) -> Result<(), Error> {
    let info = &certificate.certificate;
    let recorded = info
        .paths
        .iter()
        .chain(&certificate.document.settings.claims);
    let escaping: Vec<&String> = recorded.filter(|p| folder.escapes(p)).collect();
    if escaping.is_empty() {
        return Ok(());
    }
    let list = escaping
        .iter()
        .map(|p| format!("`{}`", printable(p)))
        .collect::<Vec<_>>()
        .join(", ");
    let advice = if root_given {
        "give --root a folder that holds them".to_string()
    } else if !folder.base.starts_with(&folder.tree) {
        format!(
            "the audit ran in {} (`{}` from the certificate's folder); if the inputs are meant to be read there, give --root {}",
            folder.base.display(),
            certificate.certificate.root.as_deref().unwrap_or("."),
            folder.base.display()
        )
    } else {
        "if the inputs are meant to be read there, give --root FOLDER naming a folder that holds them".to_string()
    };
    Err(Error::Usage(format!(
        "{}: refusing to read {list}: outside {}, the folder verified; {advice}",
        path.display(),
        folder.tree.display()
    )))
}

/// Compares a certificate with the present state of its inputs and of the tool, with
/// the inputs read relative to the folder the certificate lies in (`path`) or `root`.
fn find_drift(read: &ReadCertificate, folder: Option<&Folder>) -> Vec<Drift> {
    let certificate = &read.certificate;
    let mut drift = Vec::new();
    let recorded = &certificate.document;
    let info = &certificate.certificate;

    // 1. Was the certificate edited after it was written? (The seal names the part.)
    let present_seal = seal(recorded);
    for (name, digest) in &info.seal {
        if present_seal.get(name) == Some(digest) {
            continue;
        }
        let kind = if name.starts_with("settings.") {
            DriftKind::SettingEdited
        } else if name == "runs" {
            DriftKind::RunsEdited
        } else if name == "claims" || name == "claim_files" {
            DriftKind::ClaimsEdited
        } else if name == "inputs" {
            DriftKind::InputsEdited
        } else {
            DriftKind::CertificateEdited
        };
        drift.push(Drift::new(
            kind,
            name.trim_start_matches("settings."),
            format!("`{name}` in the certificate no longer matches its seal: it was edited after the certificate was written"),
        ));
    }
    for key in &read.unknown_keys {
        drift.push(Drift::new(
            DriftKind::FieldAdded,
            format!("certificate.{key}"),
            "not a field of a certificate: it was added after the certificate was written",
        ));
    }
    for name in present_seal.keys() {
        if !info.seal.contains_key(name) {
            drift.push(Drift::new(
                DriftKind::CertificateEdited,
                name.clone(),
                format!("`{name}` is not covered by the seal"),
            ));
        }
    }

    // 2. The tool version.
    let current = ToolInfo::current();
    if recorded.tool.version != current.version {
        drift.push(Drift::new(
            DriftKind::ToolVersion,
            "gapcert",
            format!(
                "written by gapcert {}, verified with {}",
                recorded.tool.version, current.version
            ),
        ));
    }

    // 3. Recompute the audit from the inputs in the folder verified.
    let present = recompute(certificate, folder, &mut drift);

    // 4. Compare every field.
    match present {
        Err(error) => {
            drift.push(Drift::new(
                DriftKind::AuditFailed,
                "audit",
                format!(
                    "the audit cannot be recomputed: {}",
                    error.lines().next().unwrap_or("")
                ),
            ));
            if let Some(folder) = folder {
                rehash_inputs(recorded, folder, &mut drift);
            }
        }
        Ok(present) => compare_documents(&read.written, &present, &mut drift),
    }
    // A file named both as given and as read is said missing once.
    let mut said = BTreeSet::new();
    drift.retain(|d| said.insert((d.kind, d.subject.clone())));
    drift
}

/// The audit recomputed with the recorded settings from the inputs in `folder`, as a
/// JSON object with the paths written as the certificate writes them; notes the
/// given paths and claims files that are missing.
fn recompute(
    certificate: &Certificate,
    folder: Option<&Folder>,
    drift: &mut Vec<Drift>,
) -> Result<Map<String, Value>, String> {
    let recorded = &certificate.document;
    let info = &certificate.certificate;
    let audit_settings = recorded.settings.audit_settings();
    let mut ingest_settings = recorded.settings.ingest_settings();
    let Some(folder) = folder else {
        // The demo: built-in logs and claims.
        let document = crate::api::audit_sources_with_claims(
            &crate::demo::sources(),
            &crate::demo::claims_sources(),
            &audit_settings,
            &ingest_settings,
        )
        .map_err(|e| e.to_string())?;
        return as_object(&document);
    };
    let written_in = match &info.working_dir {
        Some(dir) => format!(
            " (the certificate was written in {dir}; give --root to verify the files there)"
        ),
        None => String::new(),
    };
    let mut claims_missing = false;
    ingest_settings.claims_files.clear();
    for claims in &recorded.settings.claims {
        let path = folder.resolve(claims);
        if path.exists() {
            ingest_settings.claims_files.push(path);
        } else {
            claims_missing = true;
            drift.push(Drift::new(
                DriftKind::ClaimsFileMissing,
                claims.clone(),
                format!(
                    "the claims file given to the audit is not in {}{written_in}",
                    folder.base.display()
                ),
            ));
        }
    }
    // Map-file sections match the paths found: give them the folder's prefix.
    for section in &mut ingest_settings.sections {
        if section.pattern.contains('/') && !Path::new(&section.pattern).is_absolute() {
            section.pattern = format!("{}/{}", folder.base.display(), section.pattern);
        }
    }
    let mut paths = Vec::new();
    for given in &info.paths {
        let path = folder.resolve(given);
        if path.exists() {
            paths.push(path);
        } else {
            drift.push(Drift::new(
                DriftKind::InputMissing,
                given.clone(),
                format!(
                    "the path given to the audit is not in {}{written_in}",
                    folder.base.display()
                ),
            ));
        }
    }
    if paths.is_empty() {
        return Err("none of the audited paths exist".to_string());
    }
    // The paths as the audit wrote them: relative ones without the folder's prefix.
    let prefixes: Vec<(String, String)> = info
        .paths
        .iter()
        .chain(&recorded.settings.claims)
        .filter(|p| !Path::new(p.as_str()).is_absolute())
        .map(|p| (folder.resolve(p).display().to_string(), p.clone()))
        .collect();
    let document =
        crate::api::audit_paths(&paths, &audit_settings, &ingest_settings).map_err(|e| {
            let mut message = Value::String(e.to_string());
            strip_prefixes(&mut message, &prefixes);
            message.as_str().unwrap_or_default().to_string()
        })?;
    let mut present = as_object(&document)?;
    for value in present.values_mut() {
        strip_prefixes(value, &prefixes);
    }
    if let Some(Value::Object(settings)) = present.get_mut("settings") {
        let written = serde_json::to_value(&recorded.settings).unwrap_or(Value::Null);
        settings.insert("map_sections".into(), written["map_sections"].clone());
        if claims_missing {
            settings.insert("claims".into(), written["claims"].clone());
        }
    }
    Ok(present)
}

fn as_object(document: &AuditDocument) -> Result<Map<String, Value>, String> {
    match serde_json::to_value(document) {
        Ok(Value::Object(map)) => Ok(map),
        Ok(_) => Err("the document is not an object".into()),
        Err(error) => Err(error.to_string()),
    }
}

/// Replaces, in every string of `value`, each resolved path by the path as recorded.
fn strip_prefixes(value: &mut Value, prefixes: &[(String, String)]) {
    match value {
        Value::String(text) => {
            for (resolved, recorded) in prefixes {
                if text.contains(resolved.as_str()) {
                    *text = text.replace(resolved.as_str(), recorded);
                }
            }
        }
        Value::Array(items) => items
            .iter_mut()
            .for_each(|item| strip_prefixes(item, prefixes)),
        Value::Object(fields) => fields
            .values_mut()
            .for_each(|item| strip_prefixes(item, prefixes)),
        _ => {}
    }
}

/// When the audit cannot be recomputed: each recorded log re-hashed on its own.
fn rehash_inputs(recorded: &AuditDocument, folder: &Folder, drift: &mut Vec<Drift>) {
    for input in &recorded.inputs {
        if folder.escapes(&input.path) {
            continue;
        }
        match std::fs::read(folder.resolve(&input.path)) {
            Err(_) => drift.push(Drift::new(
                DriftKind::InputMissing,
                input.path.clone(),
                format!("the file is not in {}", folder.base.display()),
            )),
            Ok(bytes) => {
                if hex(&Sha256::digest(&bytes)) != input.sha256 {
                    drift.push(Drift::new(
                        DriftKind::InputChanged,
                        input.path.clone(),
                        "content changed (SHA-256 differs)",
                    ));
                }
            }
        }
    }
}

/// What `gapcert verify` found: every difference between a certificate and the present.
#[derive(Clone, Debug, PartialEq, Serialize)]
pub struct Verification {
    /// The certificate's path, as given.
    pub certificate: String,
    /// The folder the inputs were read from (absolute); None for the demo's built-in
    /// logs.
    pub root: Option<String>,
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
/// the recorded settings and names every difference. The inputs are read from the
/// certificate's folder (joined with its `root`), or from `root` when given; a path
/// that leads out of that folder is an error.
pub fn verify(path: &Path, root: Option<&Path>) -> Result<Verification, Error> {
    let read = read_whole(path)?;
    let certificate = &read.certificate;
    let folder = if certificate.certificate.demo {
        None
    } else {
        let folder = Folder::of(path, &certificate.certificate, root);
        check_tree(path, certificate, &folder, root.is_some())?;
        Some(folder)
    };
    let drift = find_drift(&read, folder.as_ref());
    Ok(Verification {
        certificate: path.display().to_string(),
        root: folder.map(|f| f.base.display().to_string()),
        verified: drift.is_empty(),
        drift,
        inputs: certificate.document.inputs.len(),
        claim_files: certificate.document.claim_files.len(),
        runs: certificate.document.runs.len(),
        claims: certificate.document.claims.len(),
    })
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn folders_relative_to_each_other() {
        let rel = |a: &str, b: &str| relative_folder(Path::new(a), Path::new(b));
        assert_eq!(rel("/a/b", "/a/b"), ".");
        assert_eq!(rel("/a/b/reports", "/a/b"), "..");
        assert_eq!(rel("/a/b", "/a/b/exp"), "exp");
        assert_eq!(rel("/a/x/y", "/a/b"), "../../b");
    }

    #[test]
    fn names_resolve_without_the_file_system() {
        assert_eq!(normalize(Path::new("/a/b/../c/./d")), Path::new("/a/c/d"));
        assert_eq!(normalize(Path::new("/a/../../etc")), Path::new("/etc"));
        let folder = Folder {
            base: PathBuf::from("/t/copy"),
            tree: PathBuf::from("/t/copy"),
        };
        assert!(!folder.escapes("logs/runs.csv"));
        assert!(!folder.escapes("logs/../runs.csv"));
        assert!(folder.escapes("../runs.csv"));
        assert!(folder.escapes("/etc/passwd"));
        assert!(folder.escapes("logs/../../copy2/runs.csv"));
    }
}
