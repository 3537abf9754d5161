//! Atomic output files: write a temporary file in the destination folder, flush and
//! sync it, then rename it over the destination. A reader (or a crash) sees the old
//! file or the complete new one, never a partial one.

use std::fs::{self, File};
use std::io::{self, BufWriter, Write};
use std::path::{Path, PathBuf};
use std::sync::{Mutex, Once};

/// Temporary files being written right now, removed if SIGTERM, SIGINT or SIGHUP
/// arrives, so an interrupted run leaves neither a partial output nor a stray
/// temporary file. (SIGKILL and power loss cannot be caught; the destination is still
/// never partial.)
static LIVE_TEMPORARIES: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());
static CLEANUP_HANDLER: Once = Once::new();

fn install_cleanup_handler() {
    CLEANUP_HANDLER.call_once(|| {
        use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
        if let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGTERM, SIGINT, SIGHUP]) {
            std::thread::spawn(move || {
                if let Some(signal) = signals.forever().next() {
                    if let Ok(live) = LIVE_TEMPORARIES.lock() {
                        for path in live.iter() {
                            let _ = fs::remove_file(path);
                        }
                    }
                    eprintln!("gapcert: interrupted; no output file was written");
                    std::process::exit(128 + signal);
                }
            });
        }
    });
}

fn track(path: &Path, live: bool) {
    if let Ok(mut list) = LIVE_TEMPORARIES.lock() {
        if live {
            list.push(path.to_path_buf());
        } else {
            list.retain(|p| p != path);
        }
    }
}

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
    install_cleanup_handler();
    track(&temporary, true);
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
    track(&temporary, false);
    result
}
