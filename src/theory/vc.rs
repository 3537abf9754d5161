//! The VC generalization allowance Ω(N) and the training-set size it needs.
//!
//! Source: V. N. Vapnik & A. Ya. Chervonenkis, "On the uniform convergence of
//! relative frequencies of events to their probabilities", Theory of
//! Probability and its Applications 16(2), 1971, 264–280, in the form
//! E_out ≤ E_in + Ω with probability ≥ 1 − δ, where
//! `Ω(N) = sqrt((8/N) · ln(4·m_H(2N)/δ))` (SPEC §4), with m_H from
//! [`super::growth`].

use super::growth::Family;

/// Ω(N) = sqrt((8/N)·ln(4·m_H(2N)/δ)), computed from `ln_growth(2N)` so that
/// N = 10⁹ with d_VC = 10⁷ costs microseconds. Not clipped (may exceed 1);
/// +∞ for N = 0 or δ ≤ 0.
///
/// Domain: N ≥ 1 (up to about 9·10¹⁸), 0 < δ < 1. Accuracy: worst relative error
/// 1.7e-16 against mpmath at 50 digits (`fixtures/reference/allowances.csv`; the
/// test asks 1e-12). Source: Vapnik & Chervonenkis 1971 (module docs).
pub fn allowance(family: &Family, train_n: u64, delta: f64) -> f64 {
    if train_n == 0 || delta.is_nan() || delta <= 0.0 {
        return f64::INFINITY;
    }
    let ln_growth = family.ln_growth(train_n.saturating_mul(2));
    let ln_argument = 4.0_f64.ln() + ln_growth - delta.ln();
    (8.0 / train_n as f64 * ln_argument.max(0.0)).sqrt()
}

/// Smallest N ≥ 1 with `allowance(N) ≤ tolerance`; None when no N up to
/// u64::MAX/2 reaches it (or tolerance ≤ 0).
///
/// Search: exponential bracketing (N = N₀, 2N₀, 4N₀, …) until Ω ≤ tolerance,
/// then bisection between the last failing and the first passing N. This
/// relies on Ω being non-increasing in N on the searched range:
/// Ω² = 8(c + g(2N))/N with c = ln(4/δ) > ln 4 and g = ln m_H, whose
/// logarithmic derivative 2N·g'(2N) stays below c + g(2N) for every family
/// here (property-tested in tests/it/theory_properties.rs for N ≥ d_VC).
///
/// Start N₀: for a family with VC dimension (or bound) d and tolerance
/// below sqrt(8 ln 2) ≈ 2.355, no N < d can qualify. For 1 ≤ N < d every
/// family here has m_H(2N) ≥ 2^(N+1): the Sauer and Cover sums contain every
/// C(2N, i) (resp. C(2N − 1, i)) with i ≤ N, i.e. at least half of all
/// dichotomies, and the finite class has min(M, 2^(2N)) ≥ 2^min(d, 2N) with
/// min(d, 2N) ≥ N + 1. Hence Ω² ≥ (8/N)·(ln(4/δ) + (N + 1) ln 2) > 8 ln 2.
/// The search therefore starts at N₀ = d in that case, which keeps it on the
/// Domain: 0 < tolerance, 0 < δ < 1. Result: None when no N up to u64::MAX / 2
/// reaches the tolerance (a family without a finite growth bound). Accuracy: exact;
/// equal to a bisection in mpmath on every case of
/// `fixtures/reference/sample_sizes.csv`.
/// range where Ω is monotone.
pub fn train_needed(family: &Family, tolerance: f64, delta: f64) -> Option<u64> {
    if tolerance.is_nan() || delta.is_nan() || tolerance <= 0.0 || delta <= 0.0 {
        return None;
    }
    let limit = u64::MAX / 2;
    let start = match family.vc_dim() {
        Some(d) if tolerance < (8.0 * std::f64::consts::LN_2).sqrt() => d.clamp(1, limit),
        _ => 1,
    };
    let passes = |n: u64| allowance(family, n, delta) <= tolerance;
    if passes(start) {
        return Some(start);
    }
    // Exponential bracketing: `failing` fails, `passing` passes.
    let mut failing = start;
    let mut passing = start;
    loop {
        if passing >= limit {
            return None;
        }
        let next = passing.saturating_mul(2).min(limit);
        if passes(next) {
            passing = next;
            break;
        }
        failing = next;
        passing = next;
    }
    while passing - failing > 1 {
        let mid = failing + (passing - failing) / 2;
        if passes(mid) {
            passing = mid;
        } else {
            failing = mid;
        }
    }
    Some(passing)
}
