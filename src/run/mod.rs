//! The validated run: what ingest produces and the audit consumes.
//!
//! A run built in memory by a caller (the Python package, a test) goes straight to
//! the audit ([`crate::audit::audit_runs`]); nothing here depends on how logs are
//! read.
//!
//! `input` holds the run itself ([`RunInput`]); `copies` finds runs read twice (a
//! log copied into the folder, a row repeated) and sets them aside, in memory or
//! in a stream too long to hold.

mod copies;
mod input;

pub use copies::{
    decide_copies, repeated_ids, set_aside_copies, set_aside_copies_in_batches, IdKey, RowDecisions,
};
pub use input::{ClaimForm, RunInput};
