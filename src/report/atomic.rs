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

/// A file that asks the kernel to start writing its pages to disk every 32 MB, without
/// waiting, so that the final `sync_all` waits for the last stretch only, not for a
/// large output all at once (about 0.4 s for 0.9 GB of JSON lines here). Linux's
/// `sync_file_range(2)` with `SYNC_FILE_RANGE_WRITE`; elsewhere a plain file.
struct EarlyWriteback {
    file: File,
    written: u64,
    submitted: u64,
}

impl EarlyWriteback {
    const STRETCH: u64 = 32 << 20;

    fn new(file: File) -> Self {
        EarlyWriteback {
            file,
            written: 0,
            submitted: 0,
        }
    }

    #[cfg(target_os = "linux")]
    fn submit(&mut self) {
        use std::os::fd::AsRawFd;
        let (Ok(offset), Ok(length)) = (
            i64::try_from(self.submitted),
            i64::try_from(self.written - self.submitted),
        ) else {
            return;
        };
        // SAFETY: the descriptor is open for the life of `self.file`, and the call only
        // reads its arguments. A failure only means the final sync does all the work.
        unsafe {
            libc::sync_file_range(
                self.file.as_raw_fd(),
                offset,
                length,
                libc::SYNC_FILE_RANGE_WRITE,
            );
        }
        self.submitted = self.written;
    }

    #[cfg(not(target_os = "linux"))]
    fn submit(&mut self) {}
}

impl Write for EarlyWriteback {
    fn write(&mut self, bytes: &[u8]) -> io::Result<usize> {
        let written = self.file.write(bytes)?;
        self.written += written as u64;
        if self.written - self.submitted >= Self::STRETCH {
            self.submit();
        }
        Ok(written)
    }

    fn flush(&mut self) -> io::Result<()> {
        self.file.flush()
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
        let file = EarlyWriteback::new(File::create(&temporary)?);
        let mut writer = BufWriter::with_capacity(1 << 20, file);
        write(&mut writer)?;
        let file = writer.into_inner().map_err(|e| e.into_error())?.file;
        file.sync_all()?;
        fs::rename(&temporary, path)
    })();
    if result.is_err() {
        let _ = fs::remove_file(&temporary);
    }
    track(&temporary, false);
    result
}

#[cfg(test)]
mod tests {
    use super::*;

    /// Writing past several early-writeback stretches (in odd-sized pieces) gives the
    /// file exactly the bytes written.
    #[test]
    fn large_outputs_are_written_whole() {
        let folder = tempfile::tempdir().expect("temporary folder");
        let path = folder.path().join("large.bin");
        let piece: Vec<u8> = (0..1_000_003u32).map(|i| (i % 251) as u8).collect();
        let pieces = 70;
        write_atomically(&path, |out| {
            for _ in 0..pieces {
                out.write_all(&piece)?;
            }
            Ok(())
        })
        .expect("written");
        let read = fs::read(&path).expect("read back");
        assert_eq!(read.len(), piece.len() * pieces);
        assert!(read
            .chunks(piece.len())
            .all(|chunk| chunk == piece.as_slice()));
    }
}
