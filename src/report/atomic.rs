//! Atomic output files: write a temporary file in the destination folder, flush and
//! sync it, then rename it over the destination. A reader (or a crash) sees the old
//! file or the complete new one, never a partial one.

use std::fs::{self, File};
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};

/// Writes `path` atomically with the bytes `write` produces. On any error the
/// temporary file is removed and the destination is untouched.
pub fn write_atomically<F>(path: &Path, write: F) -> io::Result<()>
where
    F: FnOnce(&mut dyn Write) -> io::Result<()>,
{
    // A device, pipe or other special file (`/dev/stdout`, a FIFO) cannot be replaced
    // by renaming; write straight into it.
    if let Ok(metadata) = fs::metadata(path) {
        if !metadata.is_file() && !metadata.is_dir() {
            let mut file = fs::OpenOptions::new().write(true).open(path)?;
            write(&mut file)?;
            return file.flush();
        }
    }
    let folder = match path.parent() {
        Some(parent) if !parent.as_os_str().is_empty() => parent.to_path_buf(),
        _ => PathBuf::from("."),
    };
    let file_name = path
        .file_name()
        .ok_or_else(|| {
            io::Error::new(io::ErrorKind::InvalidInput, "the output path names no file")
        })?
        .to_string_lossy()
        .to_string();
    let temporary = folder.join(format!(".{file_name}.gapcert-{}.tmp", std::process::id()));
    let result = (|| {
        let file = File::create(&temporary)?;
        let mut writer = BufWriter::with_capacity(1 << 20, file);
        write(&mut writer)?;
        let file = writer.into_inner().map_err(|e| e.into_error())?;
        file.sync_all()?;
        fs::rename(&temporary, path)
    })();
    if result.is_err() {
        let _ = fs::remove_file(&temporary);
    }
    result
}
