//! Atomic output files: write a temporary file in the destination folder, flush and
//! sync it, then rename it over the destination. A reader (or a crash) sees the old
//! file or the complete new one, never a partial one.

use std::fs::{self, File};
use std::io::{self, Write};
use std::path::{Path, PathBuf};
use std::sync::{Arc, Mutex};
use std::thread::JoinHandle;
use std::time::{Duration, SystemTime};

/// Temporary files being written right now. The library never handles signals or
/// ends the process; a program that does (the gapcert binary, on SIGINT, SIGTERM or
/// SIGHUP) calls [`remove_temporaries`] before it exits, so an interrupted run leaves
/// neither a partial output nor a stray temporary file. (SIGKILL and power loss cannot
/// be caught; the destination is still never partial.)
static LIVE_TEMPORARIES: Mutex<Vec<PathBuf>> = Mutex::new(Vec::new());

/// Removes every temporary file being written right now (see [`LIVE_TEMPORARIES`]);
/// returns how many there were. Safe to call from any thread at any time: a write
/// that goes on afterwards fails and leaves nothing behind.
pub fn remove_temporaries() -> usize {
    match LIVE_TEMPORARIES.lock() {
        Ok(live) => {
            for path in live.iter() {
                let _ = fs::remove_file(path);
            }
            live.len()
        }
        Err(_) => 0,
    }
}

fn untrack(path: &Path) {
    if let Ok(mut list) = LIVE_TEMPORARIES.lock() {
        list.retain(|p| p != path);
    }
}

/// The temporary file, written through a buffer of [`OutputFile::CHUNK`] bytes.
///
/// Outputs larger than the buffer (a million runs of JSON lines is about 0.9 GB) are
/// written with Linux's `O_DIRECT`, straight from the buffer to the disk: the kernel
/// then neither copies the bytes into its page cache nor tracks and later frees those
/// pages, which here cost about a CPU-second per 0.9 GB while the disk takes 0.7 s of
/// wall time for the same bytes. Each full buffer is written on a thread of its own
/// while the next one fills, so waiting for the disk overlaps with the audit. The
/// buffers are aligned to [`OutputFile::BLOCK`] and every direct write is a whole
/// buffer, as `O_DIRECT` requires; the last, partial buffer is written normally.
/// Where `O_DIRECT` is refused (some file systems, other systems) or a direct write
/// fails with `EINVAL`, the rest of the file is written normally, asking the kernel
/// every 32 MB to start writing back (`sync_file_range`) so the final `sync_all` does
/// not wait for the whole file at once.
struct OutputFile {
    file: Arc<File>,
    buffer: AlignedBuffer,
    filled: usize,
    /// The buffer given back by the last write, for the next one to fill.
    spare: Option<AlignedBuffer>,
    in_flight: Option<JoinHandle<(AlignedBuffer, Direct, io::Result<usize>)>>,
    direct: Direct,
    /// Bytes written normally so far, and how many of them were submitted for
    /// writeback.
    written: u64,
    submitted: u64,
}

#[derive(Clone, Copy, PartialEq, Eq, Debug)]
enum Direct {
    /// The output has not outgrown the buffer yet.
    Untried,
    On,
    Off,
}

/// `CHUNK` bytes aligned to `BLOCK`, carved out of a slightly larger vector.
struct AlignedBuffer {
    storage: Vec<u8>,
    start: usize,
}

impl AlignedBuffer {
    fn new() -> Self {
        let storage = vec![0u8; OutputFile::CHUNK + OutputFile::BLOCK];
        let start = storage.as_ptr().align_offset(OutputFile::BLOCK);
        AlignedBuffer { storage, start }
    }

    fn bytes(&self, length: usize) -> &[u8] {
        &self.storage[self.start..self.start + length]
    }

    fn bytes_mut(&mut self, from: usize, length: usize) -> &mut [u8] {
        &mut self.storage[self.start + from..self.start + from + length]
    }
}

impl OutputFile {
    /// Alignment of direct writes: the page size, a multiple of any logical block size
    /// in use.
    const BLOCK: usize = 4096;
    const CHUNK: usize = 8 << 20;
    const WRITEBACK_STRETCH: u64 = 32 << 20;

    fn new(file: File) -> Self {
        OutputFile {
            file: Arc::new(file),
            buffer: AlignedBuffer::new(),
            filled: 0,
            spare: None,
            in_flight: None,
            direct: Direct::Untried,
            written: 0,
            submitted: 0,
        }
    }

    /// Hands the full buffer to a writing thread (the first time, switching to direct
    /// writes) and goes on with the spare one.
    fn drain(&mut self) -> io::Result<()> {
        self.settle()?;
        if self.direct == Direct::Untried {
            self.direct = if set_direct(&self.file, true) {
                Direct::On
            } else {
                Direct::Off
            };
        }
        let spare = self.spare.take().unwrap_or_else(AlignedBuffer::new);
        let full = std::mem::replace(&mut self.buffer, spare);
        let length = std::mem::take(&mut self.filled);
        let file = Arc::clone(&self.file);
        let mut direct = self.direct;
        self.in_flight = Some(std::thread::spawn(move || {
            let result = write_fully(&file, &mut direct, full.bytes(length));
            (full, direct, result)
        }));
        Ok(())
    }

    /// Waits for the buffer in flight, if any, and takes it back.
    fn settle(&mut self) -> io::Result<()> {
        let Some(handle) = self.in_flight.take() else {
            return Ok(());
        };
        let (buffer, direct, result) = handle
            .join()
            .unwrap_or_else(|panic| std::panic::resume_unwind(panic));
        self.spare = Some(buffer);
        self.direct = direct;
        let normally = result?;
        self.written += normally as u64;
        if self.written - self.submitted >= Self::WRITEBACK_STRETCH {
            start_writeback(&self.file, self.submitted, self.written - self.submitted);
            self.submitted = self.written;
        }
        Ok(())
    }

    /// Writes what is left in the buffer and syncs the file to disk.
    fn finish(&mut self) -> io::Result<()> {
        self.settle()?;
        // The tail is not a whole number of blocks.
        if self.direct == Direct::On && !set_direct(&self.file, false) {
            return Err(io::Error::other("cannot leave direct mode"));
        }
        self.direct = Direct::Off;
        let tail = self.buffer.bytes(std::mem::take(&mut self.filled));
        write_fully(&self.file, &mut self.direct, tail)?;
        self.file.sync_all()
    }
}

impl Write for OutputFile {
    fn write(&mut self, bytes: &[u8]) -> io::Result<usize> {
        let taken = bytes.len().min(Self::CHUNK - self.filled);
        self.buffer
            .bytes_mut(self.filled, taken)
            .copy_from_slice(&bytes[..taken]);
        self.filled += taken;
        if self.filled == Self::CHUNK {
            self.drain()?;
        }
        Ok(taken)
    }

    /// The buffer is kept until it is full or the file is finished (a direct write
    /// must be a whole buffer).
    fn flush(&mut self) -> io::Result<()> {
        Ok(())
    }
}

impl Drop for OutputFile {
    /// An abandoned file (the output failed) still waits for its writing thread, so
    /// nothing writes to the temporary file once it is removed.
    fn drop(&mut self) {
        if let Some(handle) = self.in_flight.take() {
            let _ = handle.join();
        }
    }
}

/// Writes all of `data`; returns how many bytes went through the page cache. A direct
/// write refused with `EINVAL` (alignment the file system does not accept, or a short
/// direct write that left the offset unaligned) turns direct mode off for good.
fn write_fully(mut file: &File, direct: &mut Direct, mut data: &[u8]) -> io::Result<usize> {
    let mut normally = 0;
    while !data.is_empty() {
        match file.write(data) {
            Ok(0) => return Err(io::ErrorKind::WriteZero.into()),
            Ok(written) => {
                if *direct != Direct::On {
                    normally += written;
                }
                data = &data[written..];
            }
            Err(error) if error.kind() == io::ErrorKind::Interrupted => {}
            Err(error) if *direct == Direct::On && is_invalid_argument(&error) => {
                if !set_direct(file, false) {
                    return Err(error);
                }
                *direct = Direct::Off;
            }
            Err(error) => return Err(error),
        }
    }
    Ok(normally)
}

#[cfg(target_os = "linux")]
fn is_invalid_argument(error: &io::Error) -> bool {
    error.raw_os_error() == Some(libc::EINVAL)
}

#[cfg(not(target_os = "linux"))]
fn is_invalid_argument(_: &io::Error) -> bool {
    false
}

/// Turns `O_DIRECT` on or off for `file`; false when the system refuses.
#[cfg(target_os = "linux")]
fn set_direct(file: &File, on: bool) -> bool {
    use std::os::fd::AsRawFd;
    let descriptor = file.as_raw_fd();
    // SAFETY: the descriptor is open for the life of `file`; F_GETFL and F_SETFL only
    // read and set its status flags.
    unsafe {
        let flags = libc::fcntl(descriptor, libc::F_GETFL);
        if flags < 0 {
            return false;
        }
        let wanted = if on {
            flags | libc::O_DIRECT
        } else {
            flags & !libc::O_DIRECT
        };
        libc::fcntl(descriptor, libc::F_SETFL, wanted) == 0
    }
}

#[cfg(not(target_os = "linux"))]
fn set_direct(_: &File, on: bool) -> bool {
    !on
}

/// Asks the kernel to start writing `length` bytes from `offset` to disk, without
/// waiting (`sync_file_range(2)`, `SYNC_FILE_RANGE_WRITE`). A failure only means the
/// final sync does all the work.
#[cfg(target_os = "linux")]
fn start_writeback(file: &File, offset: u64, length: u64) {
    use std::os::fd::AsRawFd;
    let (Ok(offset), Ok(length)) = (i64::try_from(offset), i64::try_from(length)) else {
        return;
    };
    // SAFETY: the descriptor is open for the life of `file`, and the call only reads
    // its arguments.
    unsafe {
        libc::sync_file_range(
            file.as_raw_fd(),
            offset,
            length,
            libc::SYNC_FILE_RANGE_WRITE,
        );
    }
}

#[cfg(not(target_os = "linux"))]
fn start_writeback(_: &File, _: u64, _: u64) {}

/// Writes `path` atomically with the bytes `write` produces. On any error the
/// temporary file is removed and the destination is untouched.
///
/// The temporary is `.NAME.gapcert-PID-RANDOM.tmp` in the destination's folder
/// ([`temporary_name_owner`] reads the PID back), created only if nothing exists
/// at that name (`O_CREAT|O_EXCL`, and `O_NOFOLLOW`), with a fresh random part on
/// each try: a link planted in a shared output folder, at any name, is never
/// followed, so it cannot make the audit write over another file.
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
    // Created and listed under the list's lock: a signal that arrives once the file
    // exists finds it listed (the handler waits for the lock).
    let (file, temporary) = {
        let mut live = LIVE_TEMPORARIES
            .lock()
            .unwrap_or_else(std::sync::PoisonError::into_inner);
        let (file, temporary) = tempfile::Builder::new()
            .prefix(&format!(
                ".{file_name}{TEMPORARY_MARK}{}-",
                std::process::id()
            ))
            .suffix(TEMPORARY_SUFFIX)
            .rand_bytes(TEMPORARY_RANDOM_LENGTH)
            .make_in(&folder, create_new)?
            .into_parts();
        live.push(temporary.to_path_buf());
        (file, temporary)
    };
    let result = (|| {
        let mut file = OutputFile::new(file);
        write(&mut file)?;
        file.finish()?;
        drop(file);
        Ok(())
    })();
    let tracked = temporary.to_path_buf();
    // On failure, dropping `temporary` removes the file.
    let result = result.and_then(|()| temporary.persist(path).map_err(|error| error.error));
    untrack(&tracked);
    result
}

/// `.NAME` + this + `PID-RANDOM` + [`TEMPORARY_SUFFIX`]: gapcert's temporaries.
const TEMPORARY_MARK: &str = ".gapcert-";
const TEMPORARY_SUFFIX: &str = ".tmp";
const TEMPORARY_RANDOM_LENGTH: usize = 8;

/// Creates `path` for writing only if nothing is there, never through a link; with
/// the permissions `File::create` gives (the umask's), since the file becomes the
/// output as it is.
fn create_new(path: &Path) -> io::Result<File> {
    let mut options = fs::OpenOptions::new();
    options.write(true).create_new(true);
    #[cfg(unix)]
    {
        use std::os::unix::fs::OpenOptionsExt;
        options.custom_flags(libc::O_NOFOLLOW);
    }
    options.open(path)
}

/// The process that wrote the temporary named `name`, if `name` is one of gapcert's
/// temporaries: `.NAME.gapcert-PID-RANDOM.tmp`, or `.NAME.gapcert-PID.tmp` as
/// earlier versions named them (no random part). Anything else is None.
pub fn temporary_name_owner(name: &str) -> Option<u32> {
    let inner = name.strip_prefix('.')?.strip_suffix(TEMPORARY_SUFFIX)?;
    let (output, tail) = inner.rsplit_once(TEMPORARY_MARK)?;
    if output.is_empty() {
        return None;
    }
    let (pid, random) = match tail.split_once('-') {
        Some((pid, random)) => (pid, Some(random)),
        None => (tail, None),
    };
    let random_is_ours = random.map_or(true, |random| {
        (1..=32).contains(&random.len()) && random.bytes().all(|b| b.is_ascii_alphanumeric())
    });
    let pid_is_digits =
        !pid.is_empty() && pid.len() <= 10 && pid.bytes().all(|b| b.is_ascii_digit());
    if !random_is_ours || !pid_is_digits {
        return None;
    }
    pid.parse().ok()
}

/// A temporary written to within this long is left alone whoever wrote it: an audit
/// in another PID namespace (a container sharing the folder) is not visible in
/// `/proc`, and while it is alive it writes its temporary steadily.
const RECENTLY_WRITTEN: Duration = Duration::from_secs(60);

/// How old a temporary must be to be removed when no process table tells whether
/// its writer is alive.
const ABANDONED_AFTER: Duration = Duration::from_secs(24 * 60 * 60);

/// Removes gapcert's temporaries in `folder` that audits ended without removing
/// (killed with `SIGKILL`, or the machine stopped), and returns their paths; the
/// library never prints, so the caller says so. Only files named like gapcert's
/// temporaries ([`temporary_name_owner`]) that are regular files (not links), owned
/// by the current user and not written to in the last minute are considered; such a
/// file is removed when its writer's process is gone (no `/proc/PID`), or, where
/// there is no `/proc` to tell, when it is more than a day old. Errors (a folder that
/// cannot be listed, a file removed meanwhile) are ignored: this is housekeeping.
pub fn remove_stale_temporaries(folder: &Path) -> Vec<PathBuf> {
    let Ok(entries) = fs::read_dir(folder) else {
        return Vec::new();
    };
    let processes_visible = Path::new("/proc/self").exists();
    let now = SystemTime::now();
    let mut removed = Vec::new();
    for entry in entries.filter_map(Result::ok) {
        let name = entry.file_name();
        let Some(pid) = name.to_str().and_then(temporary_name_owner) else {
            continue;
        };
        if pid == std::process::id() {
            continue;
        }
        let path = entry.path();
        // Not followed: a link at a temporary's name is not gapcert's.
        let Ok(metadata) = fs::symlink_metadata(&path) else {
            continue;
        };
        if !metadata.file_type().is_file() || !owned_by_current_user(&metadata) {
            continue;
        }
        let age = metadata
            .modified()
            .ok()
            .and_then(|modified| now.duration_since(modified).ok())
            .unwrap_or(Duration::ZERO);
        if age < RECENTLY_WRITTEN {
            continue;
        }
        let abandoned = if processes_visible {
            !Path::new("/proc").join(pid.to_string()).exists()
        } else {
            age > ABANDONED_AFTER
        };
        if abandoned && fs::remove_file(&path).is_ok() {
            removed.push(path);
        }
    }
    removed.sort();
    removed
}

#[cfg(unix)]
fn owned_by_current_user(metadata: &fs::Metadata) -> bool {
    use std::os::unix::fs::MetadataExt;
    // SAFETY: geteuid has no preconditions and cannot fail.
    metadata.uid() == unsafe { libc::geteuid() }
}

#[cfg(not(unix))]
fn owned_by_current_user(_: &fs::Metadata) -> bool {
    false
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

    /// Outputs smaller than the buffer, exactly one buffer, and one byte more.
    #[test]
    fn outputs_around_the_buffer_size_are_written_whole() {
        let folder = tempfile::tempdir().expect("temporary folder");
        for size in [0, 1, 4095, 4097, OutputFile::CHUNK, OutputFile::CHUNK + 1] {
            let path = folder.path().join(format!("out-{size}.bin"));
            let bytes: Vec<u8> = (0..size).map(|i| (i % 253) as u8).collect();
            write_atomically(&path, |out| out.write_all(&bytes)).expect("written");
            assert_eq!(fs::read(&path).expect("read back"), bytes, "size {size}");
        }
    }

    /// A direct write the system refuses (here: a length that is not a whole number of
    /// blocks) falls back to a normal write of the same bytes.
    #[test]
    fn a_refused_direct_write_falls_back_to_a_normal_one() {
        let folder = tempfile::tempdir().expect("temporary folder");
        let path = folder.path().join("fallback.bin");
        let file = File::create(&path).expect("created");
        let mut direct = if set_direct(&file, true) {
            Direct::On
        } else {
            Direct::Off
        };
        let bytes: Vec<u8> = (0..10_001u32).map(|i| (i % 7) as u8).collect();
        write_fully(&file, &mut direct, &bytes).expect("written");
        assert_eq!(direct, Direct::Off);
        drop(file);
        assert_eq!(fs::read(&path).expect("read back"), bytes);
    }
}
