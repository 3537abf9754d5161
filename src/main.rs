//! gapcert's binary: parse the command line, run one command, map the outcome to an
//! exit code, here and nowhere else: 0 the gate passes, 1 the gate fails or `verify`
//! found drift, 2 bad input, usage or a file that cannot be read or written.
//!
//! The command line lives with the binary (`cli.rs` for the flags, `commands/` for
//! one module per command, the terminal and the signal handling); the library
//! (`lib.rs`) never prints a report, exits the process or installs a handler.

mod cli;
mod commands;

use std::process::ExitCode;

use clap::Parser;

use cli::Cli;
use commands::Outcome;

fn main() -> ExitCode {
    gapcert::install_panic_hook();
    commands::terminal::remove_temporaries_on_signal();
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(error) => {
            let code = if error.use_stderr() { 2 } else { 0 };
            let _ = error.print();
            return ExitCode::from(code);
        }
    };
    match commands::run(cli) {
        Ok(Outcome::Pass) => ExitCode::from(0),
        Ok(Outcome::Fail) => ExitCode::from(1),
        // Every kind of error (usage, input, I/O) is exit code 2 (SPEC §6).
        Err(error) => {
            eprintln!("gapcert: {error}");
            ExitCode::from(2)
        }
    }
}
