//! Cross-checks of the incomplete beta ratio and the exact binomial bounds against an
//! independent implementation on random inputs: the `statrs` crate (0.18, from
//! crates.io), whose `beta_reg` is the modified-Lentz continued fraction of Press et
//! al., "Numerical Recipes", §6.4, with its own Lanczos `ln Γ`.
//!
//! The fixed reference tables (scipy and mpmath values in tests/it/theory_reference.rs)
//! pin chosen points; these properties sweep the parameter space, including the
//! borders between the methods gapcert switches among (series, continued fraction,
//! finite sum, asymptotic expansion at min(a, b) > 100).
//!
//! The ranges stay where statrs itself is accurate: a, b ≤ 2000 (its continued
//! fraction stops after 140 steps, and its prefactor `exp(ln Γ(a+b) − ln Γ(a) −
//! ln Γ(b) + …)` loses about |ln Γ(a+b)|·2⁻⁵³ relative, under 1e-11 here). statrs
//! returns one value, `I_x(a, b)`; when that is above ½ its complement carries only
//! absolute accuracy, so the tolerance is relative to the smaller tail plus a few
//! units of 2⁻⁵³.

use gapcert::theory::{beta, binomial};
use proptest::prelude::*;
use statrs::distribution::{Binomial, DiscreteCDF};

/// Relative agreement asked of the two implementations on the smaller tail.
const RELATIVE: f64 = 1e-10;
/// Absolute slack for the complement of a value near 1 (statrs forms it as 1 − v).
const ABSOLUTE: f64 = 4.0 * f64::EPSILON;

fn parameter() -> impl Strategy<Value = f64> {
    prop_oneof![
        // Small integers: binomial tails with few errors (finite sum, closed forms).
        (1u32..40).prop_map(f64::from),
        // Non-integers below 40: the power series and the continued fraction.
        1.0f64..40.0,
        // Around the switch to the asymptotic expansion at 100.
        80.0f64..130.0,
        (40u32..2000).prop_map(f64::from),
    ]
}

/// Whether `tail(root) = alpha` to 1e-8 relative, beyond what rounding the root to an
/// f64 accounts for. Near p = 1 one unit in the last place of p is a large relative
/// step in 1 − p (k = n − 1 with a tiny α puts U within 1e-9 of 1), so the tails at
/// the neighbouring f64 values widen the allowance. Otherwise the slope of the tail
/// (about n at the root) turns a bound accurate to 1e-13 into ~1e-10 in the tail;
/// 1e-8 leaves room for statrs's own error and still fails a bound off by 1e-9.
fn solves(tail: impl Fn(f64) -> f64, root: f64, alpha: f64) -> bool {
    let step = |bits: u64| tail(f64::from_bits(bits).clamp(0.0, 1.0));
    let rounding = (step(root.to_bits() + 1) - step(root.to_bits().saturating_sub(1))).abs();
    (tail(root) - alpha).abs() <= 1e-8 * alpha + rounding
}

fn close(ours: f64, reference: f64) -> bool {
    let smaller_tail = reference.min(1.0 - reference);
    (ours - reference).abs() <= RELATIVE * smaller_tail + ABSOLUTE
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(3000))]

    /// I_x(a, b) and its complement agree with statrs's `beta_reg`.
    #[test]
    fn incomplete_beta_agrees_with_statrs(a in parameter(), b in parameter(), position in 0.0f64..1.0) {
        // Points spread over the bulk of Beta(a, b) and both tails: x from the mean
        // plus a multiple of the standard deviation, kept inside (0, 1).
        let mean = a / (a + b);
        let sd = (a * b / ((a + b) * (a + b) * (a + b + 1.0))).sqrt();
        let x = (mean + (position - 0.5) * 16.0 * sd).clamp(1e-300, 1.0 - 1e-12);
        let y = 1.0 - x;
        let (lower, upper) = beta::incomplete_beta(a, b, x, y);
        let reference = statrs::function::beta::beta_reg(a, b, x);
        prop_assert!(
            close(lower, reference),
            "I_x({a}, {b}) at x = {x}: gapcert {lower:e}, statrs {reference:e}"
        );
        prop_assert!(
            close(upper, 1.0 - reference),
            "1 − I_x({a}, {b}) at x = {x}: gapcert {upper:e}, statrs {:e}",
            1.0 - reference
        );
    }

    /// The exact bounds solve the binomial tail equations that define them (SPEC §4):
    /// P[Bin(n, U) ≤ k] = α and P[Bin(n, L) ≥ k] = α, with statrs's binomial CDF.
    #[test]
    fn binomial_bounds_solve_the_tail_equations_in_statrs(
        n in 2u64..2000,
        k_fraction in 0.0f64..1.0,
        log10_alpha in -8.0f64..-0.5,
    ) {
        let k = ((n as f64 * k_fraction) as u64).clamp(1, n - 1);
        let alpha = 10f64.powf(log10_alpha);

        let upper = binomial::upper_bound(k, n, alpha);
        let below = |p: f64| Binomial::new(p, n).unwrap().cdf(k);
        prop_assert!(
            solves(below, upper, alpha),
            "upper bound {upper} for k = {k}, n = {n}, α = {alpha:e}: statrs P[Bin ≤ k] = {:e}",
            below(upper)
        );

        let lower = binomial::lower_bound(k, n, alpha);
        let at_least = |p: f64| Binomial::new(p, n).unwrap().sf(k - 1);
        prop_assert!(
            solves(at_least, lower, alpha),
            "lower bound {lower} for k = {k}, n = {n}, α = {alpha:e}: statrs P[Bin ≥ k] = {:e}",
            at_least(lower)
        );
    }
}

/// The case that made the rounding allowance necessary: k = n − 1 and a tiny α put
/// U = (1 − α)^(1/n) within 2.2e-9 of 1 (mpmath at 40 digits: U rounds to this same
/// f64, and 1 − U²⁶⁰ there is 5.51636345e-7, 2e-8 off α only through that rounding).
#[test]
fn bound_next_to_one_is_checked_up_to_its_rounding() {
    let (k, n, alpha) = (259, 260, 5.516363331278216e-7);
    let upper = binomial::upper_bound(k, n, alpha);
    assert_eq!(upper, 0.9999999978783212);
    let below = |p: f64| Binomial::new(p, n).unwrap().cdf(k);
    assert!(solves(below, upper, alpha));
    // Two units in the last place further (beyond the neighbours it allows) fail.
    assert!(!solves(below, f64::from_bits(upper.to_bits() - 2), alpha));
}
