//! Finding log files: explicit paths and recursive folder walks.
//!
//! Paths are always local filesystem paths. Nothing here (or downstream) interprets a
//! path as a URL: `s3://bucket/x.csv` is simply a file name that does not exist.

use std::collections::HashSet;
use std::path::{Path, PathBuf};

use crate::error::{describe_io_error, Error};

/// The log formats gapcert reads, chosen by file extension.
#[derive(Clone, Copy, Debug, PartialEq, Eq)]
pub enum LogFormat {
    Csv,
    Tsv,
    Parquet,
    JsonLines,
    Json,
    Arrow,
}

impl LogFormat {
    /// The format for a file name, by its extension (case-insensitive).
    pub fn from_path(path: &Path) -> Option<LogFormat> {
        let extension = path.extension()?.to_str()?.to_ascii_lowercase();
        match extension.as_str() {
            "csv" => Some(LogFormat::Csv),
            "tsv" => Some(LogFormat::Tsv),
            "parquet" => Some(LogFormat::Parquet),
            "jsonl" | "ndjson" => Some(LogFormat::JsonLines),
            "json" => Some(LogFormat::Json),
            "arrow" | "ipc" | "feather" => Some(LogFormat::Arrow),
            _ => None,
        }
    }
}

/// A log file to read.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct LogFile {
    pub path: PathBuf,
    pub format: LogFormat,
    /// The file's identity on its file system, from the `stat` discovery made anyway
    /// (None where the system has none): an output that would replace an input is
    /// recognised by it, whatever links or spellings lead to either.
    pub identity: Option<FileIdentity>,
    /// Found walking a folder, not named on the command line: if it is one of
    /// gapcert's own reports it is left out, where a named one is an error.
    pub in_folder: bool,
    /// Why the walk could not use this entry (a folder that cannot be listed): it is
    /// reported as the file's problem, with every other file's, instead of ending
    /// the walk.
    pub unreadable: Option<String>,
}

/// A path a folder walk passed over, and why.
#[derive(Clone, Debug, PartialEq, Eq)]
pub struct SkippedPath {
    pub path: PathBuf,
    pub reason: String,
}

/// Device and inode of a file.
#[derive(Clone, Copy, Debug, PartialEq, Eq, Hash)]
pub struct FileIdentity {
    pub device: u64,
    pub inode: u64,
}

impl FileIdentity {
    /// The identity of the file `metadata` describes.
    #[cfg(unix)]
    pub fn of(metadata: &std::fs::Metadata) -> Option<FileIdentity> {
        use std::os::unix::fs::MetadataExt;
        Some(FileIdentity {
            device: metadata.dev(),
            inode: metadata.ino(),
        })
    }

    #[cfg(not(unix))]
    pub fn of(_: &std::fs::Metadata) -> Option<FileIdentity> {
        None
    }
}

/// What discovery found: logs to read and files skipped inside folders.
#[derive(Clone, Debug, Default, PartialEq, Eq)]
pub struct Discovery {
    /// The paths as given (files and folders), for the certificate.
    pub given: Vec<PathBuf>,
    pub logs: Vec<LogFile>,
    pub skipped_files: Vec<SkippedPath>,
}

/// Expands the given paths into log files. Folders are walked recursively in sorted
/// order (so results do not depend on directory order); files of other types inside
/// folders are skipped and counted; an explicit file of unknown type is an error.
///
/// Links to folders are followed only when their target lies inside the folder given
/// (so a link to `/` cannot make the audit walk the whole file system); others are
/// listed as skipped, like broken links. A subfolder that cannot be listed is
/// reported as a problem with every other problem, not the end of the walk.
pub fn discover(paths: &[PathBuf]) -> Result<Discovery, Error> {
    let mut discovery = Discovery {
        given: paths.to_vec(),
        ..Discovery::default()
    };
    let mut visited: HashSet<FileIdentity> = HashSet::new();
    for path in paths {
        let metadata = std::fs::metadata(path).map_err(|error| {
            if let Ok(target) = std::fs::read_link(path) {
                return Error::Usage(format!(
                    "{}: a broken link (its target {} cannot be read: {})",
                    path.display(),
                    target.display(),
                    describe_io_error(&error)
                ));
            }
            Error::Usage(format!(
                "{}: cannot read this path ({}); gapcert reads local files and folders only",
                path.display(),
                describe_io_error(&error)
            ))
        })?;
        if metadata.is_dir() {
            let root = std::fs::canonicalize(path).unwrap_or_else(|_| path.clone());
            walk(path, &root, &mut discovery, &mut visited)?;
        } else if !metadata.is_file() {
            // A FIFO or device would block the read or never end.
            return Err(Error::Usage(format!(
                "{}: not a regular file (a pipe or device); save the log to a file first",
                path.display()
            )));
        } else {
            match LogFormat::from_path(path) {
                Some(format) => discovery.logs.push(LogFile {
                    path: path.clone(),
                    format,
                    identity: FileIdentity::of(&metadata),
                    in_folder: false,
                    unreadable: None,
                }),
                None => {
                    return Err(Error::Usage(format!(
                        "{}: unknown log type; expected .csv, .tsv, .parquet, .jsonl, .ndjson, .json, .arrow, .ipc or .feather",
                        path.display()
                    )))
                }
            }
        }
    }
    if discovery.logs.is_empty() {
        let listed: Vec<String> = paths.iter().map(|p| p.display().to_string()).collect();
        return Err(Error::Usage(format!(
            "no log files found in {} ({} other file(s) skipped)",
            listed.join(", "),
            discovery.skipped_files.len()
        )));
    }
    Ok(discovery)
}

/// Walks a folder. Symbolic links to folders are followed when their target lies
/// inside `root` (the folder given, resolved), and once: `visited` holds the identity
/// (device, inode) of every folder entered, so a link loop ends instead of recursing
/// forever. Links leading out of `root`, broken links and other entries that are not
/// log files are listed as skipped, with the reason.
///
/// Cheap per file, since sweeps keep a folder per run: the kind of each entry comes
/// from the directory listing itself (no `stat` per file, except for symbolic links,
/// which are followed), and a regular file's identity is its inode from the listing
/// with the folder's device. One `stat` per folder, none per file.
fn walk(
    folder: &Path,
    root: &Path,
    discovery: &mut Discovery,
    visited: &mut HashSet<FileIdentity>,
) -> Result<(), Error> {
    let folder_identity = std::fs::metadata(folder)
        .ok()
        .and_then(|metadata| FileIdentity::of(&metadata));
    if let Some(identity) = folder_identity {
        if !visited.insert(identity) {
            return Ok(());
        }
    }
    let entries = match std::fs::read_dir(folder) {
        Ok(entries) => entries,
        Err(error) if folder != root && discovery.given.iter().all(|given| given != folder) => {
            // A subfolder: its problem is listed with every other one.
            discovery.logs.push(LogFile {
                path: folder.to_path_buf(),
                format: LogFormat::Csv,
                identity: None,
                in_folder: true,
                unreadable: Some(format!(
                    "cannot list this folder ({})",
                    describe_io_error(&error)
                )),
            });
            return Ok(());
        }
        Err(error) => {
            return Err(Error::Usage(format!(
                "{}: cannot list this folder ({})",
                folder.display(),
                describe_io_error(&error)
            )))
        }
    };
    let mut children: Vec<(PathBuf, Option<std::fs::FileType>, Option<u64>)> = entries
        .filter_map(|entry| entry.ok())
        .map(|entry| (entry.path(), entry.file_type().ok(), entry_inode(&entry)))
        .collect();
    children.sort_by(|a, b| a.0.cmp(&b.0));
    let skip = |discovery: &mut Discovery, path: PathBuf, reason: String| {
        discovery.skipped_files.push(SkippedPath { path, reason });
    };
    for (child, file_type, inode) in children {
        // Symbolic links (and entries whose kind the listing did not give) are
        // followed with a stat; everything else is known from the listing.
        let is_link = !matches!(file_type, Some(kind) if !kind.is_symlink());
        let (is_dir, is_file, identity) = match file_type {
            Some(kind) if kind.is_dir() => (true, false, None),
            Some(kind) if kind.is_file() => (
                false,
                true,
                folder_identity
                    .zip(inode)
                    .map(|(folder, inode)| FileIdentity {
                        device: folder.device,
                        inode,
                    }),
            ),
            Some(kind) if !kind.is_symlink() => (false, false, None),
            _ => match std::fs::metadata(&child) {
                Ok(metadata) => (
                    metadata.is_dir(),
                    metadata.is_file(),
                    FileIdentity::of(&metadata),
                ),
                Err(error) => {
                    let reason = match std::fs::read_link(&child) {
                        Ok(target) => format!(
                            "a broken link (its target {} cannot be read: {})",
                            target.display(),
                            describe_io_error(&error)
                        ),
                        Err(_) => format!("cannot be read ({})", describe_io_error(&error)),
                    };
                    skip(discovery, child, reason);
                    continue;
                }
            },
        };
        if is_dir && is_link {
            match std::fs::canonicalize(&child) {
                Ok(target) if target.starts_with(root) => walk(&child, root, discovery, visited)?,
                Ok(target) => skip(
                    discovery,
                    child,
                    format!(
                        "a link to the folder {}, outside {} (not followed)",
                        target.display(),
                        root.display()
                    ),
                ),
                Err(error) => skip(
                    discovery,
                    child,
                    format!(
                        "a link that cannot be resolved ({})",
                        describe_io_error(&error)
                    ),
                ),
            }
        } else if is_dir {
            walk(&child, root, discovery, visited)?;
        } else if !is_file {
            skip(discovery, child, "not a regular file".to_string());
        } else if let Some(format) = LogFormat::from_path(&child) {
            discovery.logs.push(LogFile {
                path: child,
                format,
                identity,
                in_folder: true,
                unreadable: None,
            });
        } else {
            skip(discovery, child, "not a log file type".to_string());
        }
    }
    Ok(())
}

/// The inode of a directory entry, from the listing.
#[cfg(unix)]
fn entry_inode(entry: &std::fs::DirEntry) -> Option<u64> {
    use std::os::unix::fs::DirEntryExt;
    Some(entry.ino())
}

#[cfg(not(unix))]
fn entry_inode(_: &std::fs::DirEntry) -> Option<u64> {
    None
}
