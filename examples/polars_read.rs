//! The baseline of the throughput benchmark: polars alone reading a log into a
//! DataFrame with its default CSV options (typed, schema inferred) or its Parquet
//! reader. Prints the wall time in seconds.
//!
//! ```sh
//! cargo run --release --example polars_read -- bench-data/runs.csv
//! ```

use std::fs::File;
use std::time::Instant;

use polars::prelude::*;

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let path = std::env::args().nth(1).ok_or("usage: polars_read FILE")?;
    let start = Instant::now();
    let file = File::open(&path)?;
    let df = if path.ends_with(".parquet") {
        ParquetReader::new(file).finish()?
    } else {
        CsvReadOptions::default()
            .with_has_header(true)
            .into_reader_with_file_handle(file)
            .finish()?
    };
    let seconds = start.elapsed().as_secs_f64();
    println!("{seconds:.4}");
    eprintln!(
        "polars read {} rows × {} columns in {seconds:.3} s",
        df.height(),
        df.width()
    );
    Ok(())
}
