//! Hoeffding bounds on a held-out error rate.
//!
//! Source: W. Hoeffding, "Probability inequalities for sums of bounded random
//! variables", Journal of the American Statistical Association 58(301), 1963,
//! 13–30, Theorem 1, for variables in [0, 1]:
//! P[ê − p ≥ w] ≤ exp(−2nw²). Solving exp(−2nw²) = δ gives the one-sided
//! width `sqrt(ln(1/δ) / (2n))`; a union over both sides gives
//! `sqrt(ln(2/δ) / (2n))`. δ is the per-run level, already divided by K.

/// `sqrt(ln(1/delta) / (2n))`; +∞ for n = 0, 0 for delta ≥ 1.
///
/// Domain: n ≥ 1, 0 < delta ≤ 1. Accuracy: a closed form, a few units in the last
/// place (its uses are checked against the pandas + scipy reference audit to 1e-9,
/// `tests/it/cli_audit.rs`). Source: Hoeffding 1963, Theorem 1 (module docs).
pub fn one_sided_width(n: u64, delta: f64) -> f64 {
    width(n, (1.0 / delta).ln())
}

/// `sqrt(ln(2/delta) / (2n))`; +∞ for n = 0.
///
/// Domain, accuracy and source as [`one_sided_width`].
pub fn two_sided_width(n: u64, delta: f64) -> f64 {
    width(n, (2.0 / delta).ln())
}

/// `[max(0, rate − w2), min(1, rate + w2)]` with w2 the two-sided width.
///
/// Domain: rate ∈ [0, 1]; otherwise as [`one_sided_width`].
pub fn interval(rate: f64, n: u64, delta: f64) -> (f64, f64) {
    let w = two_sided_width(n, delta);
    ((rate - w).clamp(0.0, 1.0), (rate + w).clamp(0.0, 1.0))
}

fn width(n: u64, ln_inverse_delta: f64) -> f64 {
    if n == 0 || ln_inverse_delta.is_nan() {
        return f64::INFINITY;
    }
    (ln_inverse_delta.max(0.0) / (2.0 * n as f64)).sqrt()
}
