//! Bounds on the difference of two classifiers' true errors, Δ = E_run − E_base, and
//! the exact McNemar test (SPEC §10).
//!
//! **Paired** (both classifiers scored on the same n held-out examples): of the
//! examples, r are wrong only for the run, s only for the baseline, and m = r + s are
//! discordant. With q the probability that an example is discordant and θ the
//! probability that a discordant example is one the run gets wrong,
//! `Δ = P(run wrong) − P(base wrong) = q·θ − q·(1 − θ) = q·(2θ − 1)`. Given m, r is
//! Bin(m, θ); m is Bin(n, q). Clopper–Pearson bounds (Clopper & Pearson 1934,
//! Biometrika 26(4)) on θ from r of m and on q from m of n, each at level α/2, give
//! a box that holds both with probability ≥ 1 − α by the union bound (the bound on θ
//! holds conditionally on m, hence unconditionally); Δ's bounds are the extremes of
//! the bilinear `q(2θ − 1)` over the box, found at its corners. With m = 0 the bound
//! on θ is the whole [0, 1] and Δ's bounds are ±q_hi.
//!
//! The one-sided use (a claim `Δ ≤ v` is certified when the upper end is ≤ v) takes
//! one side of θ's bounds and, depending on the sign of `2θ_hi − 1`, one side of q's;
//! which side of q is chosen by the data, so strictly the level is α/2 plus the larger
//! of q's two one-sided levels, α/2: α in all (the Monte Carlo coverage test in
//! `tests/it/comparison_coverage.rs` measures the actual rates).
//!
//! **McNemar** (Q. McNemar 1947, Psychometrika 12(2), 153–157, in its exact
//! conditional form): under H₀ "equally accurate", r given m is Bin(m, ½); the
//! one-sided p-value for "the run is more accurate" is `P[Bin(m, ½) ≤ r]`.
//!
//! **Unpaired** (different held-out sets, or no discordant counts): Δ ≤ U_run − L_base
//! and Δ ≥ L_run − U_base with each one-sided bound at α/2; a union bound, valid
//! whatever the dependence between the two sets. The bounds come from the caller
//! (binomial or Hoeffding, as the audit's `--holdout-bound` says).

use super::beta::incomplete_beta;
use super::binomial;

/// Bounds on Δ from a paired comparison, and the box they come from.
#[derive(Clone, Copy, Debug, PartialEq)]
pub struct PairedBounds {
    pub theta_lo: f64,
    pub theta_hi: f64,
    pub q_lo: f64,
    pub q_hi: f64,
    pub delta_lo: f64,
    pub delta_hi: f64,
}

/// Δ's bounds from r run-only and s baseline-only errors among n paired examples, at
/// total level `alpha` (α/2 on θ, α/2 on q, each one-sided).
///
/// Domain: n ≥ 1, r + s ≤ n, 0 < alpha < 1. Accuracy: each bound is a
/// Clopper–Pearson bound ([`binomial::upper_bound`], 1.6e-14 relative); against 230
/// mpmath values at 50 digits (`fixtures/reference/paired_bounds.csv`: m = 0, r = 0,
/// r = m, α down to 1e-12, n up to 10⁷) the worst relative error is printed by
/// `tests/it/theory_reference.rs`, which asks 1e-10. Source: module docs.
pub fn paired_bounds(r: u64, s: u64, n: u64, alpha: f64) -> PairedBounds {
    let m = r.saturating_add(s).min(n);
    let half = 0.5 * alpha;
    let (theta_lo, theta_hi) = (
        binomial::lower_bound(r, m, half),
        binomial::upper_bound(r, m, half),
    );
    let (q_lo, q_hi) = (
        binomial::lower_bound(m, n, half),
        binomial::upper_bound(m, n, half),
    );
    let corners = [
        q_lo * (2.0 * theta_lo - 1.0),
        q_lo * (2.0 * theta_hi - 1.0),
        q_hi * (2.0 * theta_lo - 1.0),
        q_hi * (2.0 * theta_hi - 1.0),
    ];
    let delta_lo = corners.iter().copied().fold(f64::INFINITY, f64::min);
    let delta_hi = corners.iter().copied().fold(f64::NEG_INFINITY, f64::max);
    PairedBounds {
        theta_lo,
        theta_hi,
        q_lo,
        q_hi,
        delta_lo,
        delta_hi,
    }
}

/// The exact one-sided McNemar p-value `P[Bin(m, ½) ≤ r]` (1 when m = 0).
///
/// Domain: r ≤ m. Accuracy: the incomplete beta ratio `I_{1/2}(m − r, r + 1)`
/// (DiDonato & Morris 1992), checked against mpmath at 50 digits on the cases of
/// `fixtures/reference/paired_bounds.csv` (worst relative error printed by
/// `tests/it/theory_reference.rs`, which asks 1e-10 above 1e-300). Source: McNemar
/// 1947, exact conditional form.
pub fn mcnemar_p(r: u64, m: u64) -> f64 {
    if m == 0 || r >= m {
        return 1.0;
    }
    // P[Bin(m, ½) ≤ r] = 1 − I_{1/2}(r + 1, m − r) = I_{1/2}(m − r, r + 1).
    incomplete_beta((m - r) as f64, r as f64 + 1.0, 0.5, 0.5).0
}

/// Δ's bounds from two one-sided bounds of each run at level α/2 (the caller's
/// method): `(L_run − U_base, U_run − L_base)`.
pub fn unpaired_bounds(
    run_lower: f64,
    run_upper: f64,
    base_lower: f64,
    base_upper: f64,
) -> (f64, f64) {
    (run_lower - base_upper, run_upper - base_lower)
}
