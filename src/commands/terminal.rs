//! The terminal side of every command: progress on stderr, writing to standard output
//! or to files, and the signal handling that keeps interrupted runs from leaving
//! temporary files.

use std::io::{self, IsTerminal, Write};
use std::path::Path;
use std::time::Duration;

use gapcert::error::describe_io_error;
use gapcert::ingest::FileIdentity;
use gapcert::report::text::printable;
use gapcert::report::{self, OutputFormat, View};
use gapcert::Error;
use indicatif::{ProgressBar, ProgressDrawTarget, ProgressStyle};

/// Terminal manners shared by every command.
#[derive(Clone, Copy, Debug)]
pub struct Terminal {
    pub quiet: bool,
    pub verbose: bool,
}

/// On SIGTERM, SIGINT or SIGHUP: remove the temporary files being written (the
/// library keeps the list, `gapcert::report::remove_temporaries`), say so, and end
/// with the conventional status 128 + the signal. Destinations are only ever renamed
/// into place complete, so an interrupted run leaves nothing partial behind.
pub fn remove_temporaries_on_signal() {
    use signal_hook::consts::{SIGHUP, SIGINT, SIGTERM};
    if let Ok(mut signals) = signal_hook::iterator::Signals::new([SIGTERM, SIGINT, SIGHUP]) {
        std::thread::spawn(move || {
            if let Some(signal) = signals.forever().next() {
                if report::remove_temporaries() > 0 {
                    eprintln!("gapcert: interrupted; no output file was written");
                } else {
                    eprintln!("gapcert: interrupted");
                }
                std::process::exit(128 + signal);
            }
        });
    }
}

/// Fails early when an output file cannot be created: its folder is missing or is not
/// a folder, or the path is a folder.
pub fn check_destination(path: &Path) -> Result<(), Error> {
    let folder = match path.parent() {
        Some(parent) if !parent.as_os_str().is_empty() => parent,
        _ => Path::new("."),
    };
    if !folder.is_dir() {
        return Err(Error::Usage(format!(
            "{}: cannot write (the folder {} does not exist); nothing was written",
            path.display(),
            folder.display()
        )));
    }
    if path.is_dir() {
        return Err(Error::Usage(format!(
            "{}: cannot write (it is a folder); nothing was written",
            path.display()
        )));
    }
    Ok(())
}

/// Checks every output of a command before anything is read or written: each can be
/// created ([`check_destination`]), none is one of the inputs (the same file on disk,
/// whatever links or spellings lead to it), and no two are the same file. `outputs`
/// are (flag, path); `inputs` the files the command will read.
pub fn check_outputs(
    outputs: &[(&str, &Path)],
    inputs: &[(&Path, Option<FileIdentity>)],
) -> Result<(), Error> {
    for (flag, path) in outputs {
        check_destination(path)?;
        if let Ok(metadata) = std::fs::metadata(path) {
            if let Some(identity) = FileIdentity::of(&metadata) {
                if let Some((input, _)) = inputs.iter().find(|(_, id)| *id == Some(identity)) {
                    return Err(Error::Usage(format!(
                        "{flag} {}: that is the input {}, which the output would replace; write the output elsewhere (nothing was read or written)",
                        path.display(),
                        input.display()
                    )));
                }
            }
        }
    }
    for (index, (flag, path)) in outputs.iter().enumerate() {
        for (other_flag, other) in &outputs[..index] {
            if same_destination(path, other) {
                return Err(Error::Usage(format!(
                    "{other_flag} and {flag} both name {}: each output needs a file of its own (nothing was read or written)",
                    path.display()
                )));
            }
        }
    }
    Ok(())
}

/// Whether two output paths name one file: the same file on disk if both exist,
/// otherwise the same name in the same (resolved) folder.
fn same_destination(a: &Path, b: &Path) -> bool {
    if let (Ok(first), Ok(second)) = (std::fs::metadata(a), std::fs::metadata(b)) {
        if let (Some(first), Some(second)) = (FileIdentity::of(&first), FileIdentity::of(&second)) {
            return first == second;
        }
    }
    let resolved = |path: &Path| {
        let folder = match path.parent() {
            Some(parent) if !parent.as_os_str().is_empty() => parent,
            _ => Path::new("."),
        };
        std::fs::canonicalize(folder)
            .ok()
            .map(|folder| folder.join(path.file_name().unwrap_or_default()))
    };
    match (resolved(a), resolved(b)) {
        (Some(a), Some(b)) => a == b,
        _ => a == b,
    }
}

/// Removes the temporaries that killed audits left in the folders of `outputs`
/// (`gapcert::report::atomic::remove_stale_temporaries`) and says so on stderr,
/// unless `--quiet`.
pub fn remove_stale_temporaries(outputs: &[&Path], terminal: Terminal) {
    let mut folders: Vec<std::path::PathBuf> = Vec::new();
    for path in outputs {
        let folder = match path.parent() {
            Some(parent) if !parent.as_os_str().is_empty() => parent,
            _ => Path::new("."),
        };
        let folder = std::fs::canonicalize(folder).unwrap_or_else(|_| folder.to_path_buf());
        if !folders.contains(&folder) {
            folders.push(folder);
        }
    }
    for folder in folders {
        let removed = report::atomic::remove_stale_temporaries(&folder);
        if !removed.is_empty() && !terminal.quiet {
            eprintln!(
                "gapcert: removed {} temporary file(s) left by interrupted audits in {}",
                removed.len(),
                printable(&folder.display().to_string())
            );
        }
    }
}

/// Writes a file atomically, naming it in any error.
pub fn write_file<F>(path: &Path, write: F) -> Result<(), Error>
where
    F: FnOnce(&mut dyn Write) -> io::Result<()>,
{
    report::write_atomically(path, write).map_err(|error| {
        Error::Io(format!(
            "{}: cannot write ({}); nothing was written there",
            path.display(),
            describe_io_error(&error)
        ))
    })
}

/// Writes to standard output; a closed pipe (`| head`) is a normal end.
pub fn write_stdout<F>(write: F) -> Result<(), Error>
where
    F: FnOnce(&mut dyn Write) -> io::Result<()>,
{
    let stdout = io::stdout();
    let mut out = io::BufWriter::with_capacity(1 << 16, stdout.lock());
    let result = write(&mut out).and_then(|_| out.flush());
    match result {
        Ok(()) => Ok(()),
        Err(error) if error.kind() == io::ErrorKind::BrokenPipe => Ok(()),
        Err(error) => Err(Error::Io(format!(
            "cannot write to standard output ({error})"
        ))),
    }
}

/// A calculator's or `verify`'s result on standard output, unless `--quiet`.
pub fn print_view<V: View>(
    view: &V,
    format: OutputFormat,
    terminal: Terminal,
) -> Result<(), Error> {
    if terminal.quiet {
        return Ok(());
    }
    let (_, width) = stdout_terminal();
    write_stdout(|out| report::write_view(view, format, out, width))
}

/// Whether colours are wanted on standard output (a terminal, `NO_COLOR` unset),
/// and the width to fit: `COLUMNS` when it is set to a number (also when the output
/// is piped: the user asked for that width), else the terminal's, else none.
pub fn stdout_terminal() -> (bool, Option<u16>) {
    let columns = std::env::var("COLUMNS")
        .ok()
        .and_then(|text| text.trim().parse::<u16>().ok())
        .filter(|&width| width >= 20);
    if !io::stdout().is_terminal() {
        return (false, columns);
    }
    let color = std::env::var_os("NO_COLOR").is_none();
    // comfy-table asks the terminal for its size (stdout is the terminal here).
    (color, columns.or_else(|| comfy_table::Table::new().width()))
}

/// A spinner on stderr that appears only if the work takes more than about a second,
/// only on a terminal, and never with `--quiet`.
pub struct Progress {
    bar: Option<ProgressBar>,
}

impl Progress {
    pub fn start(terminal: Terminal, message: &str) -> Progress {
        if terminal.quiet || !io::stderr().is_terminal() {
            return Progress { bar: None };
        }
        let bar = ProgressBar::with_draw_target(None, ProgressDrawTarget::hidden());
        bar.set_style(
            ProgressStyle::with_template("{spinner} {msg} ({elapsed})")
                .unwrap_or_else(|_| ProgressStyle::default_spinner()),
        );
        bar.set_message(message.to_string());
        let delayed = bar.clone();
        std::thread::spawn(move || {
            std::thread::sleep(Duration::from_millis(1000));
            if !delayed.is_finished() {
                delayed.set_draw_target(ProgressDrawTarget::stderr());
                delayed.enable_steady_tick(Duration::from_millis(120));
            }
        });
        Progress { bar: Some(bar) }
    }

    /// After each file: with several files, the spinner becomes a bar of files read
    /// (the audit and the report follow the last file).
    pub fn file_read(&self, done: usize, total: usize) {
        let Some(bar) = &self.bar else { return };
        if total > 1 {
            if bar.length() != Some(total as u64) {
                bar.set_length(total as u64);
                bar.set_style(
                    ProgressStyle::with_template(
                        "{bar:30} {pos}/{len} files read ({elapsed}) {msg}",
                    )
                    .unwrap_or_else(|_| ProgressStyle::default_bar()),
                );
            }
            bar.set_position(done as u64);
        }
        if done == total {
            bar.set_message("auditing");
        }
    }

    /// The audit proper starts (streaming audits, which know how many runs there
    /// are): the spinner becomes a bar of runs audited.
    pub fn auditing(&self, total_runs: usize) {
        let Some(bar) = &self.bar else { return };
        bar.set_length(total_runs as u64);
        bar.set_position(0);
        bar.set_style(
            ProgressStyle::with_template(
                "{bar:30} {human_pos}/{human_len} runs audited ({elapsed}, about {eta} left)",
            )
            .unwrap_or_else(|_| ProgressStyle::default_bar()),
        );
        bar.set_message("");
    }

    /// `runs` more runs are audited and written.
    pub fn audited(&self, runs: usize) {
        if let Some(bar) = &self.bar {
            bar.inc(runs as u64);
        }
    }

    pub fn finish(&self) {
        if let Some(bar) = &self.bar {
            bar.finish_and_clear();
        }
    }
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn progress_counts_runs_audited_against_the_total() {
        // A bar that draws nowhere (tests have no terminal on stderr).
        let progress = Progress {
            bar: Some(ProgressBar::hidden()),
        };
        progress.auditing(1_000);
        progress.audited(400);
        progress.audited(250);
        let bar = progress.bar.as_ref().expect("bar");
        assert_eq!(bar.length(), Some(1_000));
        assert_eq!(bar.position(), 650);
        progress.finish();
        // Without a terminal there is no bar, and the calls do nothing.
        let silent = Progress { bar: None };
        silent.auditing(10);
        silent.audited(10);
        silent.finish();
    }
}
