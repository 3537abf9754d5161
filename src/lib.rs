//! gapcert audits machine-learning run logs and certifies, or refuses to certify, the
//! accuracy they claim.
//!
//! Data flows one way: [`ingest`] reads logs into validated runs ([`run`]), [`audit`]
//! evaluates each run with the pure mathematics of [`theory`], and [`report`] renders
//! the result. [`api`] holds the entry points, [`options`] checks a caller's options
//! into settings, [`calculators`] are the sample-size and growth calculators, and
//! [`certificate`] writes and verifies certificates. The library never prints a
//! report of its own accord, exits the process or installs a signal handler; the
//! command line lives with the binary (`src/main.rs`).
//!
//! ```
//! use gapcert::audit::{AuditSettings, Verdict};
//! use gapcert::ingest::{IngestSettings, LogFormat, LogSource};
//!
//! // An invented log: 12 errors in 2,000 held-out examples, claiming 98 % accuracy.
//! let log = b"run,holdout_n,holdout_misclassified,claimed_accuracy\nexample,2000,12,0.98\n";
//! let sources = [LogSource::Memory("example.csv", log, LogFormat::Csv)];
//! let doc = gapcert::audit_sources(&sources, &AuditSettings::default(), &IngestSettings::default())
//!     .expect("a valid log");
//! let run = &doc.runs[0];
//! // Exact one-sided 95 % upper bound on the true error (Clopper–Pearson): about 1.0 %.
//! assert!(run.error_upper_bound > 0.006 && run.error_upper_bound < 0.02);
//! assert_eq!(run.verdict, Verdict::Certified);
//!
//! // The same evidence cannot support 99.5 %.
//! assert!(gapcert::theory::binomial::upper_bound(12, 2000, 0.05) > 0.005);
//! ```

pub(crate) mod api;
pub mod audit;
pub mod calculators;
pub mod certificate;
pub(crate) mod claim;
pub(crate) mod decimal;
pub mod demo;
pub mod engine;
pub mod error;
pub mod frames;
pub mod fuzzing;
pub mod ingest;
pub mod options;
pub mod outputs;
pub mod report;
pub mod run;
pub(crate) mod suggest;
pub mod theory;
pub mod timing;

pub use api::{audit_discovered, audit_paths, audit_paths_reporting, audit_sources};
pub use error::{Cancel, Error, Problem};
pub use ingest::formats::install_panic_hook;
