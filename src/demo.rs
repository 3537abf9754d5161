//! The built-in demo logs: an invented scenario (see fixtures/demo/README.md), compiled
//! into the binary so `gapcert demo` works anywhere. The same file is
//! `fixtures/demo/runs.csv`, so `gapcert audit fixtures/demo/runs.csv` gives the same
//! verdicts.

use crate::ingest::claims::ClaimsSource;
use crate::ingest::{LogFormat, LogSource};

/// The demo log as compiled in.
pub const DEMO_RUNS_CSV: &[u8] = include_bytes!("../fixtures/demo/runs.csv");

/// The label the demo log is reported under.
pub const DEMO_LABEL: &str = "demo/runs.csv";

/// The demo's log sources.
pub fn sources() -> Vec<LogSource<'static>> {
    vec![LogSource::Memory(DEMO_LABEL, DEMO_RUNS_CSV, LogFormat::Csv)]
}

/// The demo's release note, as a claims file (invented, like the logs; see
/// fixtures/demo/README.md).
pub const DEMO_CLAIMS_CSV: &[u8] = include_bytes!("../fixtures/demo/claims.csv");

/// The label the demo's claims file is reported under.
pub const DEMO_CLAIMS_LABEL: &str = "demo/claims.csv";

/// The demo's claims sources.
pub fn claims_sources() -> Vec<ClaimsSource<'static>> {
    vec![ClaimsSource::Memory(
        DEMO_CLAIMS_LABEL,
        DEMO_CLAIMS_CSV,
        LogFormat::Csv,
    )]
}
