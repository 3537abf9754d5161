//! Seeded Monte Carlo coverage of the held-out intervals.
//!
//! Sources: Clopper & Pearson 1934 (exact interval: coverage ≥ 1 − δ for
//! every p and n) and Hoeffding 1963 (coverage ≥ 1 − δ). For each (n, p) we
//! draw R = 4000 binomial counts (rand 0.8 StdRng, fixed seed), count how
//! often the two-sided interval at δ = 0.05 contains p, and require the
//! empirical coverage to be at least 1 − δ − 4·sqrt(δ(1 − δ)/R) (four
//! binomial standard errors, ≈ 0.0138): a correct method fails this with
//! probability < 1e-4 per case, while a method that ignores the α/2 split or
//! uses a too-narrow width drops far below it.

use gapcert::theory::{binomial, hoeffding};
use rand::rngs::StdRng;
use rand::{Rng, SeedableRng};

const REPLICATES: usize = 4000;
const DELTA: f64 = 0.05;

/// Exact Binomial(n, p) draw: Bernoulli trials for small n; otherwise
/// geometric skipping (successes are separated by Geometric(p) gaps), which
/// is exact for any n and costs O(n·p).
fn draw_binomial(rng: &mut StdRng, n: u64, p: f64) -> u64 {
    if n <= 200 {
        return (0..n).filter(|_| rng.gen::<f64>() < p).count() as u64;
    }
    let mut count = 0u64;
    let mut position = 0u64;
    let ln_q = (-p).ln_1p();
    loop {
        let u: f64 = rng.gen::<f64>();
        // Number of failures before the next success: floor(ln U / ln q).
        let gap = ((1.0 - u).ln() / ln_q).floor();
        if !gap.is_finite() || position as f64 + gap >= n as f64 {
            return count;
        }
        position += gap as u64 + 1;
        if position > n {
            return count;
        }
        count += 1;
    }
}

fn minimum_coverage() -> f64 {
    1.0 - DELTA - 4.0 * (DELTA * (1.0 - DELTA) / REPLICATES as f64).sqrt()
}

#[test]
fn binomial_and_hoeffding_intervals_cover_at_nominal_rate() {
    let mut rng = StdRng::seed_from_u64(0x0067_6170_6365_7274);
    let cases: [(u64, f64); 8] = [
        (20, 0.05),
        (50, 0.5),
        (100, 0.01),
        (200, 0.2),
        (1_000, 0.003),
        (1_000, 0.1),
        (10_000, 0.02),
        (100_000, 0.001),
    ];
    for &(n, p) in &cases {
        let mut covered_binomial = 0usize;
        let mut covered_hoeffding = 0usize;
        for _ in 0..REPLICATES {
            let k = draw_binomial(&mut rng, n, p);
            let (lo, hi) = binomial::interval(k, n, DELTA);
            if lo <= p && p <= hi {
                covered_binomial += 1;
            }
            let (lo, hi) = hoeffding::interval(k as f64 / n as f64, n, DELTA);
            if lo <= p && p <= hi {
                covered_hoeffding += 1;
            }
        }
        let binomial_coverage = covered_binomial as f64 / REPLICATES as f64;
        let hoeffding_coverage = covered_hoeffding as f64 / REPLICATES as f64;
        assert!(
            binomial_coverage >= minimum_coverage(),
            "Clopper-Pearson coverage {binomial_coverage} < {} at n={n}, p={p}",
            minimum_coverage()
        );
        assert!(
            hoeffding_coverage >= minimum_coverage(),
            "Hoeffding coverage {hoeffding_coverage} < {} at n={n}, p={p}",
            minimum_coverage()
        );
    }
}

/// One-sided upper bound at level α (the verdict's bound): P[p ≤ U] ≥ 1 − α.
#[test]
fn one_sided_upper_bound_covers() {
    let mut rng = StdRng::seed_from_u64(42);
    for &(n, p) in &[(30u64, 0.1), (500, 0.02), (5_000, 0.3)] {
        let covered = (0..REPLICATES)
            .filter(|_| {
                let k = draw_binomial(&mut rng, n, p);
                p <= binomial::upper_bound(k, n, DELTA)
            })
            .count();
        let coverage = covered as f64 / REPLICATES as f64;
        assert!(coverage >= minimum_coverage(), "n={n} p={p}: {coverage}");
    }
}

/// The check can fail: an interval built with α instead of α/2 per side
/// (a classic slip) under-covers at n = 1000, p = 0.1 well below the bar.
#[test]
fn check_detects_undercoverage() {
    let mut rng = StdRng::seed_from_u64(7);
    let (n, p) = (1_000u64, 0.1);
    let covered = (0..REPLICATES)
        .filter(|_| {
            let k = draw_binomial(&mut rng, n, p);
            let lo = binomial::lower_bound(k, n, 2.0 * DELTA);
            let hi = binomial::upper_bound(k, n, 2.0 * DELTA);
            lo <= p && p <= hi
        })
        .count();
    assert!((covered as f64 / REPLICATES as f64) < minimum_coverage());
}
