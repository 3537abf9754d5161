//! How many models a held-out split can still be compared on (SPEC §11).
//!
//! Every bound on a run's error is taken at δ/K, K the models compared on its split,
//! so each comparison spends some of the split's power to certify. For a best run
//! with k errors on n examples and a claimed error c:
//!
//! - exact binomial (Clopper & Pearson 1934): the one-sided upper bound at level α is
//!   ≤ c exactly when `P[Bin(n, c) ≤ k] ≤ α` (the tail falls as p grows), so the
//!   claim stays certified for every K with δ/K ≥ P, i.e. up to
//!   `K_max = ⌊δ / P[Bin(n, c) ≤ k]⌋`;
//! - Hoeffding (1963): ê + sqrt(ln(K/δ)/(2n)) ≤ c exactly when
//!   `K ≤ δ·exp(2n(c − ê)²)`.
//!
//! Both are capped at [`CANDIDATES_CAP`] = 10¹²: beyond it the count says nothing a
//! reader can use, and doubles no longer hold it exactly.

use super::beta::ln_incomplete_beta;

/// The largest count of comparisons reported (10¹²).
pub const CANDIDATES_CAP: u64 = 1_000_000_000_000;

/// `ln P[Bin(n, c) ≤ k]` (0 when k ≥ n).
pub fn ln_binomial_cdf(k: u64, n: u64, c: f64) -> f64 {
    if k >= n {
        return 0.0;
    }
    if c <= 0.0 {
        return 0.0;
    }
    if c >= 1.0 {
        return f64::NEG_INFINITY;
    }
    // P[Bin(n, c) ≤ k] = I_{1−c}(n − k, k + 1) (the lower tail at x = 1 − c).
    ln_incomplete_beta((n - k) as f64, k as f64 + 1.0, 1.0 - c, c).ln_lower
}

/// The largest K ≥ 1 at which a run with k errors in n still certifies the claimed
/// error `claim` with the exact binomial bound at level δ/K; None when even K = 1
/// fails; at most [`CANDIDATES_CAP`].
///
/// Domain: k ≤ n, n ≥ 1, 0 < δ < 1, claim in [0, 1]. Accuracy: exact except where
/// δ/P lies within about 1e-13 relative of an integer; against mpmath at 50 digits on
/// the cases of `fixtures/reference/reuse.csv` (which leaves out ratios within 1e-9 of
/// an integer) every value is equal (`tests/it/splits.rs`). Source: module docs.
pub fn max_candidates_binomial(k: u64, n: u64, claim: f64, delta: f64) -> Option<u64> {
    if n == 0 || k >= n || delta.is_nan() || delta <= 0.0 {
        return None;
    }
    let ln_ratio = delta.ln() - ln_binomial_cdf(k, n, claim);
    capped_floor(ln_ratio)
}

/// Hoeffding's closed form: the largest K ≥ 1 with ê + sqrt(ln(K/δ)/(2n)) ≤ claim,
/// i.e. ⌊δ·exp(2n(claim − ê)²)⌋; None when ê ≥ claim or even K = 1 fails; at most
/// [`CANDIDATES_CAP`].
///
/// Domain: rate, claim in [0, 1], n ≥ 1, 0 < δ < 1. Accuracy: a closed form; equal to
/// mpmath's on every case of `fixtures/reference/reuse.csv`. Source: Hoeffding 1963.
pub fn max_candidates_hoeffding(rate: f64, n: u64, claim: f64, delta: f64) -> Option<u64> {
    if n == 0 || rate.is_nan() || claim.is_nan() || rate >= claim || delta.is_nan() || delta <= 0.0
    {
        return None;
    }
    let margin = claim - rate;
    capped_floor(delta.ln() + 2.0 * n as f64 * margin * margin)
}

/// ⌊e^x⌋ when it is at least 1, capped at [`CANDIDATES_CAP`].
fn capped_floor(ln_value: f64) -> Option<u64> {
    if ln_value.is_nan() || ln_value < 0.0 {
        return None;
    }
    if ln_value >= (CANDIDATES_CAP as f64).ln() {
        return Some(CANDIDATES_CAP);
    }
    let value = ln_value.exp().floor() as u64;
    (value >= 1).then_some(value.min(CANDIDATES_CAP))
}
