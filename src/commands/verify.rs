//! `gapcert verify`: re-hash a certificate's inputs, recompute its audit and name
//! every difference.

use gapcert::Error;

use super::outcome::Outcome;
use super::settings::simple_format;
use super::terminal::{print_view, Terminal};
use crate::cli::VerifyArgs;

/// Reads the inputs from the certificate's folder (or `--root`), recomputes the audit
/// and prints every difference. Exit 0 when nothing drifted, 1 on drift, 2 when the
/// certificate cannot be read or names a path outside the folder verified.
pub fn run(args: &VerifyArgs, terminal: Terminal) -> Result<Outcome, Error> {
    let verification = gapcert::certificate::verify(&args.certificate, args.root.as_deref())?;
    print_view(&verification, simple_format(args.format.format), terminal)?;
    Ok(if verification.verified {
        Outcome::Pass
    } else {
        Outcome::Fail
    })
}
