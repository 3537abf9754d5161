//! Published and common-practice facts that the theory module must reproduce.
//! Each check names its source.

use gapcert::theory::binomial;
use gapcert::theory::growth::{resolve, Family, FamilyParams};
use num_bigint::BigUint;

fn big(v: u64) -> BigUint {
    BigUint::from(v)
}

/// Cover 1965 (IEEE Trans. Electronic Computers EC-14(3)), function counting
/// theorem: C(N, d+1) = 2·Σ_{i=0}^{d} C(N−1, i) dichotomies of N points in
/// general position by affine halfspaces in R^d. For d = 2: 2, 4, 8, 14, 22, 32.
#[test]
fn cover_counts_for_plane_perceptron() {
    let plane = Family::Linear { dim: 2 };
    let got: Vec<BigUint> = (1..=6).map(|n| plane.growth_exact(n)).collect();
    let want: Vec<BigUint> = [2u64, 4, 8, 14, 22, 32].iter().map(|&v| big(v)).collect();
    assert_eq!(got, want);
}

/// Cover 1965 in R^3 (d = 3): C(N, 4) = 2·Σ_{i≤3} C(N−1, i): N = 5 gives 30,
/// N = 10 gives 2·(1 + 9 + 36 + 84) = 260.
#[test]
fn cover_counts_in_three_dimensions() {
    let space = Family::Linear { dim: 3 };
    assert_eq!(space.growth_exact(4), big(16));
    assert_eq!(space.growth_exact(5), big(30));
    assert_eq!(space.growth_exact(10), big(260));
    assert_eq!(space.vc_dim(), Some(4));
    assert_eq!(space.break_point(), Some(5));
}

/// Sauer 1972 (J. Combin. Theory A 13) / Shelah 1972: Σ_{i≤d} C(N, i);
/// d = 3, N = 10: 1 + 10 + 45 + 120 = 176; equals 2^N while N ≤ d.
#[test]
fn sauer_sums() {
    let vc3 = Family::Vc { vc_dim: 3 };
    assert_eq!(vc3.growth_exact(10), big(176));
    assert_eq!(vc3.growth_exact(3), big(8));
    assert_eq!(vc3.growth_exact(4), big(15));
    assert!((vc3.ln_growth(10) - 176f64.ln()).abs() < 1e-14);
    // Complement path (2d ≥ N): Σ_{i≤6} C(10, i) = 1024 − (1 + 10 + 45 + 120) = 848.
    assert_eq!(Family::Vc { vc_dim: 6 }.growth_exact(10), big(848));
    assert!((Family::Vc { vc_dim: 6 }.ln_growth(10) - 848f64.ln()).abs() < 1e-13);
}

/// SPEC §5b (common practice): positive rays m_H(N) = N + 1, break point 2.
#[test]
fn rays_grow_linearly() {
    for n in [1u64, 2, 5, 1000] {
        assert_eq!(Family::Ray.growth_exact(n), big(n + 1));
    }
    assert_eq!(Family::Ray.break_point(), Some(2));
}

/// SPEC §5b (common practice): perceptrons in the plane m_H(3) = 8,
/// m_H(4) = 14 (break point 4), and Cover's formula gives m_H(5) = 22.
#[test]
fn plane_perceptron_common_practice_values() {
    let plane = resolve("linear", &FamilyParams::default().with("dim", 2))
        .unwrap()
        .unwrap();
    assert_eq!(plane.growth_exact(3), big(8));
    assert_eq!(plane.growth_exact(4), big(14));
    assert_eq!(plane.growth_exact(5), big(22));
    assert_eq!(plane.break_point(), Some(4));
}

/// SPEC §5b (common practice): axis-aligned rectangles in the plane
/// m_H(4) = 16 and m_H(5) < 32 (the Sauer bound with d_VC = 4 gives 31).
#[test]
fn plane_rectangles_common_practice_values() {
    let rectangles = Family::Box { dim: 2 };
    assert_eq!(rectangles.growth_exact(4), big(16));
    assert!(rectangles.growth_exact(5) < big(32));
    assert_eq!(rectangles.break_point(), Some(5));
}

/// Positive intervals (common textbook result): N(N+1)/2 + 1; m(2) = 4, m(3) = 7.
#[test]
fn intervals() {
    assert_eq!(Family::Interval.growth_exact(2), big(4));
    assert_eq!(Family::Interval.growth_exact(3), big(7));
    assert_eq!(Family::Interval.break_point(), Some(3));
}

/// Clopper & Pearson 1934 with k = 0: the upper bound is exactly 1 − α^(1/n)
/// (the closed-form path), e.g. n = 10, α = 0.05: 0.2588655508930523.
#[test]
fn zero_errors_uses_closed_form() {
    for &(n, alpha) in &[(10u64, 0.05f64), (1000, 0.01), (1_000_000, 1e-9), (7, 0.5)] {
        let want = 1.0 - alpha.powf(1.0 / n as f64);
        let got = binomial::upper_bound(0, n, alpha);
        assert!(
            ((got - want) / want).abs() < 1e-12,
            "n={n}: {got} vs {want}"
        );
        assert_eq!(binomial::lower_bound(0, n, alpha), 0.0);
    }
    assert!((binomial::upper_bound(0, 10, 0.05) - 0.258_865_550_893_052_3).abs() < 1e-15);
}

/// k = n: upper bound 1 and lower bound α^(1/n) (closed forms).
#[test]
fn all_errors_uses_closed_form() {
    assert_eq!(binomial::upper_bound(50, 50, 0.05), 1.0);
    let want = 0.05f64.powf(1.0 / 50.0);
    assert!((binomial::lower_bound(50, 50, 0.05) - want).abs() < 1e-15);
}

/// "Rule of three" (Hanley & Lippman-Hand 1983, JAMA 249(13), 1743–1745):
/// with 0 events in n trials the one-sided 95% upper bound is ≈ 3/n; the
/// exact value is 1 − 0.05^(1/n) = (2.9957/n)·(1 − 1.4979/n + …), so its
/// relative distance to 3/n is 1.43e-3 + 1.5/n: within the stated tolerance
/// of 2e-3 for n ≥ 10⁴ (and not yet at n = 100, where the O(1/n) term
/// dominates).
#[test]
fn rule_of_three_approximates_zero_error_bound() {
    for n in [10_000u64, 100_000, 1_000_000] {
        let bound = binomial::upper_bound(0, n, 0.05);
        let three_over_n = 3.0 / n as f64;
        assert!(
            ((bound - three_over_n) / three_over_n).abs() < 2e-3,
            "n={n}: {bound}"
        );
    }
    let small = binomial::upper_bound(0, 100, 0.05);
    assert!(
        ((small - 0.03) / 0.03).abs() > 2e-3,
        "n=100 is outside the approximation"
    );
}

/// Clopper & Pearson 1934: the two-sided interval uses α/2 at each end.
#[test]
fn interval_uses_half_alpha_each_side() {
    let (lo, hi) = binomial::interval(7, 200, 0.05);
    assert_eq!(lo, binomial::lower_bound(7, 200, 0.025));
    assert_eq!(hi, binomial::upper_bound(7, 200, 0.025));
    // Textbook value (exact 95% interval for 7/200 ≈ 0.0142–0.0708).
    assert!(
        (lo - 0.0142).abs() < 5e-4 && (hi - 0.0708).abs() < 5e-4,
        "{lo} {hi}"
    );
}

/// Extreme confidence: α down to 1e-300 gives finite bounds in [0, 1].
#[test]
fn tiny_alpha_is_finite() {
    for &alpha in &[1e-300, 1e-200, f64::MIN_POSITIVE] {
        for &(k, n) in &[
            (0u64, 1u64),
            (1, 2),
            (3, 10),
            (5, 1_000_000),
            (500, 1000),
            (9, 10),
        ] {
            let u = binomial::upper_bound(k, n, alpha);
            let l = binomial::lower_bound(k, n, alpha);
            assert!(
                (0.0..=1.0).contains(&u) && (0.0..=1.0).contains(&l),
                "{k}/{n}: {l} {u}"
            );
            assert!(l <= u);
        }
    }
}

/// Hoeffding 1963: one-sided width sqrt(ln(1/δ)/(2n)); n = 1000, δ = 0.05
/// gives 0.038701…; the two-sided width uses ln(2/δ).
#[test]
fn hoeffding_widths() {
    use gapcert::theory::hoeffding;
    let w1 = hoeffding::one_sided_width(1000, 0.05);
    assert!((w1 - (20f64.ln() / 2000.0).sqrt()).abs() < 1e-15);
    let w2 = hoeffding::two_sided_width(1000, 0.05);
    assert!((w2 - (40f64.ln() / 2000.0).sqrt()).abs() < 1e-15);
    assert_eq!(hoeffding::interval(0.01, 100, 0.05).0, 0.0);
    assert_eq!(hoeffding::interval(0.99, 100, 0.05).1, 1.0);
}

/// SPEC §4/§5: unknown keys resolve to None, missing or non-positive
/// parameters are errors naming the parameter, nets need units > 2.
#[test]
fn resolve_validates_parameters() {
    let none = FamilyParams::default();
    assert_eq!(resolve("no_such_family", &none), Ok(None));
    assert_eq!(resolve("RAY", &none), Ok(Some(Family::Ray)));
    assert_eq!(resolve("linear", &none).unwrap_err().parameter, "dim");
    let zero = none.with("dim", 0);
    assert_eq!(resolve("box", &zero).unwrap_err().parameter, "dim");
    let net = none.with("weights", 100).with("layers", 2).with("units", 2);
    assert_eq!(resolve("relu_net", &net).unwrap_err().parameter, "units");
}

/// Bartlett, Harvey, Liaw & Mehrabian 2019 (JMLR 20(63)), Theorem 7 as used
/// in SPEC §5: d = ⌊L + L·W·log2(4e·L·U·log2(2e·L·U))⌋ for ReLU,
/// ⌊L + W·log2(4e·U·log2(2e·U))⌋ for sign units.
#[test]
fn network_vc_bounds_follow_spec_formula() {
    let e = std::f64::consts::E;
    let (w, l, u) = (1000.0f64, 3.0f64, 50.0f64);
    let relu = (l + l * w * (4.0 * e * l * u * (2.0 * e * l * u).log2()).log2()).floor() as u64;
    let threshold = (l + w * (4.0 * e * u * (2.0 * e * u).log2()).log2()).floor() as u64;
    let relu_family = Family::ReluNet {
        weights: 1000,
        layers: 3,
        units: 50,
    };
    let threshold_family = Family::ThresholdNet {
        weights: 1000,
        layers: 3,
        units: 50,
    };
    assert_eq!(relu_family.vc_dim(), Some(relu));
    assert_eq!(threshold_family.vc_dim(), Some(threshold));
    assert_eq!(gapcert::theory::growth::catalogue().len(), 10);
}

/// Stump: min(2^N, 2 + d(2N − 2)); d = 1: m(2) = 4, m(3) = 6 < 8 → break point 3.
#[test]
fn stump_counts() {
    let stump = Family::Stump { features: 1 };
    assert_eq!(stump.growth_exact(2), big(4));
    assert_eq!(stump.growth_exact(3), big(6));
    assert_eq!(stump.break_point(), Some(3));
    assert_eq!(stump.vc_dim(), None);
}

/// Finite class (union bound): min(M, 2^N), d ≤ floor(log2 M); tree:
/// log2|H| = 2k·⌈log2(d+3)⌉ (Shalev-Shwartz & Ben-David 2014, ch. 18).
#[test]
fn finite_and_tree_counts() {
    let finite = Family::Finite { size: 1000 };
    assert_eq!(finite.growth_exact(5), big(32));
    assert_eq!(finite.growth_exact(20), big(1000));
    assert_eq!(finite.vc_dim(), Some(9));
    assert_eq!(finite.break_point(), Some(10));
    let tree = Family::Tree {
        leaves: 4,
        features: 5,
    };
    // ⌈log2 8⌉ = 3, so log2|H| = 24.
    assert_eq!(tree.growth_exact(30), big(1 << 24));
    assert_eq!(tree.break_point(), Some(25));
    assert!((tree.ln_growth(1000) - 24.0 * std::f64::consts::LN_2).abs() < 1e-13);
}

/// SPEC §4 sample sizes: the Hoeffding count is ⌈ln(1/α)/(2(c − ê)²)⌉
/// (Hoeffding 1963), e.g. ê = 0.01, c = 0.02, α = 0.05 gives 14979; both
/// solvers return None when ê ≥ c; extreme inputs do not panic.
#[test]
fn sample_size_edges() {
    use gapcert::theory::sample_size::{
        errors_at, holdout_needed_binomial, holdout_needed_hoeffding,
    };
    assert_eq!(holdout_needed_hoeffding(0.01, 0.02, 0.05), Some(14979));
    assert_eq!(holdout_needed_hoeffding(0.03, 0.03, 0.05), None);
    assert_eq!(holdout_needed_binomial(0.05, 0.03, 0.05), None);
    assert_eq!(holdout_needed_binomial(f64::NAN, 0.03, 0.05), None);
    // 0.03·100 is 3.0000000000000004 in floating point: still 3 errors.
    assert_eq!(errors_at(0.03, 100), 3);
    assert_eq!(errors_at(0.031, 100), 4);
    // Zero observed errors: closed form ⌈ln α / ln(1 − c)⌉ = 299 at c = 0.01.
    assert_eq!(holdout_needed_binomial(0.0, 0.01, 0.05), Some(299));
    // Tiny positive rate (k = 1 until n ≈ 1e300), a claim of 1, and a
    // narrow gap at α = 1e-12 (n ≈ 8e8).
    for &(rate, claim, alpha) in &[(1e-300, 0.01, 0.05), (0.0, 1.0, 0.05), (0.2, 0.2001, 1e-12)] {
        let n = holdout_needed_binomial(rate, claim, alpha);
        assert!(n.is_some(), "{rate} {claim} {alpha}");
    }
    assert_eq!(holdout_needed_hoeffding(0.0, 1e-300, 0.05), Some(u64::MAX));
}

/// A held-out sample size near 7·10⁷ from an invented sweep log, where the count
/// slack of `errors_at` once made the search skip the answer. Reference:
/// scripts/large_sample_size.py (exact rational ceil(rate·n), binomial tail
/// summed in mpmath 1.3.0 at 40 digits) prints 69735213; the stretches of n
/// just below it fail, which the script also checks.
#[test]
fn large_sample_size_matches_exact_rational_reference() {
    use gapcert::theory::binomial::upper_bound;
    use gapcert::theory::sample_size::{errors_at, holdout_needed_binomial};
    let (rate, claim, alpha) = (
        0.2248581071203849,
        0.22499999999999998,
        0.002272727272727275,
    );
    assert_eq!(holdout_needed_binomial(rate, claim, alpha), Some(69735213));
    // ceil(rate·n) exactly: 15680528 at the answer, 15680527 just before its stretch.
    assert_eq!(errors_at(rate, 69735213), 15680528);
    assert_eq!(errors_at(rate, 69735208), 15680527);
    assert!(upper_bound(15680528, 69735213, alpha) <= claim);
    assert!(upper_bound(15680527, 69735208, alpha) > claim);
}

/// The table of families agrees with itself: `gapcert families` lists exactly the
/// keys `resolve` knows, each with the parameters `resolve` asks for, all of them in
/// `FAMILY_PARAMETERS` (from which the log columns and the flags are made).
#[test]
fn the_catalogue_resolve_and_the_parameter_list_agree() {
    use gapcert::theory::growth::{catalogue, FAMILY_PARAMETERS};
    let mut all = FamilyParams::default();
    for name in FAMILY_PARAMETERS {
        all = all.with(name, 7);
    }
    for info in catalogue() {
        assert!(
            resolve(info.key, &all).unwrap().is_some(),
            "{} is listed but unknown",
            info.key
        );
        for &parameter in info.parameters {
            assert!(FAMILY_PARAMETERS.contains(&parameter), "{parameter}");
            // Leaving a listed parameter out is an error naming it.
            let mut without = FamilyParams::default();
            for name in FAMILY_PARAMETERS.iter().filter(|&&n| n != parameter) {
                without = without.with(name, 7);
            }
            assert_eq!(
                resolve(info.key, &without).unwrap_err().parameter,
                parameter,
                "{}",
                info.key
            );
        }
        // Only the listed parameters are needed.
        let mut only = FamilyParams::default();
        for &parameter in info.parameters {
            only = only.with(parameter, 7);
        }
        assert!(resolve(info.key, &only).unwrap().is_some(), "{}", info.key);
    }
    assert_eq!(resolve("not_a_family", &all), Ok(None));
}

/// For every family, the break point is the smallest k with m_H(k) < 2^k
/// (the definition), computed from the exact growth function.
#[test]
fn break_points_follow_from_the_exact_growth_functions() {
    let families = [
        Family::Ray,
        Family::Interval,
        Family::Linear { dim: 3 },
        Family::Box { dim: 2 },
        Family::Stump { features: 5 },
        Family::Finite { size: 300 },
        Family::Tree {
            leaves: 1,
            features: 1,
        },
        Family::Vc { vc_dim: 9 },
    ];
    for family in families {
        let first = (1..=64u64).find(|&k| family.growth_exact(k) < (BigUint::from(1u8) << k));
        assert_eq!(family.break_point(), first, "{family:?}");
    }
}
