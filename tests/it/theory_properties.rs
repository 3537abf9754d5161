//! Property tests (proptest) of the theory module.
//!
//! Guaranteed properties only: with k = round(rate·n) the upper bound is not
//! exactly monotone in n (k jumps), so the tested monotonicities hold k or n
//! fixed (Clopper & Pearson 1934: P[Bin(n, p) ≤ k] decreases in p and n and
//! increases in k).

use gapcert::theory::binomial;
use gapcert::theory::growth::{ln_sauer_sum, Family};
use gapcert::theory::vc;
use proptest::prelude::*;

fn size() -> impl Strategy<Value = u64> {
    prop_oneof![1u64..200, 200u64..100_000, 100_000u64..20_000_000]
}

fn alpha() -> impl Strategy<Value = f64> {
    prop_oneof![1e-12f64..1e-6, 1e-6f64..0.01, 0.01f64..0.5]
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(400))]

    /// For fixed k, the upper bound is non-increasing in n.
    #[test]
    fn upper_non_increasing_in_n_for_fixed_k(n in size(), k_frac in 0.0f64..1.0, extra in 1u64..1000, a in alpha()) {
        let k = ((n as f64) * k_frac) as u64;
        let k = k.min(n);
        let u1 = binomial::upper_bound(k, n, a);
        let u2 = binomial::upper_bound(k, n + extra, a);
        prop_assert!(u2 <= u1 * (1.0 + 1e-12), "k={k} n={n}: {u1} -> {u2}");
    }

    /// For fixed n, both bounds are non-decreasing in k.
    #[test]
    fn bounds_non_decreasing_in_k(n in size(), k_frac in 0.0f64..1.0, a in alpha()) {
        let k = (((n as f64) * k_frac) as u64).min(n.saturating_sub(1));
        let u1 = binomial::upper_bound(k, n, a);
        let u2 = binomial::upper_bound(k + 1, n, a);
        let l1 = binomial::lower_bound(k, n, a);
        let l2 = binomial::lower_bound(k + 1, n, a);
        prop_assert!(u1 <= u2 * (1.0 + 1e-12), "upper k={k} n={n}: {u1} {u2}");
        prop_assert!(l1 <= l2 * (1.0 + 1e-12), "lower k={k} n={n}: {l1} {l2}");
    }

    /// lower ≤ k/n ≤ upper, everything in [0, 1], and a smaller α widens.
    #[test]
    fn bounds_bracket_the_observed_rate(n in size(), k_frac in 0.0f64..1.0, a in alpha()) {
        let k = (((n as f64) * k_frac) as u64).min(n);
        let rate = k as f64 / n as f64;
        let (lo, hi) = (binomial::lower_bound(k, n, a), binomial::upper_bound(k, n, a));
        prop_assert!((0.0..=1.0).contains(&lo) && (0.0..=1.0).contains(&hi));
        prop_assert!(lo <= rate * (1.0 + 1e-12) && rate <= hi * (1.0 + 1e-12), "{lo} {rate} {hi}");
        let hi_wider = binomial::upper_bound(k, n, a / 10.0);
        prop_assert!(hi_wider >= hi * (1.0 - 1e-12));
    }

    /// The definition itself: at the upper bound U, P[Bin(n, U) ≤ k] = α,
    /// checked through the lower bound's dual: lower(k+1, n, 1−α) = U.
    #[test]
    fn upper_and_lower_are_dual(n in 2u64..1_000_000, k_frac in 0.0f64..1.0, a in 0.01f64..0.5) {
        let k = (((n as f64) * k_frac) as u64).min(n - 1);
        let u = binomial::upper_bound(k, n, a);
        let l = binomial::lower_bound(k + 1, n, 1.0 - a);
        prop_assert!(((u - l) / u).abs() < 1e-9, "k={k} n={n}: {u} vs {l}");
    }

    /// ln m_H(N) ≤ N ln 2 for every family (a class on N points has at most
    /// 2^N dichotomies), with a relative tolerance of 1e-14.
    #[test]
    fn ln_growth_at_most_n_ln2(n in 1u64..4_000_000_000_000u64, d in 1u64..100_000_000_000u64, m in 1u64..u64::MAX) {
        let families = [
            Family::Ray, Family::Interval, Family::Linear { dim: d }, Family::Box { dim: d },
            Family::Stump { features: d }, Family::Finite { size: m }, Family::Tree { leaves: d, features: d },
            Family::Vc { vc_dim: d },
            Family::ReluNet { weights: d, layers: 3, units: 10 },
            Family::ThresholdNet { weights: d, layers: 3, units: 10 },
        ];
        let cap = n as f64 * std::f64::consts::LN_2;
        for f in families {
            let g = f.ln_growth(n);
            prop_assert!(g.is_finite() && g <= cap * (1.0 + 1e-14) + 1e-14, "{f:?} n={n}: {g} > {cap}");
        }
    }

    /// Sauer–Shelah (Sauer 1972) bounds every class with VC dimension d + 1,
    /// so Cover's exact count for halfspaces in R^d (VC dim d + 1) is at most
    /// the Sauer sum with d + 1: ln m_linear(N) ≤ ln Σ_{i≤d+1} C(N, i).
    #[test]
    fn sauer_bound_dominates_cover_count(n in 1u64..1_000_000_000_000u64, d in 1u64..10_000_000u64) {
        let cover = Family::Linear { dim: d }.ln_growth(n);
        let sauer = ln_sauer_sum(n, d + 1);
        prop_assert!(cover <= sauer * (1.0 + 1e-13) + 1e-13, "n={n} d={d}: {cover} > {sauer}");
    }

    /// Exact and log-space growth agree for small N.
    #[test]
    fn exact_and_log_growth_agree(n in 1u64..300, d in 1u64..400) {
        for f in [Family::Vc { vc_dim: d }, Family::Linear { dim: d }, Family::Box { dim: d }] {
            let exact = f.growth_exact(n);
            let bits = exact.bits();
            // ln of a big integer via its top 64 bits.
            let shift = bits.saturating_sub(64);
            let top: u64 = (&exact >> shift).try_into().unwrap();
            let ln_exact = (top as f64).ln() + shift as f64 * std::f64::consts::LN_2;
            let got = f.ln_growth(n);
            prop_assert!((got - ln_exact).abs() <= 1e-12 * ln_exact.max(1.0), "{f:?} n={n}: {got} vs {ln_exact}");
        }
    }

    /// Ω(N) decreases in N once N ≥ d_VC (the range train_needed searches).
    #[test]
    fn allowance_decreasing_beyond_vc_dim(d in 1u64..10_000_000u64, factor in 1.0f64..1000.0, step in 1u64..1_000_000u64, delta in 1e-6f64..0.5) {
        let family = Family::Vc { vc_dim: d };
        let n = ((d as f64) * factor) as u64;
        let a1 = vc::allowance(&family, n, delta);
        let a2 = vc::allowance(&family, n + step, delta);
        prop_assert!(a2 <= a1 * (1.0 + 1e-13), "d={d} n={n}: {a1} -> {a2}");
    }

    /// train_needed returns the smallest N: Ω(N) ≤ tol < Ω(N − 1).
    #[test]
    fn train_needed_is_minimal(d in 1u64..100_000u64, tolerance in 0.02f64..0.9, delta in 1e-6f64..0.2) {
        let family = Family::Vc { vc_dim: d };
        let n = vc::train_needed(&family, tolerance, delta).expect("finite family");
        prop_assert!(vc::allowance(&family, n, delta) <= tolerance);
        if n > 1 {
            prop_assert!(vc::allowance(&family, n - 1, delta) > tolerance);
        }
    }
}

proptest! {
    #![proptest_config(ProptestConfig::with_cases(40))]

    /// holdout_needed_binomial returns an n that certifies and is minimal:
    /// no smaller n certifies (checked exhaustively below the answer when
    /// it is below 5000, and over the 2000 values below it otherwise).
    #[test]
    fn holdout_needed_binomial_is_minimal(rate in 0.0f64..0.3, gap in 0.005f64..0.2, a in 1e-6f64..0.2) {
        use gapcert::theory::sample_size::{errors_at, holdout_needed_binomial};
        let claim = rate + gap;
        let n = holdout_needed_binomial(rate, claim, a).expect("rate < claim");
        let certifies = |m: u64| binomial::upper_bound(errors_at(rate, m), m, a) <= claim;
        prop_assert!(certifies(n));
        let from = n.saturating_sub(2000).max(1);
        for m in from..n {
            prop_assert!(!certifies(m), "n={n} but {m} certifies");
        }
    }
}

/// Sample sizes far beyond any held-out set (n up to 5·10¹³, claims within 1e-7
/// of the observed rate, taken from an invented sweep log), where the search
/// walks stretches of equal k between its envelopes: the answer certifies with
/// the exact bound (the inversion, not the tail test the search uses), the rest
/// of its stretch below it does not, and neither do the ends of the 3000
/// stretches before it.
#[test]
fn holdout_needed_binomial_is_minimal_at_huge_n() {
    use gapcert::theory::sample_size::{errors_at, holdout_needed_binomial};
    for (rate, claim, a) in [
        (
            0.034899925424290545,
            0.03490000000000004,
            0.0018518518518518534,
        ),
        (0.17239846159237454, 0.1724, 0.0025000000000000022),
        (
            0.2248581071203849,
            0.22499999999999998,
            0.002272727272727275,
        ),
        (
            0.16080402010050251,
            0.18469999999999998,
            0.0012820512820512831,
        ),
    ] {
        let n = holdout_needed_binomial(rate, claim, a).expect("rate < claim");
        let certifies = |m: u64| binomial::upper_bound(errors_at(rate, m), m, a) <= claim;
        assert!(certifies(n), "{rate} {claim} {a}: {n} does not certify");
        let k = errors_at(rate, n);
        let mut m = n - 1;
        while m > 0 && errors_at(rate, m) == k {
            assert!(!certifies(m), "{rate} {claim} {a}: {m} < {n} certifies");
            m -= 1;
        }
        // m is now the end of the previous stretch; walk 3000 stretch ends down.
        for _ in 0..3000 {
            if m == 0 {
                break;
            }
            assert!(!certifies(m), "{rate} {claim} {a}: {m} < {n} certifies");
            let k = errors_at(rate, m);
            let step = ((k as f64 - 1.0) / rate).floor() as u64;
            m = step.min(m - 1);
            while m > 0 && errors_at(rate, m) >= k {
                m -= 1;
            }
        }
    }
}

/// A claim within 4e-9 of the observed rate (from an invented sweep log): the
/// exact window would hold millions of stretches and the size is near 10¹⁷,
/// beyond 2⁵³, so the search returns the smallest n from which every size
/// certifies. It must come back at once, certify, and lie close above the
/// minimum: 1e-6 fewer examples do not certify.
#[test]
fn holdout_needed_binomial_for_a_hairline_claim_is_sufficient_and_close() {
    use gapcert::theory::sample_size::{errors_at, holdout_needed_binomial};
    let (rate, claim, a) = (
        0.17569999595943775,
        0.17569999999999997,
        0.002380952380952383,
    );
    let started = std::time::Instant::now();
    let n = holdout_needed_binomial(rate, claim, a).expect("rate < claim");
    assert!(started.elapsed() < std::time::Duration::from_secs(1));
    assert!(n > 1 << 53, "{n}");
    let certifies = |m: u64| binomial::upper_bound(errors_at(rate, m), m, a) <= claim;
    for m in [n, n + n / 1_000_000, n * 2] {
        assert!(certifies(m), "{m}");
    }
    assert!(!certifies(n - n / 1_000_000));
}
