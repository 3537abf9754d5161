#!/usr/bin/env python3
"""Regenerate three reference tables in fixtures/reference/: exact binomial
bounds for paired and unpaired comparisons of two classifiers, and the cost of
reusing one held-out split for many comparisons.

Every value written is computed by mpmath at 50 significant digits
(mp.dps = 50), separately from gapcert's own algorithms, then rounded to the
nearest double and written as Python repr(float(x)) so that it reads back
exactly. Integers are written plainly; a missing value (null) is an empty
cell. The first line of each CSV is a comment giving the mpmath, scipy,
statsmodels, numpy and python versions used.

Notation. U(k, n, a) and L(k, n, a) are the one-sided Clopper & Pearson (1934)
bounds for k successes in n trials at level a:

- U(k, n, a) is the root p of P[Bin(n, p) <= k] = a, which equals
  scipy.stats.beta.isf(a, k + 1, n - k) (the same number as
  beta.ppf(1 - a, k + 1, n - k), but without rounding 1 - a to a double,
  which costs about 1e-16 / a relative accuracy in a; at a = 5e-13 that is
  2e-4). U = 1 when k == n (this includes n == 0).
- L(k, n, a) is the root p of P[Bin(n, p) >= k] = a, which equals
  scipy.stats.beta.ppf(a, k, n - k + 1). L = 0 when k == 0 (this includes
  n == 0).

1. paired_bounds.csv
   columns r,s,n,alpha,theta_lo,theta_hi,q_lo,q_hi,delta_lo,delta_hi,mcnemar_p
   Two classifiers scored on the same n examples; r examples only the first
   got wrong, s examples only the second got wrong, m = r + s discordant
   examples. theta = P(first wrong | discordant), q = discordant rate, so the
   difference in error rates (first minus second) is q (2 theta - 1).
   With a = alpha / 2:
     theta_lo = L(r, m, a), theta_hi = U(r, m, a),
     q_lo = L(m, n, a),     q_hi = U(m, n, a),
     delta_hi = max and delta_lo = min of q (2 theta - 1) over the box
       theta in [theta_lo, theta_hi], q in [q_lo, q_hi]; the function is
       bilinear, so the extremes are at the four corners.
     mcnemar_p = P[Bin(m, 1/2) <= r], the exact one-sided, conditional form
       of McNemar's (1947) test; 1.0 when m == 0.
   Grid: 46 (r, s, n) cases times alpha in {0.05, 0.01, 1e-4, 1e-8,
   1e-12}: m = 0; r = 0 < s; s = 0 < r (r = m); r = s; m = n; small counts
   (1..10); moderate counts (20..300 with n = 1000..20000); large n up to
   10^7 with m up to 200000.

2. unpaired_bounds.csv
   columns k_run,n_run,k_base,n_base,alpha,u_run,l_run,u_base,l_base,
           delta_lo,delta_hi
   Two classifiers scored on separate test sets: k_run errors in n_run and
   k_base errors in n_base. With a = alpha / 2:
     u_run = U(k_run, n_run, a), l_run = L(k_run, n_run, a), same for base;
     delta_hi = u_run - l_base, delta_lo = l_run - u_base
   (each one-sided bound at a, so by the union bound the interval for the
   difference in error rates holds with probability at least 1 - alpha).
   Grid: 20 (k_run, n_run, k_base, n_base) cases, including k = 0 and k = n,
   n from 1 to 10^7, times the same five alphas.

3. reuse.csv
   columns k,n,claim_error,delta,candidates,certifiable_now,
           certifiable_fresh,reuse_cost,max_candidates,comparisons_left,
           hoeffding_max_candidates
   A held-out split of n examples on which the best of K = candidates models
   made k errors; delta is the confidence budget, c = claim_error a claimed
   error rate. Choosing the best of K models on the split is paid for by a
   Bonferroni split of delta:
     certifiable_now   = 1 - U(k, n, delta / K)   (accuracy certifiable today)
     certifiable_fresh = 1 - U(k, n, delta)       (as if the split were fresh)
     reuse_cost        = certifiable_fresh - certifiable_now
     max_candidates    = the largest integer K' >= 1 with
       U(k, n, delta / K') <= c. Because U(k, n, a) <= c exactly when
       P[Bin(n, c) <= k] <= a, this is floor(delta / P[Bin(n, c) <= k]);
       null when that floor is 0, capped at 10^12.
     comparisons_left  = max_candidates - K when max_candidates is not null
       and >= K (10^12 - K when capped); null otherwise (the claim is not
       certified at today's K).
     hoeffding_max_candidates = floor(delta exp(2 n (c - k/n)^2)) when
       k/n < c and it is >= 1, capped at 10^12, null otherwise. This is the
       largest K with k/n + sqrt(ln(K / delta) / (2 n)) <= c, Hoeffding's
       (1963) one-sided bound with the same Bonferroni split.
   Cases where delta / P or delta exp(...) lies within 1e-9 relative of an
   integer (so the floor is not decided in double precision) are dropped, and
   the script prints each one.
   Grid: 17 (k, n, c) cases, n from 30 to 10^7, c in {0.01, 0.03, 0.05,
   0.1, 0.2}, each with delta in {0.05, 0.01, 0.001} and one or two values of
   K (K = 1 for most): certified up to the 10^12 cap (k = 0, n = 100000,
   c = 0.05), not certified at all, certified at K = 1 only, certified now
   with a few comparisons left, and an observed error rate above the claim.

How the mpmath values are computed and checked (independent of scipy):

- Binomial tails are summed term by term from the pmf, whose first term comes
  from mpmath.loggamma; the sum starts at j = k and moves away from k (past
  the mean when necessary) until terms are below 1e-60 of the sum.
- U and L are the roots of the defining tail equations, found by Newton's
  method in ln p (bisection in ln p as a fallback) until the step is below
  1e-42 relative; scipy's double value is used only as the starting point.
  The residual |tail / a - 1| must be below 1e-30 (asserted). k = 0 and
  k = n use the closed forms U(0, n, a) = 1 - a^(1/n), L(n, n, a) = a^(1/n).
- When the sample size is at most 5000 the residual is recomputed with
  mpmath.betainc(regularized=True) (P[Bin(n, p) <= k] = I_{1-p}(n - k, k + 1),
  P[Bin(n, p) >= k] = I_p(k, n - k + 1)) and must be below 1e-25 (asserted).
- Every bound is compared with scipy.stats.beta (isf for U, ppf for L); a
  relative difference above 1e-11 prints a note (the mpmath value is written
  in any case; with scipy 1.17.1 this happens only for small k with
  n = 10^7, where scipy is off by up to about 7e-11, confirmed by a direct
  binomial-sum root). The largest relative difference per file is printed at the
  end, together with the largest one of beta.ppf(1 - a, ...) for U, printed
  for information only.
- mcnemar_p is compared with scipy.stats.binom.cdf (relative 1e-11, or
  absolute 1e-300 below the smallest normal double) and, for m <= 2000,
  with the exact rational sum_{j <= r} C(m, j) / 2^m (Python integers). For a
  sample of cases the two-sided p value of statsmodels
  (statsmodels.stats.contingency_tables.mcnemar, exact=True) is checked to
  equal min(1, 2 min(P[X <= r], P[X >= r])) from the mpmath sums.
- delta_lo/delta_hi are compared with the same corners formed from scipy's
  bounds (difference divided by the largest |corner|; a note above 1e-11),
  and delta_lo <= delta_hi is asserted.
- In reuse.csv, P[Bin(n, c) <= k] is compared with scipy.stats.binom.cdf and,
  for n <= 2000, with the exact rational sum; max_candidates is confirmed by
  solving U(k, n, delta / K') for K' = max_candidates and max_candidates + 1
  (U <= c and U > c respectively); certifiable_now >= 1 - c is asserted to
  agree with max_candidates >= K; certifiable_now <= certifiable_fresh.

Usage: python3 scripts/reference_claims_splits.py   (from the repository root)
Requires: pip install mpmath scipy statsmodels numpy
"""

import math
import os
import sys
from fractions import Fraction

import mpmath as mp
import numpy as np
import scipy
import statsmodels
from scipy import stats
from statsmodels.stats.contingency_tables import mcnemar

mp.mp.dps = 50
OUT = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "fixtures", "reference")
HEADER = (
    f"# generated by scripts/reference_claims_splits.py with mpmath {mp.__version__} "
    f"(mp.dps = 50, 50 significant digits), scipy {scipy.__version__}, "
    f"statsmodels {statsmodels.__version__}, numpy {np.__version__}, "
    f"python {sys.version.split()[0]}"
)
TINY = mp.mpf(10) ** -60   # summation cut-off relative to the running sum
REL_TOL = 1e-11            # scipy vs mpmath
TIE_TOL = mp.mpf("1e-9")   # floors closer than this (relative) to an integer are dropped
CAP = 10**12
ALPHAS = ["0.05", "0.01", "1e-4", "1e-8", "1e-12"]
BETAINC_MAX_N = 5000


# ---------------------------------------------------------------- binomial tails
def ln_pmf(n, j, p):
    return (mp.loggamma(n + 1) - mp.loggamma(j + 1) - mp.loggamma(n - j + 1)
            + j * mp.log(p) + (n - j) * mp.log(1 - p))


def cdf_le(n, k, p):
    """P[Bin(n, p) <= k], summing downward from j = k."""
    if k >= n:
        return mp.mpf(1)
    p = mp.mpf(p)
    ratio = p / (1 - p)
    term = mp.exp(ln_pmf(n, k, p))
    total, j = term, k
    while j > 0:
        term = term * j / ((n - j + 1) * ratio)   # pmf(j - 1) from pmf(j)
        total += term
        j -= 1
        if term < total * TINY and j < n * p:
            break
    return total


def sf_ge(n, k, p):
    """P[Bin(n, p) >= k], summing upward from j = k."""
    if k <= 0:
        return mp.mpf(1)
    p = mp.mpf(p)
    ratio = p / (1 - p)
    term = mp.exp(ln_pmf(n, k, p))
    total, j = term, k
    while j < n:
        term = term * (n - j) * ratio / (j + 1)   # pmf(j + 1) from pmf(j)
        total += term
        j += 1
        if term < total * TINY and j > n * p:
            break
    return total


def exact_cdf_le(n, k, c):
    """P[Bin(n, c) <= k] as an exact rational; c a Fraction."""
    return sum(Fraction(math.comb(n, j)) * c**j * (1 - c) ** (n - j) for j in range(k + 1))


# ---------------------------------------------------------------- bound solver
def solve(f_and_slope, p0, a):
    """Root of f(p) = a for a monotone tail f: Newton in t = ln p, with a
    bisection fallback in t inside the bracket found so far."""
    la = mp.log(a)
    t_lo, t_hi = None, mp.mpf(0)
    p = mp.mpf(p0) if (p0 == p0 and 0 < p0 < 1) else mp.mpf("0.5")
    t = mp.log(p)
    for _ in range(3000):
        p = mp.exp(t)
        val, slope = f_and_slope(p)
        h = mp.log(val) - la
        if (h > 0) == (slope > 0):
            t_hi = t
        else:
            t_lo = t
        new = t - h * val / (slope * p)
        inside = (t_lo is None or new > t_lo) and new < t_hi
        if not inside:
            new = (t_lo + t_hi) / 2 if t_lo is not None else t_hi - 20
        if abs(new - t) <= mp.mpf(10) ** -42 * abs(t):
            return mp.exp(new)
        t = new
    raise RuntimeError("no convergence")


def cp_upper(k, n, a):
    """U(k, n, a): root p of P[Bin(n, p) <= k] = a."""
    a = mp.mpf(a)
    if k >= n:
        return mp.mpf(1)
    if k == 0:
        return -mp.expm1(mp.log(a) / n)

    def fs(p):
        return cdf_le(n, k, p), -n * mp.exp(ln_pmf(n - 1, k, p))

    p = solve(fs, float(stats.beta.isf(float(a), k + 1, n - k)), a)
    res = abs(cdf_le(n, k, p) / a - 1)
    assert res < mp.mpf(10) ** -30, f"U({k},{n},{a}): residual {res}"
    if n <= BETAINC_MAX_N:
        bi = mp.betainc(n - k, k + 1, 0, 1 - p, regularized=True)
        assert abs(bi / a - 1) < mp.mpf(10) ** -25, f"U({k},{n},{a}): betainc residual"
    return p


def cp_lower(k, n, a):
    """L(k, n, a): root p of P[Bin(n, p) >= k] = a."""
    a = mp.mpf(a)
    if k <= 0:
        return mp.mpf(0)
    if k == n:
        return mp.exp(mp.log(a) / n)

    def fs(p):
        return sf_ge(n, k, p), n * mp.exp(ln_pmf(n - 1, k - 1, p))

    p = solve(fs, float(stats.beta.ppf(float(a), k, n - k + 1)), a)
    res = abs(sf_ge(n, k, p) / a - 1)
    assert res < mp.mpf(10) ** -30, f"L({k},{n},{a}): residual {res}"
    if n <= BETAINC_MAX_N:
        bi = mp.betainc(k, n - k + 1, 0, p, regularized=True)
        assert abs(bi / a - 1) < mp.mpf(10) ** -25, f"L({k},{n},{a}): betainc residual"
    return p


def sp_upper(k, n, a):
    return 1.0 if k >= n else float(stats.beta.isf(a, k + 1, n - k))


def sp_upper_ppf(k, n, a):
    return 1.0 if k >= n else float(stats.beta.ppf(1 - a, k + 1, n - k))


def sp_lower(k, n, a):
    return 0.0 if k <= 0 else float(stats.beta.ppf(a, k, n - k + 1))


# ---------------------------------------------------------------- comparison bookkeeping
class Tracker:
    def __init__(self, name):
        self.name, self.max_rel, self.max_ppf_rel, self.notes = name, 0.0, 0.0, 0
        self.max_delta = 0.0

    def rel(self, x_mp, x_sp, what):
        x = float(x_mp)
        if x == x_sp:
            d = 0.0
        elif abs(x) < 2.2250738585072014e-308:
            d = 0.0 if abs(x - x_sp) <= 1e-300 else math.inf
        else:
            d = abs(x_sp - x) / abs(x)
        self.max_rel = max(self.max_rel, d)
        if d > REL_TOL:
            self.notes += 1
            print(f"  NOTE {self.name}: {what}: scipy {x_sp!r} vs mpmath {x!r} "
                  f"(relative {d:.3g}); the mpmath value is written")
        return d

    def ppf_rel(self, x_mp, x_sp):
        x = float(x_mp)
        if x != 0:
            self.max_ppf_rel = max(self.max_ppf_rel, abs(x_sp - x) / abs(x))

    def report(self):
        print(f"  {self.name}: largest scipy-vs-mpmath relative difference {self.max_rel:.3g}"
              f" ({self.notes} notes); differences delta_lo/delta_hi (scaled):"
              f" {self.max_delta:.3g}; beta.ppf(1 - a) form of U, for information"
              f" only: {self.max_ppf_rel:.3g}")


def bounds_checked(tr, k, n, alpha_s, label):
    """(L, U) in mpmath at a = alpha/2, compared with scipy."""
    a_mp = mp.mpf(alpha_s) / 2
    a_fl = float(alpha_s) / 2
    lo, hi = cp_lower(k, n, a_mp), cp_upper(k, n, a_mp)
    s_lo, s_hi = sp_lower(k, n, a_fl), sp_upper(k, n, a_fl)
    tr.rel(lo, s_lo, f"L({k},{n}) {label} alpha={alpha_s}")
    tr.rel(hi, s_hi, f"U({k},{n}) {label} alpha={alpha_s}")
    tr.ppf_rel(hi, sp_upper_ppf(k, n, a_fl))
    return lo, hi, s_lo, s_hi


def check_delta(tr, lo_mp, hi_mp, lo_sp, hi_sp, scale, what):
    """Differences of bounds can cancel, so they are compared with scipy's
    corners in absolute terms, scaled by the largest |corner|."""
    scale = max(scale, 1e-300)
    for name, x_mp, x_sp in (("delta_lo", lo_mp, lo_sp), ("delta_hi", hi_mp, hi_sp)):
        d = abs(float(x_mp) - x_sp) / scale
        tr.max_delta = max(tr.max_delta, d)
        if d > REL_TOL:
            tr.notes += 1
            print(f"  NOTE {tr.name}: {what}: {name} scipy {x_sp!r} vs mpmath "
                  f"{float(x_mp)!r} (difference / scale {d:.3g}); the mpmath value is written")
    assert lo_mp <= hi_mp, f"{what}: delta_lo > delta_hi"


# ---------------------------------------------------------------- 1. paired
PAIRED_CASES = [
    # m = 0
    (0, 0, 10), (0, 0, 1000), (0, 0, 10**7),
    # r = 0 < s
    (0, 1, 10), (0, 5, 100), (0, 50, 1000), (0, 300, 20000), (0, 40, 10**6),
    # s = 0 < r (r = m)
    (1, 0, 10), (7, 0, 50), (120, 0, 5000), (10000, 0, 10**7),
    # r = s
    (1, 1, 10), (5, 5, 100), (40, 40, 2000), (250, 250, 20000), (100000, 100000, 10**7),
    # m = n
    (3, 7, 10), (5, 5, 10), (10, 0, 10), (0, 10, 10), (400, 600, 1000),
    # small counts
    (1, 2, 10), (2, 1, 10), (3, 7, 20), (10, 4, 30), (6, 9, 100), (2, 10, 1000), (8, 1, 500),
    # moderate
    (20, 35, 1000), (35, 20, 1000), (100, 150, 5000), (150, 100, 5000), (300, 200, 20000),
    (60, 90, 10000), (280, 290, 20000), (25, 300, 8000), (200, 30, 3000),
    # large n
    (99000, 101000, 10**7), (101000, 99000, 10**7), (5000, 7000, 10**6),
    (50000, 60000, 10**7), (120000, 80000, 10**7), (10, 20, 10**7), (1000, 1500, 10**7),
    (30000, 30500, 10**6),
]


def mcnemar_mp(r, m):
    """P[Bin(m, 1/2) <= r]; above the median as 1 - P[X >= r + 1] so that
    rounding in a sum of nearly all the mass cannot exceed 1."""
    half = mp.mpf("0.5")
    if r >= m:
        return mp.mpf(1)
    if 2 * r >= m:
        return 1 - sf_ge(m, r + 1, half)
    return cdf_le(m, r, half)


def paired_rows():
    tr = Tracker("paired_bounds.csv")
    rows = []
    sm_checked = 0
    for (r, s, n) in PAIRED_CASES:
        m = r + s
        assert m <= n
        # McNemar: scipy, exact rationals, statsmodels.
        p_mp = mcnemar_mp(r, m)
        p_sp = 1.0 if m == 0 else float(stats.binom.cdf(r, m, 0.5))
        tr.rel(p_mp, p_sp, f"mcnemar_p r={r} m={m}")
        if m <= 2000 and m > 0:
            ex = Fraction(sum(math.comb(m, j) for j in range(r + 1)), 2**m)
            assert abs(p_mp / mp.mpf(ex.numerator) * ex.denominator - 1) < mp.mpf(10) ** -40
        if m > 0 and (m <= 2000 or sm_checked < 6 or m > 100000):
            both = min(1, 2 * min(p_mp, sf_ge(m, r, mp.mpf("0.5"))))
            sm = mcnemar([[n - m, r], [s, 0]], exact=True).pvalue
            two = float(both)
            assert (two == sm) or abs(two - sm) <= 1e-11 * two or (two < 1e-300 and sm < 1e-300), \
                f"statsmodels two-sided r={r} s={s}: {sm} vs {two}"
            sm_checked += 1
        assert 0 <= p_mp <= 1
        for alpha in ALPHAS:
            th_lo, th_hi, sth_lo, sth_hi = bounds_checked(tr, r, m, alpha, "theta")
            q_lo, q_hi, sq_lo, sq_hi = bounds_checked(tr, m, n, alpha, "q")
            corners = [q * (2 * t - 1) for q in (q_lo, q_hi) for t in (th_lo, th_hi)]
            s_corners = [q * (2 * t - 1) for q in (sq_lo, sq_hi) for t in (sth_lo, sth_hi)]
            d_lo, d_hi = min(corners), max(corners)
            check_delta(tr, d_lo, d_hi, min(s_corners), max(s_corners),
                        float(max(abs(c) for c in corners + [q_hi])), f"paired {r},{s},{n},{alpha}")
            assert th_lo <= th_hi and q_lo <= q_hi
            assert -1 <= d_lo <= d_hi <= 1
            rows.append((r, s, n, float(alpha), th_lo, th_hi, q_lo, q_hi, d_lo, d_hi, p_mp))
    print(f"  statsmodels two-sided McNemar cross-checked on {sm_checked} cases")
    return rows, tr


# ---------------------------------------------------------------- 2. unpaired
UNPAIRED_CASES = [
    (0, 100, 0, 100), (0, 1, 1, 1), (1, 1, 0, 1), (5, 5, 0, 10), (0, 1000, 3, 1000),
    (10, 10, 10, 20), (7, 50, 12, 60), (30, 1000, 45, 1000), (45, 1000, 30, 1200),
    (120, 5000, 150, 4000), (0, 10**5, 100, 10**5), (500, 10**4, 520, 10**4),
    (1000, 10**5, 0, 10**3), (2, 20, 200, 200), (5000, 10**6, 5200, 10**6),
    (90000, 10**6, 95000, 10**6), (0, 10**7, 1, 10**7), (200000, 10**7, 199000, 10**7),
    (10**7, 10**7, 0, 10**7), (150, 10**7, 40, 10**4),
]


def unpaired_rows():
    tr = Tracker("unpaired_bounds.csv")
    rows = []
    for (kr, nr, kb, nb) in UNPAIRED_CASES:
        for alpha in ALPHAS:
            l_run, u_run, sl_run, su_run = bounds_checked(tr, kr, nr, alpha, "run")
            l_base, u_base, sl_base, su_base = bounds_checked(tr, kb, nb, alpha, "base")
            d_hi, d_lo = u_run - l_base, l_run - u_base
            check_delta(tr, d_lo, d_hi, sl_run - su_base, su_run - sl_base,
                        float(max(u_run, u_base)), f"unpaired {kr},{nr},{kb},{nb},{alpha}")
            rows.append((kr, nr, kb, nb, float(alpha), u_run, l_run, u_base, l_base, d_lo, d_hi))
    return rows, tr


# ---------------------------------------------------------------- 3. reuse
REUSE_CASES = [
    # k, n, claimed error, candidate counts K
    (0, 100000, "0.05", [1, 1000]),       # certified up to the cap
    (0, 100, "0.05", [1, 5]),             # a few comparisons left (none at delta = 0.001)
    (0, 50, "0.05", [1]),                 # not certified at all
    (0, 30, "0.1", [1, 2]),               # certified at K = 1 only
    (3, 100, "0.1", [1, 4]),
    (10, 1000, "0.03", [1, 3]),
    (1, 1000, "0.01", [1, 20]),
    (45, 1000, "0.1", [1, 10]),           # both floors finite
    (60, 1000, "0.05", [1]),              # observed rate above the claim
    (400, 10000, "0.05", [100]),
    (450, 10000, "0.05", [1, 3]),
    (90000, 10**6, "0.1", [50]),          # capped
    (99000, 10**6, "0.1", [1, 30]),
    (99000, 10**7, "0.01", [1, 10]),
    (190000, 10**7, "0.02", [10**6]),     # capped; Hoeffding finite
    (199000, 10**7, "0.02", [1, 2]),
    (1995000, 10**7, "0.2", [1, 500]),
]
DELTAS = ["0.05", "0.01", "0.001"]


def near_integer(x):
    """True when floor(x), capped at CAP, is not decided by a 1e-9 relative
    margin: x within 1e-9 relative of an integer <= CAP (above the cap only
    CAP itself matters)."""
    x = mp.mpf(x)
    if x < mp.mpf("0.5"):
        return False
    nearest = mp.mpf(CAP) if x > CAP else mp.nint(x)
    return abs(x - nearest) <= TIE_TOL * x


def reuse_rows():
    tr = Tracker("reuse.csv")
    rows, dropped = [], []
    u_cache = {}

    def U(k, n, a):
        key = (k, n, a)
        if key not in u_cache:
            u_cache[key] = cp_upper(k, n, a)
        return u_cache[key]

    for (k, n, c_s, Ks) in REUSE_CASES:
        c = mp.mpf(c_s)
        P = cdf_le(n, k, c)
        tr.rel(P, float(stats.binom.cdf(k, n, float(c_s))), f"P[Bin({n},{c_s}) <= {k}]")
        if n <= 2000:
            ex = exact_cdf_le(n, k, Fraction(c_s))
            assert abs(P / (mp.mpf(ex.numerator) / ex.denominator) - 1) < mp.mpf(10) ** -40
        ehat = mp.mpf(k) / n
        for d_s in DELTAS:
            delta = mp.mpf(d_s)
            x = delta / P
            y = delta * mp.exp(2 * n * (c - ehat) ** 2) if ehat < c else None
            if near_integer(x) or (y is not None and near_integer(y)):
                msg = (f"k={k} n={n} c={c_s} delta={d_s}: delta/P = {mp.nstr(x, 15)}"
                       + (f", hoeffding {mp.nstr(y, 15)}" if y is not None else ""))
                dropped.append(msg)
                print("  dropped (floor within 1e-9 of an integer):", msg)
                continue
            fl = int(mp.floor(x)) if x < 2 * CAP else 2 * CAP
            max_c = None if fl == 0 else min(fl, CAP)
            hfl = int(mp.floor(y)) if (y is not None and y < 2 * CAP) else (2 * CAP if y is not None else 0)
            hoef = None if hfl == 0 else min(hfl, CAP)
            # confirm max_candidates through the bound itself
            if max_c is not None and max_c < CAP:
                assert U(k, n, delta / max_c) <= c
                assert U(k, n, delta / (max_c + 1)) > c
            elif max_c is None:
                assert U(k, n, delta) > c
            else:
                assert U(k, n, delta / CAP) <= c
            if hoef is not None and hoef < CAP:
                assert ehat + mp.sqrt(mp.log(hoef / delta) / (2 * n)) <= c
                assert ehat + mp.sqrt(mp.log((hoef + 1) / delta) / (2 * n)) > c
            fresh_hi = U(k, n, delta)
            sp_fresh = sp_upper(k, n, float(d_s))
            tr.rel(fresh_hi, sp_fresh, f"U({k},{n},{d_s})")
            tr.ppf_rel(fresh_hi, sp_upper_ppf(k, n, float(d_s)))
            for K in Ks:
                now_hi = U(k, n, delta / K)
                tr.rel(now_hi, sp_upper(k, n, float(d_s) / K), f"U({k},{n},{d_s}/{K})")
                tr.ppf_rel(now_hi, sp_upper_ppf(k, n, float(d_s) / K))
                now, fresh = 1 - now_hi, 1 - fresh_hi
                assert now <= fresh
                certified = max_c is not None and max_c >= K
                assert certified == (now >= 1 - c), f"k={k} n={n} c={c_s} K={K}"
                left = (CAP - K if max_c == CAP else max_c - K) if certified else None
                rows.append((k, n, float(c_s), float(d_s), K, now, fresh, fresh - now,
                             max_c, left, hoef))
    return rows, tr, dropped


# ---------------------------------------------------------------- output
def cell(x):
    if x is None:
        return ""
    if isinstance(x, (bool, np.bool_)):
        raise TypeError("bool cell")
    if isinstance(x, int):
        return str(x)
    return repr(float(x))


def write(name, header, rows):
    path = os.path.join(OUT, name)
    with open(path, "w") as f:
        f.write(HEADER + "\n")
        f.write(header + "\n")
        for r in rows:
            f.write(",".join(cell(x) for x in r) + "\n")
    # read back: every float cell must round-trip
    with open(path) as f:
        lines = f.read().splitlines()[2:]
    for line, r in zip(lines, rows):
        for text, x in zip(line.split(","), r):
            if x is not None and not isinstance(x, int):
                assert float(text) == float(x)
    print("wrote", os.path.relpath(path), len(rows), "rows")


def main():
    os.makedirs(OUT, exist_ok=True)
    print(HEADER)
    trackers = []
    rows, tr = paired_rows()
    write("paired_bounds.csv",
          "r,s,n,alpha,theta_lo,theta_hi,q_lo,q_hi,delta_lo,delta_hi,mcnemar_p", rows)
    trackers.append(tr)
    rows, tr = unpaired_rows()
    write("unpaired_bounds.csv",
          "k_run,n_run,k_base,n_base,alpha,u_run,l_run,u_base,l_base,delta_lo,delta_hi", rows)
    trackers.append(tr)
    rows, tr, dropped = reuse_rows()
    write("reuse.csv",
          "k,n,claim_error,delta,candidates,certifiable_now,certifiable_fresh,reuse_cost,"
          "max_candidates,comparisons_left,hoeffding_max_candidates", rows)
    trackers.append(tr)
    print("summary:")
    for t in trackers:
        t.report()
    print(f"  dropped reuse cases: {len(dropped)}")
    for d in dropped:
        print("   ", d)


if __name__ == "__main__":
    main()
