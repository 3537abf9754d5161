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

/// Paired counts scaled from n to `size` examples at the same discordant rates,
/// rounded against a claim `Δ ≤ t`: the run's up, the baseline's down,
/// `(⌈r·size/n⌉, ⌊s·size/n⌋)`, in exact integer arithmetic.
///
/// Domain: n ≥ 1, r + s ≤ n. Exact.
pub fn paired_counts_at(r: u64, s: u64, n: u64, size: u64) -> (u64, u64) {
    let (r, s, n, size) = (r as u128, s as u128, n as u128, size as u128);
    let r_size = (r * size).div_ceil(n);
    let s_size = s * size / n;
    (r_size as u64, s_size as u64)
}

/// Whether `size` paired examples at the discordant rates of r and s of n certify
/// `Δ ≤ threshold` at level `alpha`, with the counts of [`paired_counts_at`].
pub fn paired_size_certifies(
    r: u64,
    s: u64,
    n: u64,
    size: u64,
    alpha: f64,
    threshold: f64,
) -> bool {
    let (r_size, s_size) = paired_counts_at(r, s, n, size);
    r_size + s_size <= size && paired_bounds(r_size, s_size, size, alpha).delta_hi <= threshold
}

/// Stretches of equal counts the exact walk of [`paired_holdout_needed`] visits at
/// most, forward and again backward (0.2–0.4 s each way, measured on the 2-core
/// build machine: four Clopper–Pearson inversions per stretch).
const PAIRED_WALK_BUDGET: u64 = 1 << 16;

/// Sizes beyond this are not searched (`None`).
const PAIRED_SIZE_LIMIT: u64 = 1 << 40;

/// The smallest size above n at which paired examples at the same discordant rates
/// (counts of [`paired_counts_at`]) certify `Δ ≤ threshold` at level `alpha`: the
/// held-out examples a paired `beats` / `not_worse` claim needs (SPEC §10).
///
/// The map size ↦ Δ_hi is a sawtooth, not monotone: it moves smoothly while both
/// rounded counts stay fixed and jumps when either changes, so a bisection over
/// sizes can land past the smallest certifying size. The search is exact instead:
/// the sizes are walked stretch by stretch (a stretch: the sizes with the same two
/// counts, ending where `⌈r·size/n⌉` or `⌊s·size/n⌋` next changes). Within a
/// stretch θ's bounds are fixed (they depend on the counts only) and q's
/// Clopper–Pearson bounds at m fixed both fall as the size grows, so Δ_hi =
/// q_hi·(2θ_hi − 1) falls when 2θ_hi > 1 (the stretch's last size decides, then a
/// bisection inside it finds the first) and Δ_hi = q_lo·(2θ_hi − 1) rises (toward
/// 0) otherwise (its first size decides).
///
/// When no stretch among the first 65,536 certifies (the answer lies more than
/// 65,536 count changes above n: about 65,536 / (discordant rate) examples), a
/// certifying size is found by doubling and bisection and the 65,536 stretches below
/// it are walked back for a smaller one: exact whenever the walk back reaches the
/// stretches walked forward, and otherwise unless a size more than 65,536 count
/// changes below the crossing certifies (the sawtooth's dips lie within a few count
/// changes of it).
///
/// Domain: n ≥ 1, r + s ≤ n, 0 < alpha < 1. None when the observed difference
/// (r − s)/n is not below the threshold (no size certifies: Δ_hi tends to it from
/// above) or no size up to 2⁴⁰ certifies. Checked against a scan of every size in
/// `brute_force_paired_sizes` below.
pub fn paired_holdout_needed(r: u64, s: u64, n: u64, alpha: f64, threshold: f64) -> Option<u64> {
    if n == 0 || r + s > n || (r as f64 - s as f64) / n as f64 >= threshold {
        return None;
    }
    let certifies = |size: u64| paired_size_certifies(r, s, n, size, alpha, threshold);
    let mut start = n + 1;
    for _ in 0..PAIRED_WALK_BUDGET {
        if start > PAIRED_SIZE_LIMIT {
            return None;
        }
        let (r_size, s_size) = paired_counts_at(r, s, n, start);
        let end = paired_stretch_end(r, s, n, r_size, s_size).min(PAIRED_SIZE_LIMIT);
        if let Some(first) = first_in_stretch(start, end, (r_size, s_size), alpha, &certifies) {
            return Some(first);
        }
        start = end + 1;
    }
    // Beyond the walk's budget: a certifying size by doubling and bisection, then the
    // stretches just below it walked back, where the dips of the sawtooth lie (they
    // sit where Δ_hi crosses the threshold, a few count changes wide).
    let walked = start - 1;
    let mut failing = walked;
    let mut passing = start;
    while !certifies(passing) {
        failing = passing;
        passing = passing.saturating_mul(2);
        if passing > PAIRED_SIZE_LIMIT {
            return None;
        }
    }
    let mut best = first_passing_in(failing + 1, passing, &certifies);
    let mut end = best - 1;
    for _ in 0..PAIRED_WALK_BUDGET {
        if end <= walked {
            break;
        }
        let counts = paired_counts_at(r, s, n, end);
        let begin = paired_stretch_start(r, s, n, counts).max(walked + 1);
        if let Some(first) = first_in_stretch(begin, end, counts, alpha, &certifies) {
            best = first;
        }
        end = begin - 1;
    }
    Some(best)
}

/// The first size of the stretch [start, end] (the sizes with the paired counts
/// `counts`) that certifies, if any: the stretch's end decides when Δ_hi falls through
/// it (2θ_hi > 1), its first size otherwise (see [`paired_holdout_needed`]).
fn first_in_stretch(
    start: u64,
    end: u64,
    (r_size, s_size): (u64, u64),
    alpha: f64,
    certifies: &dyn Fn(u64) -> bool,
) -> Option<u64> {
    // Sizes below m cannot hold the m discordant examples.
    let first = start.max(r_size + s_size);
    if first > end {
        return None;
    }
    let theta_hi = binomial::upper_bound(r_size, r_size + s_size, 0.5 * alpha);
    if 2.0 * theta_hi - 1.0 > 0.0 || r_size + s_size == 0 {
        certifies(end).then(|| first_passing_in(first, end, certifies))
    } else {
        certifies(first).then_some(first)
    }
}

/// The first size of the stretch holding counts (r_size, s_size): the smallest size
/// at which `⌈r·size/n⌉` reaches r_size and `⌊s·size/n⌋` reaches s_size.
fn paired_stretch_start(r: u64, s: u64, n: u64, (r_size, s_size): (u64, u64)) -> u64 {
    let (r, s, n) = (r as u128, s as u128, n as u128);
    // ⌈r·x/n⌉ ≥ r_size ⟺ r·x > (r_size − 1)·n ⟺ x ≥ ⌊(r_size − 1)·n / r⌋ + 1.
    let run_start = match (r_size as u128).checked_sub(1) {
        Some(below) if r > 0 => below * n / r + 1,
        _ => 0,
    };
    // ⌊s·x/n⌋ ≥ s_size ⟺ s·x ≥ s_size·n ⟺ x ≥ ⌈s_size·n / s⌉.
    let base_start = if s > 0 {
        (s_size as u128 * n).div_ceil(s)
    } else {
        0
    };
    run_start.max(base_start).min(u64::MAX as u128) as u64
}

/// The last size of the stretch holding counts (r_size, s_size): one less than the
/// first size at which `⌈r·size/n⌉` exceeds r_size or `⌊s·size/n⌋` exceeds s_size
/// (u64::MAX when neither count ever changes, r = s = 0).
fn paired_stretch_end(r: u64, s: u64, n: u64, r_size: u64, s_size: u64) -> u64 {
    let (r, s, n) = (r as u128, s as u128, n as u128);
    // ⌈r·x/n⌉ ≤ r_size ⟺ r·x ≤ r_size·n ⟺ x ≤ ⌊r_size·n / r⌋.
    let run_end = (r_size as u128 * n).checked_div(r).unwrap_or(u128::MAX);
    // ⌊s·x/n⌋ ≤ s_size ⟺ s·x < (s_size + 1)·n ⟺ x ≤ ⌈(s_size + 1)·n / s⌉ − 1.
    let base_end = if s == 0 {
        u128::MAX
    } else {
        ((s_size as u128 + 1) * n).div_ceil(s) - 1
    };
    run_end.min(base_end).min(u64::MAX as u128) as u64
}

/// The first size in [from, to] that certifies, given that `to` does and that the
/// condition is monotone on the range (bisection).
fn first_passing_in(from: u64, to: u64, certifies: &dyn Fn(u64) -> bool) -> u64 {
    if certifies(from) {
        return from;
    }
    let (mut failing, mut passing) = (from, to);
    while passing - failing > 1 {
        let middle = failing + (passing - failing) / 2;
        if certifies(middle) {
            passing = middle;
        } else {
            failing = middle;
        }
    }
    passing
}

#[cfg(test)]
mod tests {
    use super::*;

    /// The smallest certifying size above n by trying every size in turn.
    fn scan_every_size(r: u64, s: u64, n: u64, alpha: f64, threshold: f64) -> Option<u64> {
        (n + 1..=n * 200).find(|&size| paired_size_certifies(r, s, n, size, alpha, threshold))
    }

    #[test]
    fn brute_force_paired_sizes() {
        // (r, s, n, α, threshold): `beats` claims (threshold −v) and `not_worse`
        // claims (threshold v), discordant rates from 1 % to 30 %.
        let settings: [(u64, u64, u64, f64, f64); 8] = [
            (20, 45, 1000, 0.05, -0.01),
            (7, 19, 600, 0.05, 0.0),
            (31, 57, 2500, 0.01, -0.005),
            (3, 11, 400, 0.025, -0.002),
            (120, 180, 1000, 0.05, -0.03),
            (40, 38, 1000, 0.05, 0.03),
            (5, 5, 300, 0.1, 0.04),
            (0, 6, 500, 0.05, -0.004),
        ];
        for (r, s, n, alpha, threshold) in settings {
            let expected = scan_every_size(r, s, n, alpha, threshold);
            assert!(expected.is_some(), "{r} {s} {n}: widen the scan");
            assert_eq!(
                paired_holdout_needed(r, s, n, alpha, threshold),
                expected,
                "r = {r}, s = {s}, n = {n}, α = {alpha}, threshold = {threshold}"
            );
        }
    }

    /// Discordant on half the examples: about 134,000 stretches lie below the answer,
    /// beyond the forward walk's 65,536, so the walk back from the bisection decides.
    #[test]
    fn beyond_the_walk_budget_the_walk_back_finds_the_smallest() {
        let (r, s, n, alpha, threshold) = (200, 300, 1000, 0.05, -0.097);
        let got = paired_holdout_needed(r, s, n, alpha, threshold);
        assert_eq!(got, Some(267_630));
        assert_eq!(
            (n + 1..=267_630).find(|&size| paired_size_certifies(r, s, n, size, alpha, threshold)),
            got
        );
    }

    #[test]
    fn counts_scale_exactly_and_against_the_claim() {
        assert_eq!(paired_counts_at(3, 7, 100, 100), (3, 7));
        assert_eq!(paired_counts_at(3, 7, 100, 150), (5, 10));
        assert_eq!(paired_counts_at(3, 7, 100, 101), (4, 7));
        // r·size/n an integer in exact arithmetic stays that integer.
        assert_eq!(paired_counts_at(29, 0, 100, 1000), (290, 0));
    }

    #[test]
    fn no_size_when_the_observed_difference_misses_the_claim() {
        assert_eq!(paired_holdout_needed(30, 20, 1000, 0.05, -0.01), None);
        assert_eq!(paired_holdout_needed(20, 30, 1000, 0.05, -0.01), None);
    }
}
