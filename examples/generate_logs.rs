//! Synthetic run logs for benchmarks and stress tests (invented data).
//!
//! ```sh
//! cargo run --release --example generate_logs -- --rows 1000000 --seed 7 --output bench-data/runs.csv
//! cargo run --release --example generate_logs -- --rows 10000000 --output bench-data/runs.parquet
//! ```
//!
//! A realistic mix: nine model families with parameters drawn from a menu of
//! architectures (sweeps reuse a few hundred distinct families, not one per run), training sizes and
//! held-out sizes log-uniform in 10²..10⁷, held-out errors logged as counts, rates or
//! accuracies, runs grouped on shared held-out splits (a sweep of 1–40 runs per split),
//! and claims near (sometimes above) the observed accuracy. Deterministic per seed.

use std::fs::File;
use std::io::{BufWriter, Write};
use std::path::PathBuf;

use polars::prelude::*;

/// SplitMix64 (Steele, Lea & Flood 2014): small, fast, good enough for test data.
struct SplitMix64(u64);

impl SplitMix64 {
    fn next_u64(&mut self) -> u64 {
        self.0 = self.0.wrapping_add(0x9E37_79B9_7F4A_7C15);
        let mut z = self.0;
        z = (z ^ (z >> 30)).wrapping_mul(0xBF58_476D_1CE4_E5B9);
        z = (z ^ (z >> 27)).wrapping_mul(0x94D0_49BB_1331_11EB);
        z ^ (z >> 31)
    }
    fn uniform(&mut self) -> f64 {
        (self.next_u64() >> 11) as f64 / (1u64 << 53) as f64
    }
    fn below(&mut self, n: u64) -> u64 {
        self.next_u64() % n
    }
    fn log_uniform(&mut self, low: f64, high: f64) -> u64 {
        (low.ln() + self.uniform() * (high.ln() - low.ln()))
            .exp()
            .round() as u64
    }
}

#[derive(Default)]
struct Columns {
    run: Vec<String>,
    family: Vec<Option<&'static str>>,
    dim: Vec<Option<i64>>,
    vc_dim: Vec<Option<i64>>,
    size: Vec<Option<i64>>,
    weights: Vec<Option<i64>>,
    layers: Vec<Option<i64>>,
    units: Vec<Option<i64>>,
    leaves: Vec<Option<i64>>,
    features: Vec<Option<i64>>,
    train_n: Vec<Option<i64>>,
    train_error_rate: Vec<Option<f64>>,
    holdout_n: Vec<i64>,
    holdout_error_rate: Vec<Option<f64>>,
    holdout_accuracy: Vec<Option<f64>>,
    holdout_misclassified: Vec<Option<i64>>,
    holdout_set: Vec<Option<String>>,
    candidates: Vec<Option<i64>>,
    claimed_accuracy: Vec<Option<f64>>,
    logged_at: Vec<String>,
}

fn generate(rows: usize, seed: u64, offset: usize) -> Columns {
    let mut rng = SplitMix64(seed ^ (offset as u64).wrapping_mul(0x2545_F491_4F6C_DD1D));
    let mut c = Columns::default();
    let mut split_left = 0u64;
    let mut split_id = 0u64;
    let mut split_n = 0u64;
    for i in 0..rows {
        if split_left == 0 {
            split_id += 1;
            split_left = 1 + rng.below(40);
            split_n = rng.log_uniform(1e2, 1e7);
        }
        split_left -= 1;
        c.run
            .push(format!("c{offset}-sweep{split_id}-run{}", offset + i));
        let mut params: [Option<i64>; 8] = [None; 8];
        let family = match rng.below(11) {
            0 => Some("linear"),
            1 => Some("tree"),
            2 => Some("relu_net"),
            3 => Some("stump"),
            4 => Some("finite"),
            5 => Some("vc"),
            6 => Some("box"),
            7 => Some("ray"),
            8 => Some("threshold_net"),
            9 => Some("gradient_boosting"),
            _ => None,
        };
        // Sweeps reuse a modest menu of architectures, as real experiment folders do.
        let pick = |rng: &mut SplitMix64, menu: &[i64]| menu[rng.below(menu.len() as u64) as usize];
        match family {
            Some("linear") => {
                params[0] = Some(pick(&mut rng, &[8, 16, 32, 64, 128, 256, 512, 1024, 2048]))
            }
            Some("box") => params[0] = Some(pick(&mut rng, &[2, 3, 4, 6, 8, 12, 16])),
            Some("vc") => params[1] = Some(pick(&mut rng, &[10, 30, 100, 300, 1000, 3000, 10_000])),
            Some("finite") => params[2] = Some(pick(&mut rng, &[64, 1024, 4096, 65_536, 1 << 20])),
            Some("relu_net") | Some("threshold_net") => {
                params[4] = Some(pick(&mut rng, &[2, 3, 4, 6, 8]));
                params[5] = Some(pick(&mut rng, &[16, 64, 128, 256, 512]));
                params[3] = Some(params[5].unwrap() * pick(&mut rng, &[16, 64, 128]));
            }
            Some("tree") => {
                params[6] = Some(pick(&mut rng, &[4, 8, 16, 32, 64, 128, 256]));
                params[7] = Some(pick(&mut rng, &[10, 50, 100, 500]));
            }
            Some("stump") => params[7] = Some(pick(&mut rng, &[10, 50, 100, 500])),
            _ => {}
        }
        c.family.push(family);
        c.dim.push(params[0]);
        c.vc_dim.push(params[1]);
        c.size.push(params[2]);
        c.weights.push(params[3]);
        c.layers.push(params[4]);
        c.units.push(params[5]);
        c.leaves.push(params[6]);
        c.features.push(params[7]);
        let true_error = 0.005 + 0.3 * rng.uniform().powi(2);
        let train_error = (true_error * (0.3 + 0.7 * rng.uniform())).min(1.0);
        if rng.below(10) < 9 {
            c.train_n.push(Some(rng.log_uniform(1e2, 1e7) as i64));
            c.train_error_rate
                .push(Some((train_error * 1e6).round() / 1e6));
        } else {
            c.train_n.push(None);
            c.train_error_rate.push(None);
        }
        let n = split_n;
        // Binomial draw approximated by a rounded normal (adequate for test data).
        let mean = true_error * n as f64;
        let sd = (mean * (1.0 - true_error)).sqrt();
        let z = {
            let (u1, u2) = (rng.uniform().max(1e-300), rng.uniform());
            (-2.0 * u1.ln()).sqrt() * (std::f64::consts::TAU * u2).cos()
        };
        let k = (mean + sd * z).round().clamp(0.0, n as f64) as u64;
        c.holdout_n.push(n as i64);
        match rng.below(3) {
            0 => {
                c.holdout_misclassified.push(Some(k as i64));
                c.holdout_error_rate.push(None);
                c.holdout_accuracy.push(None);
            }
            1 => {
                c.holdout_misclassified.push(None);
                c.holdout_error_rate.push(Some(k as f64 / n as f64));
                c.holdout_accuracy.push(None);
            }
            _ => {
                c.holdout_misclassified.push(None);
                c.holdout_error_rate.push(None);
                c.holdout_accuracy.push(Some(1.0 - k as f64 / n as f64));
            }
        }
        c.holdout_set.push(if rng.below(20) == 0 {
            None
        } else {
            Some(format!("split-{offset}-{split_id}"))
        });
        c.candidates.push(if rng.below(4) == 0 {
            Some(1 + rng.below(50) as i64)
        } else {
            None
        });
        c.claimed_accuracy.push(if rng.below(10) < 7 {
            let margin = -0.02 + 0.06 * rng.uniform();
            Some(((1.0 - true_error - margin).clamp(0.5, 0.9999) * 1e4).round() / 1e4)
        } else {
            None
        });
        c.logged_at.push(format!(
            "2026-{:02}-{:02}T{:02}:{:02}:00Z",
            1 + rng.below(12),
            1 + rng.below(28),
            rng.below(24),
            rng.below(60)
        ));
    }
    c
}

fn frame(c: Columns) -> PolarsResult<DataFrame> {
    let height = c.run.len();
    let columns: Vec<Column> = vec![
        Series::new("run".into(), c.run).into(),
        Series::new("family".into(), c.family).into(),
        Series::new("dim".into(), c.dim).into(),
        Series::new("vc_dim".into(), c.vc_dim).into(),
        Series::new("size".into(), c.size).into(),
        Series::new("weights".into(), c.weights).into(),
        Series::new("layers".into(), c.layers).into(),
        Series::new("units".into(), c.units).into(),
        Series::new("leaves".into(), c.leaves).into(),
        Series::new("features".into(), c.features).into(),
        Series::new("train_n".into(), c.train_n).into(),
        Series::new("train_error_rate".into(), c.train_error_rate).into(),
        Series::new("holdout_n".into(), c.holdout_n).into(),
        Series::new("holdout_error_rate".into(), c.holdout_error_rate).into(),
        Series::new("holdout_accuracy".into(), c.holdout_accuracy).into(),
        Series::new("holdout_misclassified".into(), c.holdout_misclassified).into(),
        Series::new("holdout_set".into(), c.holdout_set).into(),
        Series::new("candidates".into(), c.candidates).into(),
        Series::new("claimed_accuracy".into(), c.claimed_accuracy).into(),
        Series::new("logged_at".into(), c.logged_at).into(),
    ];
    DataFrame::new(height, columns)
}

fn main() -> Result<(), Box<dyn std::error::Error>> {
    let mut rows = 1_000_000usize;
    let mut seed = 7u64;
    let mut output = PathBuf::from("bench-data/runs.csv");
    let mut args = std::env::args().skip(1);
    while let Some(arg) = args.next() {
        let value = args.next().ok_or(format!("{arg} needs a value"))?;
        match arg.as_str() {
            "--rows" => rows = value.parse()?,
            "--seed" => seed = value.parse()?,
            "--output" => output = PathBuf::from(value),
            other => return Err(format!("unknown option {other}").into()),
        }
    }
    if let Some(parent) = output.parent() {
        std::fs::create_dir_all(parent)?;
    }
    // Generate and write in chunks so 10⁷ rows do not need 10⁷ rows of Rust strings.
    const CHUNK: usize = 1_000_000;
    let is_parquet = output.extension().is_some_and(|e| e == "parquet");
    let file = BufWriter::new(File::create(&output)?);
    if is_parquet {
        let mut chunk = frame(generate(rows.min(CHUNK), seed, 0))?;
        let mut writer = ParquetWriter::new(file).batched(chunk.schema())?;
        writer.write_batch(&chunk)?;
        let mut done = rows.min(CHUNK);
        while done < rows {
            let take = (rows - done).min(CHUNK);
            chunk = frame(generate(take, seed, done))?;
            writer.write_batch(&chunk)?;
            done += take;
        }
        writer.finish()?;
    } else {
        let mut file = file;
        let mut done = 0;
        let mut header = true;
        while done < rows {
            let take = (rows - done).min(CHUNK);
            let mut chunk = frame(generate(take, seed, done))?;
            CsvWriter::new(&mut file)
                .include_header(header)
                .finish(&mut chunk)?;
            header = false;
            done += take;
        }
        file.flush()?;
    }
    eprintln!("wrote {rows} runs to {}", output.display());
    Ok(())
}
