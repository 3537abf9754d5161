//! Using gapcert as a library: audit a log held in memory and print each verdict.
//! The log is invented.
//!
//! ```sh
//! cargo run --release --example audit_library
//! ```

use gapcert::audit::AuditSettings;
use gapcert::ingest::{IngestSettings, LogFormat, LogSource};

const LOG: &[u8] = b"run,family,dim,train_n,train_error_rate,holdout_n,holdout_misclassified,holdout_set,claimed_accuracy
baseline,linear,16,50000,0.061,4000,262,frozen-test,0.93
wider,linear,64,50000,0.048,4000,231,frozen-test,0.95
tiny-eval,linear,16,50000,0.060,150,7,,0.95
";

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let sources = [LogSource::Memory("in-memory.csv", LOG, LogFormat::Csv)];
    let settings = AuditSettings {
        confidence: 0.99,
        ..AuditSettings::default()
    };
    let doc = gapcert::audit_sources(&sources, &settings, &IngestSettings::default())?;
    for run in &doc.runs {
        println!(
            "{:<10} {:>9}  error ≤ {:.4} (K = {}), claim {:.4}, needs {:?} held-out examples",
            run.run,
            run.verdict.as_str(),
            run.error_upper_bound,
            run.candidates,
            run.claim_error_rate.unwrap_or(f64::NAN),
            run.holdout_needed
        );
    }
    println!("gate: {:?}", doc.summary.gate);
    Ok(())
}
