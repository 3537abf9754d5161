//! Regularized incomplete beta ratio `I_x(a, b)`: evaluation of both tails.
//!
//! Evaluation follows A. R. DiDonato & A. H. Morris, "Algorithm 708:
//! Significant digit computation of the incomplete beta function ratios",
//! ACM TOMS 18(3), 1992, 360–373 (routine BRATIO and its helpers), restricted
//! to the parameter region gapcert needs, a ≥ 1 and b ≥ 1 (binomial tails
//! have integer parameters). With λ = (a + b)·y − b the distance from the
//! mean, and after the swap that makes `I_x0(a0, b0)` the smaller tail:
//!
//! | region | method (DM routine) |
//! |---|---|
//! | a = 1 or b = 1 | closed forms `1 − yᵇ`, `xᵃ` |
//! | b0 < 40, b0 an integer | finite binomial sum of b0 terms (the finite case of BUP) |
//! | b0 < 40 not an integer, b0·x0 ≤ 0.7 | power series (BPSER) |
//! | b0 < 40 otherwise; b0 ≥ 40 with min(a0, b0) ≤ 100 or λ > 0.03·min(a0, b0) | continued fraction (BFRAC) |
//! | min(a0, b0) > 100 and λ ≤ 0.03·min(a0, b0) | Temme's uniform asymptotic expansion (BASYM) |
//!
//! Every method is evaluated in log space, and the common prefactor
//! `xᵃ yᵇ / B(a, b)` (BRCOMP) uses the Stirling-difference form with
//! [`rlog1`] and BCORR for a, b ≥ 8, so that no `ln Γ` cancellation occurs
//! even for b ≈ 10¹² (the failure mode of generic quantile routines on large
//! clean held-out sets, k ≤ 3 and n ≥ 10⁶). The prefactor is carried as
//! `exp(exponent)·multiplier`, so each method takes a single logarithm of
//! multiplier × its sum or fraction, and the ratio tail/prefactor (which the
//! inverse needs for the density) comes out as a plain number, without an
//! `exp`. For non-integer b0 < 40 with b0·x0 > 0.7, DM use BUP + BGRAT;
//! here BFRAC serves that corner, which gapcert reaches only through the
//! real-valued envelope of the sample-size search.

use crate::theory::special::{
    erfc_scaled, ln_beta, ln_one_minus_exp, rlog1, stirling_correction_difference, LN_SQRT_2PI,
};

/// Logarithms of both tails and of the prefactor at one point.
#[derive(Clone, Copy, Debug)]
pub struct LnBetaTails {
    /// `ln I_x(a, b)`.
    pub ln_lower: f64,
    /// `ln(1 − I_x(a, b))`.
    pub ln_upper: f64,
    /// `ln(xᵃ yᵇ / B(a, b))`; the density is `exp(ln_prefactor) / (x·y)`.
    pub ln_prefactor: f64,
}

/// `(I_x(a, b), 1 − I_x(a, b))` for a, b ≥ 1 and x ∈ [0, 1], with y = 1 − x
/// supplied by the caller so that both tails keep full relative accuracy.
///
/// Domain: a, b ≥ 1 (up to about 10¹²), x ∈ [0, 1]. Accuracy: worst relative error
/// 1.6e-13 on the lower and 1.1e-11 on the upper tail against 82 mpmath points of
/// each (50 digits, `fixtures/reference/special.csv`) covering every region of the
/// table above, tails down to 1e-300 and a, b up to 10⁷; the largest errors are at
/// tails near 1e-300 with a = b = 10⁷, where one unit in the last place of x moves
/// the tail by about 3e-11. Source: DiDonato & Morris 1992 (module docs).
pub fn incomplete_beta(a: f64, b: f64, x: f64, y: f64) -> (f64, f64) {
    let tails = ln_incomplete_beta(a, b, x, y);
    (tails.ln_lower.exp(), tails.ln_upper.exp())
}

/// Logarithms of `I_x(a, b)` and `1 − I_x(a, b)` (see [`incomplete_beta`]).
///
/// Domain, accuracy and source as [`incomplete_beta`].
pub fn ln_incomplete_beta(a: f64, b: f64, x: f64, y: f64) -> LnBetaTails {
    if x <= 0.0 {
        return LnBetaTails {
            ln_lower: f64::NEG_INFINITY,
            ln_upper: 0.0,
            ln_prefactor: f64::NEG_INFINITY,
        };
    }
    if y <= 0.0 {
        return LnBetaTails {
            ln_lower: 0.0,
            ln_upper: f64::NEG_INFINITY,
            ln_prefactor: f64::NEG_INFINITY,
        };
    }
    let (ln_x, ln_y) = ln_xy(x, y);
    let smaller = ln_smaller_tail(a, b, x, y, ln_x, Some(ln_y));
    let ln_other = ln_one_minus_exp(smaller.ln_tail);
    let (ln_lower, ln_upper) = if smaller.is_upper {
        (ln_other, smaller.ln_tail)
    } else {
        (smaller.ln_tail, ln_other)
    };
    LnBetaTails {
        ln_lower,
        ln_upper,
        ln_prefactor: smaller.ln_tail - smaller.tail_ratio.ln(),
    }
}

/// The tail that BRATIO computes directly (the smaller one, up to O(1/√n)),
/// in log space, with its ratio to the prefactor.
#[derive(Clone, Copy, Debug)]
struct SmallerTail {
    ln_tail: f64,
    /// true when `ln_tail` is `ln(1 − I_x(a, b))`, false for `ln I_x(a, b)`.
    is_upper: bool,
    /// `w / (xᵃ yᵇ / B(a, b))` with w the tail in `ln_tail`, as a plain
    /// number: every method has it as a by-product (r itself for the
    /// continued fraction), which spares the inverse an `exp` and a division
    /// for the density.
    tail_ratio: f64,
}

/// `ln T` for the requested tail T at an interior point 0 < x < 1 given
/// with ln x (and ln y when known), and `T/(x·density)`, the reciprocal of
/// the derivative of ln T in ln x up to sign; the other tail is only formed
/// when it is the one asked for.
pub(super) fn ln_tail_at(
    a: f64,
    b: f64,
    x: f64,
    y: f64,
    ln_x: f64,
    ln_y: Option<f64>,
    upper: bool,
) -> (f64, f64) {
    let smaller = ln_smaller_tail(a, b, x, y, ln_x, ln_y);
    // x·density = prefactor / y.
    if smaller.is_upper == upper {
        (smaller.ln_tail, smaller.tail_ratio * y)
    } else {
        let ln_other = ln_one_minus_exp(smaller.ln_tail);
        let ratio = smaller.tail_ratio * (ln_other - smaller.ln_tail).exp();
        (ln_other, ratio * y)
    }
}

/// `ln_y` may be left out (None): the asymptotic expansion does not need it,
/// and the other methods then form it from x or y.
fn ln_smaller_tail(a: f64, b: f64, x: f64, y: f64, ln_x: f64, ln_y: Option<f64>) -> SmallerTail {
    let eps = f64::EPSILON.max(1e-15);
    let ln_y = || ln_y.unwrap_or_else(|| if x < 0.5 { (-x).ln_1p() } else { y.ln() });
    if a == 1.0 {
        // I_x(1, b) = 1 − yᵇ: the upper tail yᵇ is exact; prefactor b·x·yᵇ.
        return SmallerTail {
            ln_tail: b * ln_y(),
            is_upper: true,
            tail_ratio: 1.0 / (b * x),
        };
    }
    if b == 1.0 {
        // I_x(a, 1) = xᵃ; prefactor a·xᵃ·y.
        return SmallerTail {
            ln_tail: a * ln_x,
            is_upper: false,
            tail_ratio: 1.0 / (a * y),
        };
    }

    // Swap so that x0 lies at or below the mean of Beta(a0, b0): then
    // w = I_x0(a0, b0) is the smaller tail and is computed directly.
    let lambda = if a > b {
        (a + b) * y - b
    } else {
        a - (a + b) * x
    };
    let swapped = lambda < 0.0;
    let (a0, b0, x0, y0, lambda) = if swapped {
        (b, a, y, x, -lambda)
    } else {
        (a, b, x, y, lambda)
    };

    // DiDonato & Morris's choice of method (BRATIO, both a, b > 1). (Moving
    // the switch to λ ≤ 0.3·min(a0, b0) was tried: just as accurate, but the
    // expansion then needs 8–12 terms and is no faster than the continued
    // fraction.)
    let use_asymptotic = if b0 < 40.0 {
        false
    } else if a0 > b0 {
        b0 > 100.0 && lambda <= 0.03 * b0
    } else {
        a0 > 100.0 && lambda <= 0.03 * a0
    };
    if use_asymptotic {
        // BASYM's exponent f equals BRCOMP's a·u + b·v here (|λ/a|, |λ/b| ≤ 0.03),
        // so the prefactor shares f and BCORR instead of recomputing them:
        // w = e0·e^{−f−Δ}·sum and prefactor = e^{−f−Δ}·√(a0·b0/(a0+b0))/√(2π),
        // so w/prefactor = 2√2·sum/√(a0·b0/(a0+b0)) (e0 = 2/√π).
        let f = a0 * rlog1(-lambda / a0) + b0 * rlog1(lambda / b0);
        let correction = stirling_correction_difference(a0, b0);
        let sum = asymptotic_sum(a0, b0, lambda, 100.0 * eps, f);
        const LN_E0: f64 = 0.120_782_237_635_245; // ln(2/√π)
        const E1: f64 = 0.353_553_390_593_274; // 2^(−3/2)
        return SmallerTail {
            ln_tail: (LN_E0 - f - correction + sum.ln()).min(0.0),
            is_upper: swapped,
            tail_ratio: sum * (((a0 + b0) / (a0 * b0)).sqrt() / E1),
        };
    }
    // ln y is needed by the prefactor's small-parameter forms and by the
    // finite sum, not by BRCOMP's a, b ≥ 8 form ahead of BFRAC.
    let ln_y = if a0.min(b0) < 8.0 || b0 < 40.0 {
        ln_y()
    } else {
        f64::NAN
    };
    let (ln_x0, ln_y0) = if swapped { (ln_y, ln_x) } else { (ln_x, ln_y) };
    // prefactor = exp(exponent)·multiplier; each method folds the multiplier
    // into its one final logarithm.
    let (exponent, multiplier) = prefactor_parts(a0, b0, x0, y0, ln_x0, ln_y0);
    let (ln_w, tail_ratio) = if b0 < 40.0 && b0.fract() == 0.0 {
        // w = prefactor/(a0·y0)·sum (see finite_binomial_sum).
        let sum = finite_binomial_sum(a0, b0, x0, y0);
        let ln_w = exponent - ln_y0 + (multiplier * sum / a0).ln();
        (ln_w, sum / (a0 * y0))
    } else if b0 < 40.0 && b0 * x0 <= 0.7 {
        let ln_w = ln_power_series(a0, b0, x0, ln_x0, eps);
        let ln_prefactor = exponent + multiplier.ln();
        (ln_w, (ln_w - ln_prefactor).exp())
    } else {
        // w = prefactor·r.
        let r = continued_fraction(a0, b0, x0, y0, lambda, 15.0 * eps);
        let ln_w = if exponent == f64::NEG_INFINITY {
            f64::NEG_INFINITY
        } else {
            exponent + (multiplier * r).ln()
        };
        (ln_w, r)
    };
    SmallerTail {
        ln_tail: ln_w.min(0.0),
        is_upper: swapped,
        tail_ratio,
    }
}

/// `(ln x, ln y)` using whichever of x, y is smaller for the log1p form.
fn ln_xy(x: f64, y: f64) -> (f64, f64) {
    if x <= 0.375 {
        (x.ln(), (-x).ln_1p())
    } else if y > 0.375 {
        (x.ln(), y.ln())
    } else {
        ((-y).ln_1p(), y.ln())
    }
}

/// `ln(xᵃ yᵇ / B(a, b))` (DiDonato & Morris 1992, BRCOMP) for a, b ≥ 1.
///
/// Domain: a, b ≥ 1, 0 < x < 1 with y = 1 − x. Accuracy: checked through
/// [`incomplete_beta`], whose every method multiplies by it.
pub fn ln_prefactor(a: f64, b: f64, x: f64, y: f64) -> f64 {
    if x <= 0.0 || y <= 0.0 {
        return f64::NEG_INFINITY;
    }
    let (ln_x, ln_y) = ln_xy(x, y);
    ln_prefactor_xy(a, b, x, y, ln_x, ln_y)
}

fn ln_prefactor_xy(a: f64, b: f64, x: f64, y: f64, ln_x: f64, ln_y: f64) -> f64 {
    let (exponent, multiplier) = prefactor_parts(a, b, x, y, ln_x, ln_y);
    exponent + multiplier.ln()
}

/// BRCOMP's `xᵃ yᵇ / B(a, b)` as `(exponent, multiplier)` with the
/// prefactor `exp(exponent)·multiplier`, so that a caller who multiplies it
/// by a sum takes one logarithm for both.
fn prefactor_parts(a: f64, b: f64, x: f64, y: f64, ln_x: f64, ln_y: f64) -> (f64, f64) {
    let small = a.min(b);
    if small < 8.0 {
        if small.fract() == 0.0 {
            // Integer s = min(a, b) < 8 (every binomial tail): 1/B(s, l) =
            // l(l+1)…(l+s−1)/(s−1)!, a product of at most 7 factors.
            let large = a.max(b);
            let mut ratio = large;
            let mut j = 1.0;
            while j < small {
                ratio *= (large + j) / j;
                j += 1.0;
            }
            return (a * ln_x + b * ln_y, ratio);
        }
        return (a * ln_x + b * ln_y - ln_beta(a, b), 1.0);
    }
    // a, b ≥ 8: expand around the mean (x0, y0) = (a, b)/(a + b); the
    // exponent −(a·u + b·v) is a sum of two non-negative rlog1 terms.
    let (x0, y0, lambda) = if a <= b {
        let h = a / b;
        (h / (h + 1.0), 1.0 / (h + 1.0), a - (a + b) * x)
    } else {
        let h = b / a;
        (1.0 / (h + 1.0), h / (h + 1.0), (a + b) * y - b)
    };
    let e = -lambda / a;
    let u = if e.abs() > 0.6 {
        e - (x / x0).ln()
    } else {
        rlog1(e)
    };
    let e = lambda / b;
    let v = if e.abs() > 0.6 {
        e - (y / y0).ln()
    } else {
        rlog1(e)
    };
    (
        -LN_SQRT_2PI - (a * u + b * v) - stirling_correction_difference(a, b),
        (b * x0).sqrt(),
    )
}

/// `I_x(a, b)` for integer b < 40 as the finite sum
/// `P[Bin(a + b − 1, y) ≤ b − 1] = Σ_{j<b} C(a+b−1, j) yʲ x^(a+b−1−j)`
/// (the finite case of DiDonato & Morris's BUP recursion), returned as the
/// sum relative to its top term `C(a+b−1, b−1)·y^(b−1)·xᵃ = prefactor/(a·y)`
/// (since 1/B(a, b) = a·C(a+b−1, b−1)). Terms are summed from j = b − 1
/// downwards; at or below the mean they decrease, so the sum stops once a
/// term no longer changes it.
fn finite_binomial_sum(a: f64, b: f64, x: f64, y: f64) -> f64 {
    let m = a + b - 1.0;
    let ratio_xy = x / y;
    let mut term = 1.0;
    let mut sum = 1.0;
    let mut j = b - 1.0;
    while j >= 1.0 {
        // pmf(j−1)/pmf(j) = j/(m − j + 1) · x/y
        term *= j / (m - j + 1.0) * ratio_xy;
        sum += term;
        if term <= 1e-17 * sum {
            break;
        }
        j -= 1.0;
    }
    sum
}

/// Power series for `ln I_x(a, b)` when b·x ≤ 0.7 (DiDonato & Morris 1992,
/// BPSER; a ≥ 1 here).
fn ln_power_series(a: f64, b: f64, x: f64, ln_x: f64, eps: f64) -> f64 {
    let ln_factor = a * ln_x - ln_beta(a, b) - a.ln();
    let tol = eps / a;
    let mut sum = 0.0;
    let mut n = 0.0;
    let mut c = 1.0;
    loop {
        n += 1.0;
        c *= (0.5 - b / n + 0.5) * x;
        let w = c / (a + n);
        sum += w;
        if w.abs() <= tol || n > 1e6 {
            break;
        }
    }
    ln_factor + (a * sum).ln_1p()
}

/// Continued fraction r with `I_x(a, b) = prefactor·r`, a, b > 1,
/// λ = (a + b)y − b ≥ 0 (DiDonato & Morris 1992, routine BFRAC; evaluated
/// forwards with rescaling every fourth step).
fn continued_fraction(a: f64, b: f64, x: f64, y: f64, lambda: f64, eps: f64) -> f64 {
    let c = lambda + 1.0;
    let inv_a = 1.0 / a;
    let c0 = b * inv_a;
    let c1 = inv_a + 1.0;
    let yp1 = y + 1.0;
    let mut n = 0.0;
    let mut p = 1.0;
    let mut s = a + 1.0;
    let mut an = 0.0;
    let mut bn = 1.0;
    let mut anp1 = 1.0;
    let mut bnp1 = c / c1;
    let mut r = c1 / c;
    // Same recurrence as BFRAC, taken four steps per pass: the chain through
    // the convergents is bound by latency, so the four steps share one
    // renormalizing reciprocal (the values grow by at most the product of
    // four steps' coefficients in between, far from overflow), and
    // convergence is tested on every fourth convergent. In each step
    // BFRAC's two divisions, by s and by c1 + 2n/a = (s + 2)/a, become one
    // reciprocal 1/(s + 2) that the next step reuses as its 1/s.
    let mut inv_s = 1.0 / s;
    let coefficients = |n: f64, p: f64, s: f64, inv_s: f64| {
        let w = n * (b - n) * x;
        let e = a * inv_s;
        let alpha = p * (p + c0) * e * e * (w * x);
        let inv_s_next = 1.0 / (s + 2.0);
        // (t + 1)/(c1 + 2t) with t = n/a is (a + n)/(s + 2).
        let beta = n + w * inv_s + (a + n) * inv_s_next * (c + n * yp1);
        (alpha, beta, n * inv_a + 1.0, inv_s_next)
    };
    for _ in 0..12_500 {
        let (alpha1, beta1, p1, inv_s1) = coefficients(n + 1.0, p, s, inv_s);
        let (alpha2, beta2, p2, inv_s2) = coefficients(n + 2.0, p1, s + 2.0, inv_s1);
        let (alpha3, beta3, p3, inv_s3) = coefficients(n + 3.0, p2, s + 4.0, inv_s2);
        let (alpha4, beta4, p4, inv_s4) = coefficients(n + 4.0, p3, s + 6.0, inv_s3);
        n += 4.0;
        p = p4;
        s += 8.0;
        inv_s = inv_s4;
        // The recurrence X_{m+1} = α_{m+1}·X_{m−1} + β_{m+1}·X_m (X = A or B)
        // is the product of the 2×2 matrices [[0, 1], [α, β]] (the matrix
        // form of the fundamental recurrence formulas; W. B. Jones &
        // W. J. Thron, "Continued Fractions: Analytic Theory and
        // Applications", Addison-Wesley 1980, ch. 2 — chapter cited from
        // memory, not checked against the book). The four matrices are
        // multiplied together first, off the dependency chain, so the
        // convergents advance four terms per multiply–add and division.
        let q1 = beta2 * alpha1;
        let q2 = alpha2 + beta2 * beta1;
        let q3 = beta4 * alpha3;
        let q4 = alpha4 + beta4 * beta3;
        let p00 = alpha3 * alpha1 + beta3 * q1;
        let p01 = alpha3 * beta1 + beta3 * q2;
        let p10 = q3 * alpha1 + q4 * q1;
        let p11 = q3 * beta1 + q4 * q2;
        let a3 = p00 * an + p01 * anp1;
        let b3 = p00 * bn + p01 * bnp1;
        let a4 = p10 * an + p11 * anp1;
        let b4 = p10 * bn + p11 * bnp1;
        let r0 = r;
        let inv_b = 1.0 / b4;
        r = a4 * inv_b;
        // Tested on every fourth convergent against the one four terms
        // back: stricter than BFRAC's test, at most three terms later.
        if (r - r0).abs() <= eps * r {
            break;
        }
        an = a3 * inv_b;
        bn = b3 * inv_b;
        anp1 = r;
        bnp1 = 1.0;
    }
    r
}

/// Temme's uniform asymptotic expansion of `I_x(a, b)` for a, b ≥ 15 near
/// the mean, λ = (a + b)y − b ≥ 0, in the form of DiDonato & Morris 1992
/// (routine BASYM: an erfc leading term plus up to 20 correction terms in
/// powers of 1/√min(a, b)), returned as the sum with
/// `I_x(a, b) = (2/√π)·e^{−f−Δ}·sum`. `f` is the exponent
/// a·rlog1(−λ/a) + b·rlog1(λ/b), shared with the prefactor, and Δ the
/// BCORR term.
fn asymptotic_sum(a: f64, b: f64, lambda: f64, eps: f64, f: f64) -> f64 {
    const NUM: usize = 20;
    const E0: f64 = std::f64::consts::FRAC_2_SQRT_PI;
    const E1: f64 = 0.353_553_390_593_274; // 2^(−3/2)
    debug_assert!(lambda >= 0.0);
    let z0 = f.sqrt();
    let z = z0 / E1 * 0.5;
    let z2 = f + f;
    let (h, r0, r1, w0) = if a < b {
        let h = a / b;
        (
            h,
            1.0 / (h + 1.0),
            (b - a) / b,
            1.0 / (a * (h + 1.0)).sqrt(),
        )
    } else {
        let h = b / a;
        (
            h,
            1.0 / (h + 1.0),
            (b - a) / a,
            1.0 / (b * (h + 1.0)).sqrt(),
        )
    };
    let mut a_coef = [0.0f64; NUM + 1];
    let mut b_coef = [0.0f64; NUM + 1];
    let mut c_coef = [0.0f64; NUM + 1];
    let mut d_coef = [0.0f64; NUM + 1];
    a_coef[0] = r1 * (2.0 / 3.0);
    c_coef[0] = -0.5 * a_coef[0];
    d_coef[0] = -c_coef[0];
    let mut j0 = 0.5 / E0 * erfc_scaled(z0);
    let mut j1 = E1;
    let mut sum = j0 + d_coef[0] * w0 * j1;
    // Size of the previous pair of terms, for the extrapolated stopping rule.
    let mut previous = (d_coef[0] * w0 * j1).abs();
    let mut s = 1.0;
    let h2 = h * h;
    let mut hn = 1.0;
    let mut w = w0;
    let mut znm1 = z;
    let mut zn = z2;
    let a0 = a_coef[0];
    let (mut a1, mut a2) = (0.0, 0.0);
    let mut n = 2;
    while n <= NUM {
        hn *= h2;
        let a_nm1 = r0 * 2.0 * (h * hn + 1.0) / (n as f64 + 2.0);
        let np1 = n + 1;
        s += hn;
        let a_n = r1 * 2.0 * s / (n as f64 + 3.0);
        a_coef[n - 1] = a_nm1;
        a_coef[np1 - 1] = a_n;
        // d_n and d_{n+1} come back in registers: reading them from the
        // array right after the scalar stores would be one 16-byte load over
        // two fresh 8-byte stores, which defeats store forwarding. The first
        // two passes (all that a, b ≳ 10³ need) use d_1…d_4 written out as
        // polynomials in a_0…a_4, which is DM's recursion for b, c and d
        // expanded by hand (checked against it in the tests below); the
        // arrays are filled only if a third pass is needed.
        let (d_n, d_np1) = match n {
            2 => {
                a1 = a_nm1;
                a2 = a_n;
                (
                    0.5 * a1 - 0.375 * a0 * a0,
                    a0 * (0.5 * a0 * a0 - a1) + 0.5 * a2,
                )
            }
            4 => {
                let (a3, a4) = (a_nm1, a_n);
                let a00 = a0 * a0;
                let d3 = a00 * (a1 * (35.0 / 16.0) - a00 * (105.0 / 128.0))
                    - a0 * a2 * 1.25
                    - a1 * a1 * 0.625
                    + 0.5 * a3;
                let d4 = a00 * (a0 * (1.5 * a00 - 5.0 * a1) + 3.0 * a2)
                    + a0 * (3.0 * a1 * a1 - 1.5 * a3)
                    - 1.5 * a1 * a2
                    + 0.5 * a4;
                (d3, d4)
            }
            _ => {
                if n == 6 {
                    for i in 2..=5 {
                        next_d_coefficient(i, &a_coef, &mut b_coef, &mut c_coef, &mut d_coef);
                    }
                }
                (
                    next_d_coefficient(n, &a_coef, &mut b_coef, &mut c_coef, &mut d_coef),
                    next_d_coefficient(np1, &a_coef, &mut b_coef, &mut c_coef, &mut d_coef),
                )
            }
        };
        j0 = E1 * znm1 + (n as f64 - 1.0) * j0;
        j1 = E1 * zn + n as f64 * j1;
        znm1 *= z2;
        zn *= z2;
        w *= w0;
        let t0 = d_n * w * j0;
        w *= w0;
        let t1 = d_np1 * w * j1;
        sum += t0 + t1;
        // Stop when the pair just added is below eps (DM's rule), or when the
        // terms still to come, extrapolated geometrically from the last two
        // pairs (ratio ≲ 1/min(a, b) here), are: the remainder, not the last
        // term added, is the error. This usually saves one or two passes of
        // the O(n²) coefficient recursion.
        let current = t0.abs() + t1.abs();
        let ratio = current / previous;
        if current <= eps * sum.abs() || (ratio < 0.25 && current * ratio <= 0.5 * eps * sum.abs())
        {
            break;
        }
        previous = current;
        n += 2;
    }
    sum
}

/// 1/m for m = 1..=22 (entry 0 unused).
const RECIPROCAL: [f64; 23] = {
    let mut table = [0.0; 23];
    let mut m = 1;
    while m < 23 {
        table[m] = 1.0 / m as f64;
        m += 1;
    }
    table
};

/// The coefficient d_i of BASYM (DiDonato & Morris 1992) from a_0…a_{i−1}
/// and d_0…d_{i−2}, filling b (recomputed for r = −(i + 1)/2), c_{i−1} and
/// d_{i−1}; returns d_{i−1}.
fn next_d_coefficient(
    i: usize,
    a_coef: &[f64],
    b_coef: &mut [f64],
    c_coef: &mut [f64],
    d_coef: &mut [f64],
) -> f64 {
    let r = (i as f64 + 1.0) * -0.5;
    b_coef[0] = r * a_coef[0];
    for m in 2..=i {
        // Σ_{j=1}^{m−1} (j·r − (m − j))·a_{j−1}·b_{m−j−1}, the hot loop of
        // the expansion. It stays a single scalar chain on purpose: the
        // b_{m−2} just stored would otherwise be reloaded by a 16-byte
        // vector load spanning two 8-byte stores, which defeats store
        // forwarding and stalls every step. The division by m is a
        // table lookup for the same reason (it sits in this chain).
        let mf = m as f64;
        let mut bsum = 0.0;
        let mut jf = 1.0;
        for (a_j, b_mj) in a_coef[..m - 1].iter().zip(b_coef[..m - 1].iter().rev()) {
            bsum += (jf * r - (mf - jf)) * a_j * b_mj;
            jf += 1.0;
        }
        b_coef[m - 1] = r * a_coef[m - 1] + bsum * RECIPROCAL[m];
    }
    c_coef[i - 1] = b_coef[i - 1] * RECIPROCAL[i + 1];
    let mut dsum = 0.0;
    for j in 1..i {
        dsum += d_coef[i - j - 1] * c_coef[j - 1];
    }
    let d = -(dsum + c_coef[i - 1]);
    d_coef[i - 1] = d;
    d
}

#[cfg(test)]
mod tests {
    use super::*;

    #[test]
    fn closed_forms_match_general_path() {
        let (w, w1) = incomplete_beta(1.0, 5.0, 0.2, 0.8);
        assert!((w - (1.0 - 0.8f64.powi(5))).abs() < 1e-15);
        assert!((w1 - 0.8f64.powi(5)).abs() < 1e-15);
        let (w, _) = incomplete_beta(3.0, 1.0, 0.2, 0.8);
        assert!((w - 0.008).abs() < 1e-17);
    }

    #[test]
    fn basym_closed_form_coefficients_match_recursion() {
        // d_1…d_4 as used in `asymptotic_sum` against `next_d_coefficient`.
        for &(h, r1) in &[
            (0.3, 0.7),
            (1.0, 0.0),
            (0.01, 0.99),
            (0.9, -0.1),
            (0.5, 0.5),
        ] {
            let r0 = 1.0 / (1.0 + h);
            let mut a = [0.0f64; 21];
            a[0] = r1 * (2.0 / 3.0);
            let (mut hn, mut s) = (1.0, 1.0);
            for n in [2usize, 4] {
                hn *= h * h;
                a[n - 1] = r0 * 2.0 * (h * hn + 1.0) / (n as f64 + 2.0);
                s += hn;
                a[n] = r1 * 2.0 * s / (n as f64 + 3.0);
            }
            let (mut b, mut c, mut d) = ([0.0f64; 21], [0.0f64; 21], [0.0f64; 21]);
            c[0] = -0.5 * a[0];
            d[0] = -c[0];
            let recursion: Vec<f64> = (2..=5)
                .map(|i| next_d_coefficient(i, &a, &mut b, &mut c, &mut d))
                .collect();
            let (a0, a1, a2, a3, a4) = (a[0], a[1], a[2], a[3], a[4]);
            let closed = [
                0.5 * a1 - 0.375 * a0 * a0,
                a0 * (0.5 * a0 * a0 - a1) + 0.5 * a2,
                a0 * a0 * (a1 * (35.0 / 16.0) - a0 * a0 * (105.0 / 128.0))
                    - a0 * a2 * 1.25
                    - a1 * a1 * 0.625
                    + 0.5 * a3,
                a0 * a0 * (a0 * (1.5 * a0 * a0 - 5.0 * a1) + 3.0 * a2)
                    + a0 * (3.0 * a1 * a1 - 1.5 * a3)
                    - 1.5 * a1 * a2
                    + 0.5 * a4,
            ];
            for (r, c) in recursion.iter().zip(closed.iter()) {
                assert!((r - c).abs() <= 1e-15 * (1.0 + r.abs()), "{r} vs {c}");
            }
        }
    }
}
