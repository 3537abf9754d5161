//! What an audit's outputs may replace, and the files written from a finished audit
//! (the HTML page, the certificate), for every front end: the command line checks
//! its flags before reading, the Python package its `write_*` calls after auditing.
//!
//! The rule: an output is never one of the audit's inputs (the same file on disk,
//! whatever links or spellings lead to it), since writing it would destroy the
//! evidence. Tested in tests/it/outputs.rs and python/tests/test_outputs.py.

use std::path::{Path, PathBuf};

use crate::error::{describe_io_error, Error};
use crate::ingest::{Discovery, FileIdentity};
use crate::report::{self, AuditDocument};

/// The files an audit reads (logs, claims files, the map file), by identity on disk.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct InputFiles {
    files: Vec<(PathBuf, FileIdentity)>,
}

impl InputFiles {
    /// The logs `discovery` found, and the `other` files the audit reads (claims
    /// files, the map file). Files that do not exist (yet) are left out: there is
    /// nothing to protect.
    pub fn of<'p>(
        discovery: Option<&Discovery>,
        other: impl IntoIterator<Item = &'p Path>,
    ) -> InputFiles {
        let mut files: Vec<(PathBuf, FileIdentity)> = discovery
            .iter()
            .flat_map(|d| d.logs.iter())
            .filter_map(|log| log.identity.map(|id| (log.path.clone(), id)))
            .collect();
        files.extend(other.into_iter().filter_map(|path| {
            let metadata = std::fs::metadata(path).ok()?;
            FileIdentity::of(&metadata).map(|id| (path.to_path_buf(), id))
        }));
        InputFiles { files }
    }

    /// The input `path` is (the same file on disk), if any.
    pub fn input_at(&self, path: &Path) -> Option<&Path> {
        let identity = FileIdentity::of(&std::fs::metadata(path).ok()?)?;
        self.files
            .iter()
            .find(|(_, id)| *id == identity)
            .map(|(input, _)| input.as_path())
    }

    /// Refuses an output `path` (written by `what`: a flag, a method) that is one of
    /// the inputs.
    pub fn check_output(&self, what: &str, path: &Path) -> Result<(), Error> {
        match self.input_at(path) {
            Some(input) => Err(Error::Usage(format!(
                "{what} {}: that is the input {}, which the output would replace; write the output elsewhere (nothing was written)",
                path.display(),
                input.display()
            ))),
            None => Ok(()),
        }
    }
}

/// The error of an output that could not be written.
pub fn cannot_write(path: &Path, error: &std::io::Error) -> Error {
    Error::Io(format!(
        "{}: cannot write ({}); nothing was written there",
        path.display(),
        describe_io_error(error)
    ))
}

/// Writes the self-contained HTML page of `document` to `path`, atomically.
pub fn write_html(path: &Path, document: &AuditDocument) -> Result<(), Error> {
    report::write_atomically(path, |out| report::html::write_html(document, out))
        .map_err(|error| cannot_write(path, &error))
}

/// Writes the certificate of `document`, audited from `paths` as given, to `path`:
/// [`crate::certificate::write_certificate`]'s certificate, recording `audited_in`
/// as the folder the paths are relative to when the audit ran somewhere else than
/// the present folder (a notebook may change folder between auditing and writing).
pub fn write_certificate(
    path: &Path,
    document: &AuditDocument,
    paths: &[String],
    audited_in: Option<&Path>,
) -> Result<(), Error> {
    let here = std::env::current_dir().ok();
    let audited_in = match audited_in {
        Some(folder) if here.as_deref() != Some(folder) => folder,
        _ => return crate::certificate::write_certificate(path, document, paths),
    };
    let certificate = crate::certificate::certify(document, paths, audited_in, path);
    report::write_atomically(path, |out| {
        serde_json::to_writer_pretty(&mut *out, &certificate)?;
        out.write_all(b"\n")
    })
    .map_err(|error| cannot_write(path, &error))
}
