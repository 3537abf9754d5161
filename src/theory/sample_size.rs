//! Held-out sample sizes needed to certify a claimed error rate.
//!
//! - Binomial: the smallest n at which a held-out set with the same observed
//!   error rate would certify the claim with the exact (Clopper & Pearson
//!   1934; Langford 2005, JMLR 6) upper bound: `upper_bound(k(n), n, α) ≤ c`
//!   with k(n) = ⌈rate·n⌉ errors.
//! - Hoeffding (Hoeffding 1963, JASA 58): `⌈ln(1/α) / (2(c − rate)²)⌉`, the
//!   smallest n with `rate + sqrt(ln(1/α)/(2n)) ≤ c`.

use super::beta::ln_incomplete_beta;
use super::binomial::{upper_bound, upper_bound_real};

/// Relative slack within which `rate·n` counts as the integer it rounds to.
/// The double nearest a logged rate, times n, is off by at most about one
/// unit in the last place (2.2e-16 relative); 1e-15 absorbs that and nothing
/// a logged rate can mean. (It was 1e-9 until a sweep log showed that at
/// k ≈ 1.6·10⁷ that slack is 0.016 of a count, enough to count a genuine
/// fraction as the integer below.)
const INTEGER_SLACK: f64 = 1e-15;

/// Errors counted at n held-out examples with the given error rate:
/// ⌈rate·n⌉, where a product within a relative 1e-15 of an integer is taken
/// as that integer, so that 0.03·100 counts 3 errors, not 4, despite rounding.
pub fn errors_at(rate: f64, n: u64) -> u64 {
    let product = rate.max(0.0) * n as f64;
    let nearest = product.round();
    let k = if (product - nearest).abs() <= INTEGER_SLACK * nearest.max(1.0) {
        nearest
    } else {
        product.ceil()
    };
    (k as u64).min(n)
}

/// Largest n' ≥ from with errors_at(rate, n') == errors_at(rate, from) (the
/// end of from's stretch of equal k), by bisection over one stretch's length:
/// errors_at is non-decreasing in n and a stretch holds at most ⌈1/rate⌉ + 1
/// values of n (rate > 0).
fn last_n_with_same_errors(rate: f64, from: u64) -> u64 {
    let k = errors_at(rate, from);
    let stretch = (1.0 / rate).ceil().min(SEARCH_LIMIT as f64) as u64;
    let to = from
        .saturating_add(stretch)
        .saturating_add(2)
        .min(SEARCH_LIMIT);
    let (mut same, mut more) = (from, to);
    if errors_at(rate, to) == k {
        return to;
    }
    while more - same > 1 {
        let mid = same + (more - same) / 2;
        if errors_at(rate, mid) == k {
            same = mid;
        } else {
            more = mid;
        }
    }
    same
}

/// Stretches of equal k the exact search walks at most (about 0.1 s).
const WALK_BUDGET: f64 = 65_536.0;

/// 2⁵³: beyond it not every integer is a double, so k(n) cannot be told
/// apart for neighbouring n.
const EXACT_INTEGERS: u64 = 1 << 53;

/// Upper end of the search range; beyond it the function returns None.
const SEARCH_LIMIT: u64 = 1 << 62;

/// Smallest n with `upper_bound(errors_at(rate, n), n, alpha) ≤ claim_error`;
/// None if rate ≥ claim_error (or no n below 2⁶² works).
///
/// The function n ↦ U(⌈rate·n⌉, n) is a sawtooth: it falls while k stays
/// fixed and jumps up when k increases, so plain bisection on n is wrong.
/// The search is exact:
/// 1. Envelopes. With the continuous extension U(k, n) (real k), monotone in
///    n at a fixed rate, ψ(n) = U(rate·n, n) ≤ U(⌈rate·n⌉, n) (less the
///    slack of errors_at). Bisection gives n_lo, the smallest n with
///    ψ(n) ≤ c: nothing below it can certify. At the last n of a stretch of
///    equal k, k < rate·(n + 1), so U there is at most ψ⁺(n) = U(rate·n +
///    rate, n); bisection gives n_hi, the smallest n with ψ⁺(n) ≤ c: the
///    stretch that reaches past n_hi certifies at its end.
/// 2. From n_lo on, the integers are grouped by their k; within one group U
///    decreases in n, so the group's last n decides whether the group
///    contains a certifying n, and bisection inside the first such group gives
///    the smallest one. The window holds about rate·(n_hi − n_lo) groups,
///    O(rate·√n).
///
/// When the window holds more than 65,536 stretches or reaches 2⁵³ (claims
/// within ~1e-8 of the observed rate: sizes of 10¹³ and more), the result is
/// instead the smallest n from which every size certifies (see below).
///
/// rate = 0 has the closed form n = ⌈ln α / ln(1 − c)⌉ (k = 0 bound
/// 1 − α^(1/n) ≤ c), checked against [`upper_bound`] at n and n − 1.
pub fn holdout_needed_binomial(rate: f64, claim_error: f64, alpha: f64) -> Option<u64> {
    if invalid(rate, claim_error, alpha) {
        return None;
    }
    let rate = rate.max(0.0);
    if claim_error >= 1.0 {
        return Some(1);
    }
    let certifies = |n: u64| {
        let k = errors_at(rate, n);
        bound_at_most(k as f64, n as f64, alpha, claim_error, || {
            upper_bound(k, n, alpha)
        })
    };
    if rate == 0.0 {
        let estimate = (alpha.ln() / (-claim_error).ln_1p()).ceil();
        let mut n = if estimate.is_finite() && estimate >= 1.0 {
            (estimate as u64).min(SEARCH_LIMIT)
        } else {
            1
        };
        while n > 1 && certifies(n - 1) {
            n -= 1;
        }
        while !certifies(n) {
            if n >= SEARCH_LIMIT {
                return None;
            }
            n += 1;
        }
        return Some(n);
    }
    let envelope = |k: f64, n: u64| {
        let n = n as f64;
        bound_at_most(k, n, alpha, claim_error, || upper_bound_real(k, n, alpha))
    };
    // errors_at(n) may round a product down by its slack, so the low envelope
    // starts that far below rate·n: it must never exceed the bound at the
    // counted errors, or the search would skip a certifying n.
    let envelope_low = |n: u64| {
        let product = rate * n as f64;
        envelope(
            (product - 2.0 * INTEGER_SLACK * product.max(1.0)).max(0.0),
            n,
        )
    };
    // At the end n_e of a stretch, k < rate·(n_e + 1) (plus the slack): the
    // bound there is at most U(rate·n_e + rate, n_e), a far tighter ceiling
    // than rate·n + 1 when the rate is small.
    let envelope_at_stretch_end = |n: u64| {
        let product = rate * n as f64;
        envelope(product + rate + 2.0 * INTEGER_SLACK * product.max(1.0), n)
    };
    let n_lo = smallest_passing(1, envelope_low)?;
    let n_hi = smallest_passing(n_lo, envelope_at_stretch_end).unwrap_or(SEARCH_LIMIT);
    // About rate·(n_hi − n_lo) stretches lie between the envelopes. When a claim
    // sits within ~1e-8 of the observed rate there are millions (minutes of
    // work), and beyond 2⁵³ a double no longer tells n from n + 1: then the
    // answer is the smallest n from which every size certifies (each n ≥ it has
    // U(⌈rate·n⌉, n) ≤ U(rate·n + 1, n) ≤ c): sufficient, and above the minimum
    // by less than the window, a relative ~1e-7 at such sizes.
    let stretches = rate * n_hi.saturating_sub(n_lo) as f64;
    if stretches > WALK_BUDGET || n_hi > EXACT_INTEGERS {
        let every_n = |n: u64| {
            let product = rate * n as f64;
            envelope(product + 1.0 + 2.0 * INTEGER_SLACK * product.max(1.0), n)
        };
        return smallest_passing(n_lo, every_n);
    }
    let mut n = n_lo;
    while n <= n_hi {
        let group_end = last_n_with_same_errors(rate, n);
        if certifies(group_end) {
            // U(k, ·) decreases on [n, group_end]: bisect for the first pass.
            let (mut failing, mut passing) = (n, group_end);
            if certifies(n) {
                return Some(n);
            }
            while passing - failing > 1 {
                let mid = failing + (passing - failing) / 2;
                if certifies(mid) {
                    passing = mid;
                } else {
                    failing = mid;
                }
            }
            return Some(passing);
        }
        n = group_end + 1;
    }
    None
}

/// Whether the exact upper bound U(k, n, α) is at most `claim` (k real, as in
/// [`upper_bound_real`]), with one evaluation of the binomial tail instead of an
/// inversion: the tail P[Bin(n, p) ≤ k] = 1 − I_p(k + 1, n − k) falls as p grows,
/// so U ≤ c exactly when the tail at p = c is at most α (the duality that defines
/// the Clopper & Pearson 1934 bound). Where the tail is within a relative 1e-8 of α
/// the two sides are too close to call in floating point, and `exact` (the
/// inversion) decides, so the answer always equals `exact() ≤ claim`: the tail and
/// the inversion are each accurate to far better than 1e-8 relative.
fn bound_at_most(k: f64, n: f64, alpha: f64, claim: f64, exact: impl FnOnce() -> f64) -> bool {
    let simple = k > 0.0
        && n - k >= 1.0
        && alpha > f64::MIN_POSITIVE
        && alpha < 1.0
        && claim > 0.0
        && claim < 1.0;
    if !simple {
        return exact() <= claim;
    }
    let ln_tail = ln_incomplete_beta(k + 1.0, n - k, claim, 1.0 - claim).ln_upper;
    let margin = ln_tail - alpha.ln();
    if margin.abs() <= 1e-8 || margin.is_nan() {
        exact() <= claim
    } else {
        margin < 0.0
    }
}

/// True when no sample size is defined: rate ≥ claim (nothing to certify),
/// or an argument is NaN or alpha ≤ 0.
fn invalid(rate: f64, claim_error: f64, alpha: f64) -> bool {
    rate.is_nan() || claim_error.is_nan() || alpha.is_nan() || rate >= claim_error || alpha <= 0.0
}

/// Smallest n ≥ start with `passes(n)`, for a predicate that is monotone
/// (false then true): exponential bracketing, then bisection.
fn smallest_passing(start: u64, passes: impl Fn(u64) -> bool) -> Option<u64> {
    if passes(start) {
        return Some(start);
    }
    let mut failing = start;
    let mut passing = start.max(1);
    loop {
        if passing >= SEARCH_LIMIT {
            return None;
        }
        let next = passing.saturating_mul(2).min(SEARCH_LIMIT);
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

/// `⌈ln(1/alpha) / (2(claim_error − rate)²)⌉` (at least 1); None if
/// rate ≥ claim_error.
pub fn holdout_needed_hoeffding(rate: f64, claim_error: f64, alpha: f64) -> Option<u64> {
    if invalid(rate, claim_error, alpha) {
        return None;
    }
    let gap = claim_error - rate;
    let n = ((1.0 / alpha).ln().max(0.0) / (2.0 * gap * gap)).ceil();
    // `as` saturates at u64::MAX for huge or infinite n.
    Some((n as u64).max(1))
}
