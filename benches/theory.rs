//! Throughput of the theory kernels (criterion 0.5).
//!
//! - `binomial/upper_bound_mix`: one Clopper–Pearson upper bound per
//!   iteration, cycling through a realistic mix of held-out sizes
//!   (n = 10²…10⁷), error counts (0, 1–3, 1 %, 5 %, 20 %, 50 %) and
//!   α = 0.05/K for K ∈ {1, 3, 10, 100}. Target: median ≤ 300 ns.
//! - `binomial/lower_bound_mix`: the same mix for the lower bound.
//! - `growth/ln_growth_vc_1e9_1e7` and `vc/allowance_vc_1e9_1e7`: N = 10⁹,
//!   d_VC = 10⁷ (SPEC §8 target: under 1 ms).
//!
//! Run: `cargo bench --bench theory`

use criterion::{black_box, criterion_group, criterion_main, Criterion};
use gapcert::theory::{binomial, growth::Family, vc};

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

criterion_group!(benches, bench_binomial, bench_growth);
criterion_main!(benches);
