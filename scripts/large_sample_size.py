#!/usr/bin/env python3
"""Exact reference for one large held-out sample size (tests/it/theory_facts.rs).

holdout_needed (SPEC §4, binomial): the smallest n with U(k(n), n, alpha) <= c, where
k(n) = ceil(rate * n) and U is the Clopper-Pearson upper bound; U <= c exactly when
P[Bin(n, c) <= k] <= alpha. Here rate, c and alpha are the IEEE doubles as given, k(n) is
the exact ceiling in rational arithmetic (fractions), and the binomial tail is summed
term by term in mpmath at 40 digits (from the k-th term down until terms fall below
1e-35 of the sum). scipy's binom.logcdf only screens which stretch of n (equal k) to
check exactly.

The case comes from an invented sweep log (benches, seed 7): at n near 7e7 the
rounding slack of gapcert's errors_at (then 1e-9 relative, 0.016 of a count) made the
search skip the answer.

Requires: mpmath 1.3.0, scipy 1.17.1, numpy. Prints: rate claim alpha answer.
"""
import math
from fractions import Fraction

import mpmath
import numpy as np
from scipy import stats

mpmath.mp.dps = 40
RATE, CLAIM, ALPHA = 0.2248581071203849, 0.22499999999999998, 0.002272727272727275
R = Fraction(RATE)


def k_of(n):
    return -((-R.numerator * n) // R.denominator)


def n_end(k):
    """Largest n with ceil(rate * n) == k."""
    return (k * R.denominator) // R.numerator


def tail(k, n):
    c = mpmath.mpf(CLAIM)
    q = 1 - c
    term = mpmath.exp(mpmath.loggamma(n + 1) - mpmath.loggamma(k + 1) - mpmath.loggamma(n - k + 1)
                      + k * mpmath.log(c) + (n - k) * mpmath.log(q))
    total, j = term, k
    while j > 0:
        term = term * j / (n - j + 1) * (q / c)
        total += term
        j -= 1
        if term < total * mpmath.mpf(10) ** -35:
            break
    return total


def main():
    ks = np.arange(k_of(69_690_000), k_of(69_740_000) + 1)
    ends = np.array([n_end(int(k)) for k in ks])
    margins = stats.binom.logcdf(ks, ends, CLAIM) - math.log(ALPHA)
    assert margins[0] > 1e-3, "the scan must start where certification clearly fails"
    first = int(np.argmax(margins <= 0))
    # Exact checks: the first certifying stretch, and the three before it fail.
    for i in range(first - 3, first + 1):
        certifies = tail(int(ks[i]), int(ends[i])) <= ALPHA
        assert certifies == (i == first), (int(ks[i]), int(ends[i]))
    k, low, high = int(ks[first]), int(ends[first - 1]), int(ends[first])
    while high - low > 1:
        middle = (low + high) // 2
        if tail(k, middle) <= ALPHA:
            high = middle
        else:
            low = middle
    print(RATE, CLAIM, ALPHA, high)


if __name__ == "__main__":
    main()
