//! gapcert's binary: parse the command line, run one command, map the outcome to an
//! exit code (0 the gate passes, 1 the gate fails or drift was found, 2 bad input or
//! usage).

use std::process::ExitCode;

use clap::Parser;
use gapcert::app::{self, Outcome};
use gapcert::cli::Cli;

fn main() -> ExitCode {
    gapcert::install_panic_hook();
    let cli = match Cli::try_parse() {
        Ok(cli) => cli,
        Err(error) => {
            let code = if error.use_stderr() { 2 } else { 0 };
            let _ = error.print();
            return ExitCode::from(code);
        }
    };
    match app::run(cli) {
        Ok(Outcome::Pass) => ExitCode::from(0),
        Ok(Outcome::Fail) => ExitCode::from(1),
        Err(error) => {
            eprintln!("gapcert: {error}");
            ExitCode::from(2)
        }
    }
}
