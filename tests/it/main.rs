//! gapcert's integration tests, one module per subject, in one test target so that
//! polars and the library are linked once. Heavy cases are `#[ignore]`d and run with
//! `cargo test --release --test it -- --ignored`.

mod audit_properties;
mod certificate;
mod claims;
mod cli_audit;
mod cli_commands;
mod common;
mod comparison_coverage;
mod folders;
mod frames;
mod fuzz_regressions;
mod guards;
mod hostile;
mod html_report;
mod junit;
mod layout;
mod robustness;
mod splits;
mod streaming;
mod theory_crosscheck;
mod theory_facts;
mod theory_montecarlo;
mod theory_properties;
mod theory_reference;
