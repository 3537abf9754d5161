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
use gapcert::report::text::printable_lines;

use cli::Cli;
use commands::Outcome;

fn main() -> ExitCode {
    gapcert::install_panic_hook();
    commands::terminal::remove_temporaries_on_signal();
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(error) => {
            let code = if error.use_stderr() { 2 } else { 0 };
            // An argument echoed back may hold escape sequences (a file name from a
            // glob): then the message is printed plain, escaped.
            let plain = error.render().to_string();
            let escaped = printable_lines(&plain);
            if escaped == plain {
                let _ = error.print();
            } else if error.use_stderr() {
                eprintln!("{}", escaped.trim_end());
            } else {
                println!("{}", escaped.trim_end());
            }
            return ExitCode::from(code);
        }
    };
    match commands::run(cli) {
        Ok(Outcome::Pass) => ExitCode::from(0),
        Ok(Outcome::Fail) => ExitCode::from(1),
        // Every kind of error (usage, input, I/O) is exit code 2 (SPEC §6).
        Err(error) => {
            // Messages name files and quote cells: escaped like the table on stdout.
            eprintln!("gapcert: {}", printable_lines(&error.to_string()));
            ExitCode::from(2)
        }
    }
}
