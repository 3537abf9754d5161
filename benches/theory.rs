//! Throughput of the theory kernels (criterion 0.5).
//!
//! - `binomial/upper_bound_mix`: one Clopper–Pearson upper bound per
//!   iteration, cycling through a realistic mix of held-out sizes
//!   (n = 10²…10⁷), error counts (0, 1–3, 1 %, 5 %, 20 %, 50 %) and
//!   α = 0.05/K for K ∈ {1, 3, 10, 100}. Target: median ≤ 300 ns.
//! - `binomial/lower_bound_mix`: the same mix for the lower bound.
//! - `sample_size/holdout_needed_mix`: one exact `holdout_needed` search per
//!   iteration, for unproven claims: observed rates 0.5 %–30 %, claims above them
//!   by a relative 0.1 %–30 % (needed sizes from about 10² to 10⁸), α = 0.05/K as
//!   above.
//! - `growth/ln_growth_vc_1e9_1e7` and `vc/allowance_vc_1e9_1e7`: N = 10⁹,
//!   d_VC = 10⁷ (SPEC §8 target: under 1 ms).
//!
//! Run: `cargo bench --bench theory`

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use gapcert::theory::{binomial, growth::Family, sample_size, vc};

fn mix() -> Vec<(u64, u64, f64)> {
    let mut cases = Vec::new();
    let sizes = [100u64, 1_000, 10_000, 100_000, 1_000_000, 10_000_000];
    let candidates = [1.0, 3.0, 10.0, 100.0];
    for (i, &n) in sizes.iter().enumerate() {
        let counts = [0, 1, 3, n / 100, n / 20, n / 5, n / 2];
        for (j, &k) in counts.iter().enumerate() {
            let alpha = 0.05 / candidates[(i + j) % candidates.len()];
            cases.push((k, n, alpha));
        }
    }
    cases
}

/// (observed rate, claimed error rate, α) of unproven claims, spread evenly in log
/// scale over the ranges in the module documentation.
fn claims_mix() -> Vec<(f64, f64, f64)> {
    let candidates = [1.0, 3.0, 10.0, 100.0];
    let mut cases = Vec::new();
    for i in 0..8 {
        let rate = 0.005 * 60f64.powf(i as f64 / 7.0);
        for j in 0..8 {
            let relative_gap = 0.001 * 300f64.powf(j as f64 / 7.0);
            let alpha = 0.05 / candidates[(i + j) % candidates.len()];
            cases.push((rate, rate * (1.0 + relative_gap), alpha));
        }
    }
    cases
}

fn bench_sample_size(c: &mut Criterion) {
    let cases = claims_mix();
    let mut i = 0usize;
    c.bench_function("sample_size/holdout_needed_mix", |b| {
        b.iter(|| {
            let (rate, claim, alpha) = cases[i % cases.len()];
            i += 1;
            sample_size::holdout_needed_binomial(
                black_box(rate),
                black_box(claim),
                black_box(alpha),
            )
        })
    });
}

fn bench_binomial(c: &mut Criterion) {
    let cases = mix();
    let mut group = c.benchmark_group("binomial");
    let mut i = 0usize;
    group.bench_function("upper_bound_mix", |b| {
        b.iter(|| {
            let (k, n, alpha) = cases[i % cases.len()];
            i += 1;
            binomial::upper_bound(black_box(k), black_box(n), black_box(alpha))
        })
    });
    let mut i = 0usize;
    group.bench_function("lower_bound_mix", |b| {
        b.iter(|| {
            let (k, n, alpha) = cases[i % cases.len()];
            i += 1;
            binomial::lower_bound(black_box(k), black_box(n), black_box(alpha))
        })
    });
    group.finish();
}

fn bench_growth(c: &mut Criterion) {
    let family = Family::Vc { vc_dim: 10_000_000 };
    c.bench_function("growth/ln_growth_vc_1e9_1e7", |b| {
        b.iter(|| black_box(family).ln_growth(black_box(2_000_000_000)))
    });
    c.bench_function("vc/allowance_vc_1e9_1e7", |b| {
        b.iter(|| {
            vc::allowance(
                &black_box(family),
                black_box(1_000_000_000),
                black_box(0.05),
            )
        })
    });
    let relu = Family::ReluNet {
        weights: 10_000_000,
        layers: 8,
        units: 20_000,
    };
    c.bench_function("vc/allowance_relu_net_1e9", |b| {
        b.iter(|| vc::allowance(&black_box(relu), black_box(1_000_000_000), black_box(0.05)))
    });
}

criterion_group!(benches, bench_binomial, bench_sample_size, bench_growth);
criterion_main!(benches);
