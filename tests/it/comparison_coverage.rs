//! Monte Carlo coverage of the bounds on Δ = E_run − E_base (SPEC §10): held-out sets
//! are drawn from known rates and the one-sided bounds must hold at least 1 − α of the
//! time (common practice for checking confidence bounds; the rates observed are
//! printed, and the closing note of the claims issue quotes them).
//!
//! Paired: each of n examples is, independently, wrong only for the run (p_r), wrong
//! only for the baseline (p_s), or neither or both (the rest): a trinomial; true
//! Δ = p_r − p_s. Unpaired: the run's and the baseline's errors on separate sets, and
//! also on one shared set (the union bound must hold whatever the dependence).

use gapcert::audit::claims::unpaired_binomial;
use gapcert::theory::comparison::paired_bounds;
use rand::{Rng, SeedableRng};

const TRIALS: usize = 4000;

/// The largest miss rate accepted for a bound at level α over `TRIALS` trials: α plus
/// three binomial standard errors.
fn allowed(alpha: f64) -> f64 {
    alpha + 3.0 * (alpha * (1.0 - alpha) / TRIALS as f64).sqrt()
}

#[test]
fn paired_bounds_on_delta_cover_at_least_one_minus_alpha() {
    let mut rng = rand::rngs::StdRng::seed_from_u64(20261202);
    let alpha = 0.05;
    // (n, p_r, p_s): rare and common disagreement, equal and unequal models, an
    // almost-empty discordant set.
    let cases = [
        (500u64, 0.02, 0.05),
        (500, 0.05, 0.05),
        (2000, 0.10, 0.06),
        (300, 0.004, 0.002),
        (1000, 0.30, 0.28),
    ];
    for (n, p_r, p_s) in cases {
        let delta = p_r - p_s;
        let (mut above, mut below) = (0usize, 0usize);
        for _ in 0..TRIALS {
            let (mut r, mut s) = (0u64, 0u64);
            for _ in 0..n {
                let u: f64 = rng.gen();
                if u < p_r {
                    r += 1;
                } else if u < p_r + p_s {
                    s += 1;
                }
            }
            let bounds = paired_bounds(r, s, n, alpha);
            above += usize::from(delta > bounds.delta_hi);
            below += usize::from(delta < bounds.delta_lo);
        }
        let (upper_miss, lower_miss) = (above as f64 / TRIALS as f64, below as f64 / TRIALS as f64);
        println!(
            "paired n={n} p_r={p_r} p_s={p_s}: Δ above the upper bound {upper_miss:.4}, below the lower bound {lower_miss:.4} (α = {alpha})"
        );
        assert!(
            upper_miss <= allowed(alpha),
            "upper bound missed {upper_miss}"
        );
        assert!(
            lower_miss <= allowed(alpha),
            "lower bound missed {lower_miss}"
        );
    }
}

#[test]
fn unpaired_bounds_on_delta_cover_whatever_the_dependence() {
    let mut rng = rand::rngs::StdRng::seed_from_u64(7);
    let alpha = 0.05;
    let cases = [
        (400u64, 600u64, 0.05, 0.08),
        (1000, 1000, 0.12, 0.12),
        (250, 2000, 0.01, 0.03),
    ];
    for (n_run, n_base, e_run, e_base) in cases {
        let delta = e_run - e_base;
        for shared in [false, true] {
            let (mut above, mut below) = (0usize, 0usize);
            for _ in 0..TRIALS {
                let (k_run, k_base) = if shared {
                    // One set of n_run examples, the errors strongly dependent: the
                    // same uniform decides both.
                    let mut k = (0u64, 0u64);
                    for _ in 0..n_run {
                        let u: f64 = rng.gen();
                        k.0 += u64::from(u < e_run);
                        k.1 += u64::from(u < e_base);
                    }
                    k
                } else {
                    (
                        (0..n_run).filter(|_| rng.gen::<f64>() < e_run).count() as u64,
                        (0..n_base).filter(|_| rng.gen::<f64>() < e_base).count() as u64,
                    )
                };
                let n_b = if shared { n_run } else { n_base };
                let (lo, hi) = unpaired_binomial(k_run, n_run, k_base, n_b, alpha);
                above += usize::from(delta > hi);
                below += usize::from(delta < lo);
            }
            let (upper_miss, lower_miss) =
                (above as f64 / TRIALS as f64, below as f64 / TRIALS as f64);
            println!(
                "unpaired n={n_run}/{n_base} E={e_run}/{e_base} shared={shared}: above {upper_miss:.4}, below {lower_miss:.4} (α = {alpha})"
            );
            assert!(
                upper_miss <= allowed(alpha),
                "upper bound missed {upper_miss}"
            );
            assert!(
                lower_miss <= allowed(alpha),
                "lower bound missed {lower_miss}"
            );
        }
    }
}
