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
use super::special::normal_upper_deviate_approx;

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
///
/// Domain: rate ∈ [0, 1], any n. Exact by construction (common practice: the
/// decimal a rate was written as decides).
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
///    ψ(n) ≤ c: nothing below it can certify (found from a normal-approximation
///    guess by regula falsi, see [`smallest_passing`]). At the last n of a stretch of
///    equal k, k < rate·(n + 1), so U there is at most ψ⁺(n) = U(rate·n +
///    rate, n); so with n_hi, the smallest n with ψ⁺(n) ≤ c, the stretch
///    that reaches past n_hi certifies at its end.
/// 2. From n_lo on, the integers are grouped by their k; within one group U
///    decreases in n, so the group's last n decides whether the group
///    contains a certifying n, and bisection inside the first such group gives
///    the smallest one. The walk ends by the group holding n_hi; about
///    rate·(n_hi − n_lo) groups, O(rate·√n), lie in between.
///
/// When the window holds more than 65,536 stretches or reaches 2⁵³ (claims
/// within ~1e-8 of the observed rate: sizes of 10¹³ and more), the result is
/// instead the smallest n from which every size certifies (see below).
///
/// rate = 0 has the closed form n = ⌈ln α / ln(1 − c)⌉ (k = 0 bound
/// 1 − α^(1/n) ≤ c), checked against [`upper_bound`] at n and n − 1.
///
/// Domain: 0 ≤ rate < claim_error ≤ 1, 0 < alpha < 1; None when rate ≥ claim_error.
/// Accuracy: exact (equal to a scan of every n in Python with scipy and mpmath on
/// every case of `fixtures/reference/sample_sizes.csv`), except where stated above
/// for claims within about 1e-8 of the observed rate. Source: the bound of
/// [`upper_bound`] (Clopper & Pearson 1934).
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
        bound_probe(k as f64, n as f64, alpha, claim_error, || {
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
        while n > 1 && certifies(n - 1).passes {
            n -= 1;
        }
        while !certifies(n).passes {
            if n >= SEARCH_LIMIT {
                return None;
            }
            n += 1;
        }
        return Some(n);
    }
    let envelope = |k: f64, n: u64| {
        let n = n as f64;
        bound_probe(k, n, alpha, claim_error, || upper_bound_real(k, n, alpha))
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
    let n_lo = smallest_passing(1, normal_guess(rate, claim_error, alpha), envelope_low)?;
    // The exact walk covers at most 65,536 stretches past n_lo, and sizes a double
    // tells apart (up to 2⁵³). When a claim sits within ~1e-8 of the observed rate
    // the window between the envelopes is wider (minutes of work): then the answer
    // is the smallest n from which every size certifies (each n ≥ it has
    // U(⌈rate·n⌉, n) ≤ U(rate·n + 1, n) ≤ c): sufficient, and above the minimum by
    // less than the window, a relative ~1e-7 at such sizes. n_hi lies within the
    // walk's reach exactly when the stretch-end envelope passes at its far end, so
    // one test decides without finding n_hi itself.
    let walk_end = n_lo
        .saturating_add((WALK_BUDGET / rate).floor() as u64)
        .min(EXACT_INTEGERS);
    if n_lo > EXACT_INTEGERS || !envelope_at_stretch_end(walk_end).passes {
        let every_n = |n: u64| {
            let product = rate * n as f64;
            envelope(product + 1.0 + 2.0 * INTEGER_SLACK * product.max(1.0), n)
        };
        let near = n_lo.saturating_add(n_lo / 64 + 1);
        return smallest_passing(n_lo, near, every_n);
    }
    let mut n = n_lo;
    while n <= walk_end {
        let group_end = last_n_with_same_errors(rate, n);
        let at_end = certifies(group_end);
        if at_end.passes {
            // U(k, ·) decreases on [n, group_end]: narrow down to the first pass.
            let at_start = certifies(n);
            if at_start.passes {
                return Some(n);
            }
            return Some(narrow(
                (n, at_start.margin),
                (group_end, at_end.margin),
                certifies,
            ));
        }
        n = group_end + 1;
    }
    None
}

/// One evaluation of a test "n certifies", monotone in n (false, then true): the
/// decision, and a margin that falls smoothly through zero near the boundary
/// (ln tail − ln α; NaN when not available). The decision alone is the truth;
/// the margin only tells the search where to look next.
#[derive(Clone, Copy, Debug)]
struct Probe {
    passes: bool,
    margin: f64,
}

/// Whether the exact upper bound U(k, n, α) is at most `claim` (k real, as in
/// [`upper_bound_real`]), with one evaluation of the binomial tail instead of an
/// inversion: the tail P[Bin(n, p) ≤ k] = 1 − I_p(k + 1, n − k) falls as p grows,
/// so U ≤ c exactly when the tail at p = c is at most α (the duality that defines
/// the Clopper & Pearson 1934 bound). Where the tail is within a relative 1e-8 of α
/// the two sides are too close to call in floating point, and `exact` (the
/// inversion) decides, so the answer always equals `exact() ≤ claim`: the tail and
/// the inversion are each accurate to far better than 1e-8 relative.
fn bound_probe(k: f64, n: f64, alpha: f64, claim: f64, exact: impl FnOnce() -> f64) -> Probe {
    let simple = k > 0.0
        && n - k >= 1.0
        && alpha > f64::MIN_POSITIVE
        && alpha < 1.0
        && claim > 0.0
        && claim < 1.0;
    if !simple {
        return Probe {
            passes: exact() <= claim,
            margin: f64::NAN,
        };
    }
    let ln_tail = ln_incomplete_beta(k + 1.0, n - k, claim, 1.0 - claim).ln_upper;
    let margin = ln_tail - alpha.ln();
    let passes = if margin.abs() <= 1e-8 || margin.is_nan() {
        exact() <= claim
    } else {
        margin < 0.0
    };
    Probe { passes, margin }
}

/// True when no sample size is defined: rate ≥ claim (nothing to certify),
/// or an argument is NaN or alpha ≤ 0.
fn invalid(rate: f64, claim_error: f64, alpha: f64) -> bool {
    rate.is_nan() || claim_error.is_nan() || alpha.is_nan() || rate >= claim_error || alpha <= 0.0
}

/// Smallest n ≥ start that passes a monotone test (false then true); None if
/// nothing up to 2⁶² passes. `guess` is where the boundary probably lies: the
/// search brackets the boundary from there (doubling the distance from `start`
/// while sizes fail, halving it while they pass), then [`narrow`]s the bracket.
fn smallest_passing(start: u64, guess: u64, test: impl Fn(u64) -> Probe) -> Option<u64> {
    let start = start.min(SEARCH_LIMIT);
    let mut n = guess.clamp(start, SEARCH_LIMIT);
    let mut probe = test(n);
    let mut failing = None;
    while !probe.passes {
        failing = Some((n, probe.margin));
        if n >= SEARCH_LIMIT {
            return None;
        }
        n = start
            .saturating_add((n - start).max(1).saturating_mul(2))
            .min(SEARCH_LIMIT);
        probe = test(n);
    }
    let mut passing = (n, probe.margin);
    let failing = match failing {
        Some(failing) => failing,
        None => loop {
            if passing.0 == start {
                return Some(start);
            }
            let lower = start + (passing.0 - start) / 2;
            let probe = test(lower);
            if !probe.passes {
                break (lower, probe.margin);
            }
            passing = (lower, probe.margin);
        },
    };
    Some(narrow(failing, passing, test))
}

/// The smallest passing n in (failing, passing], for a monotone test, given the
/// (n, margin) of a failing and a passing end. Regula falsi with the Illinois
/// modification (M. Dowell and P. Jarratt, BIT 11, 1971, 168–174;
/// reference from memory) on the margins, rounded to
/// integers, with a bisection step whenever two steps have not halved the bracket.
/// The tail's logarithm is close to linear in n, so a few steps do what bisection
/// does in log₂(width).
fn narrow(mut failing: (u64, f64), mut passing: (u64, f64), test: impl Fn(u64) -> Probe) -> u64 {
    // Which end the last step moved: -1 the failing end, +1 the passing end.
    let mut last_moved = 0i8;
    let mut width_two_steps_ago = u64::MAX;
    let mut width_one_step_ago = u64::MAX;
    while passing.0 - failing.0 > 1 {
        let width = passing.0 - failing.0;
        let mut next = failing.0 + width / 2;
        let (m_fail, m_pass) = (failing.1, passing.1);
        let stalled = width.saturating_mul(2) > width_two_steps_ago;
        if !stalled && m_fail.is_finite() && m_pass.is_finite() && m_fail > m_pass {
            let t = m_fail / (m_fail - m_pass);
            if t > 0.0 && t < 1.0 {
                next = failing.0 + (t * width as f64).round() as u64;
            }
            next = next.clamp(failing.0 + 1, passing.0 - 1);
        }
        width_two_steps_ago = width_one_step_ago;
        width_one_step_ago = width;
        let probe = test(next);
        if probe.passes {
            passing = (next, probe.margin);
            if last_moved == 1 {
                failing.1 /= 2.0;
            }
            last_moved = 1;
        } else {
            failing = (next, probe.margin);
            if last_moved == -1 {
                passing.1 /= 2.0;
            }
            last_moved = -1;
        }
    }
    passing.0
}

/// Where the envelope search starts: the normal approximation to the binomial
/// tail, P[Bin(n, c) ≤ rate·n] ≈ Φ(−(c − rate)·√n / √(c(1 − c))) = α, solved for
/// n (common practice; only a starting point, the search is exact).
fn normal_guess(rate: f64, claim: f64, alpha: f64) -> u64 {
    let z = normal_upper_deviate_approx(alpha.min(0.5));
    let root_n = z * (claim * (1.0 - claim)).sqrt() / (claim - rate);
    let n = (root_n * root_n).ceil();
    // `as` saturates; NaN becomes 0, which the search lifts to its start.
    n as u64
}

/// `⌈ln(1/alpha) / (2(claim_error − rate)²)⌉` (at least 1); None if
/// rate ≥ claim_error.
///
/// Domain: rate, claim_error ∈ [0, 1], 0 < alpha < 1. Accuracy: exact against the
/// closed form at 50 digits in mpmath (`fixtures/reference/sample_sizes.csv`).
/// Source: Hoeffding 1963, solved for n.
pub fn holdout_needed_hoeffding(rate: f64, claim_error: f64, alpha: f64) -> Option<u64> {
    if invalid(rate, claim_error, alpha) {
        return None;
    }
    let gap = claim_error - rate;
    let n = ((1.0 / alpha).ln().max(0.0) / (2.0 * gap * gap)).ceil();
    // `as` saturates at u64::MAX for huge or infinite n.
    Some((n as u64).max(1))
}

#[cfg(test)]
mod tests {
    use super::*;
    use std::cell::Cell;

    /// The margins only steer the search: whatever they say (exact, rough,
    /// constant, pointing the wrong way, NaN), the answer is the boundary of the
    /// decisions, found in far fewer tests than a walk would need.
    #[test]
    fn the_search_finds_the_boundary_whatever_the_margins_say() {
        type Margin = fn(u64, u64) -> f64;
        let margins: [(&str, Margin); 6] = [
            ("linear", |n, t| t as f64 - n as f64),
            ("logarithmic", |n, t| (t as f64).ln() - (n as f64).ln()),
            ("cubic", |n, t| (t as f64 - n as f64).powi(3)),
            ("constant", |_, _| 1.0),
            ("reversed", |n, t| n as f64 - t as f64),
            ("missing", |_, _| f64::NAN),
        ];
        for threshold in [1u64, 2, 3, 17, 1000, 123_457, 1 << 40, (1 << 62) - 5] {
            for (name, margin) in margins {
                for (start, guess) in [(1, 1), (1, 10), (1, threshold), (1, u64::MAX), (1, 2)] {
                    let tests = Cell::new(0u32);
                    let test = |n: u64| {
                        tests.set(tests.get() + 1);
                        Probe {
                            passes: n >= threshold,
                            margin: margin(n, threshold),
                        }
                    };
                    let found = smallest_passing(start, guess, test);
                    assert_eq!(found, Some(threshold), "{name}, guess {guess}");
                    assert!(tests.get() <= 200, "{name}: {} tests", tests.get());
                }
            }
        }
        let never = |_: u64| Probe {
            passes: false,
            margin: 1.0,
        };
        assert_eq!(smallest_passing(1, 100, never), None);
    }
}
