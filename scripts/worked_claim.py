#!/usr/bin/env python3
"""The worked paired comparison of fixtures/worked/README.md (invented data), computed
with mpmath at 40 significant digits from the definitions of SPEC section 10, without
scipy and without gapcert's algorithms:

- Clopper & Pearson (1934) bounds as roots of the binomial tail equations, the tails
  summed exactly term by term (fractions of integers times powers of p);
- Delta = q (2 theta - 1) over the box of the bounds on theta (r of m) and on q
  (m of n), each at level alpha/2, alpha = delta / K;
- McNemar (1947), exact conditional one-sided p = P[Bin(m, 1/2) <= r] as an exact
  fraction.

Writes fixtures/worked/expected_claims.json and prints the numbers the README quotes.
Usage: python3 scripts/worked_claim.py   (from the repository root). Requires mpmath.
"""
import json
from fractions import Fraction
from math import comb

import mpmath as mp

mp.mp.dps = 40

N = 500                    # held-out examples of wk-split-a
K_STUMP, K_PLANE = 41, 68  # errors of wk-stump and wk-plane (fixtures/worked/runs.csv)
R, S = 12, 39              # only wk-stump wrong, only wk-plane wrong
DELTA = mp.mpf("0.05")
K = 2                      # models compared on wk-split-a
ALPHA = DELTA / K
HALF = ALPHA / 2
assert K_STUMP - R == K_PLANE - S  # 29 examples both got wrong


def cdf_le(n, k, p):
    """P[Bin(n, p) <= k], summed exactly."""
    return mp.fsum(comb(n, j) * p ** j * (1 - p) ** (n - j) for j in range(0, k + 1))


def bisect(decreasing, level):
    """The p in (0, 1) where the decreasing function crosses level: 150 halvings
    (the interval is then far below 40 digits)."""
    lo, hi = mp.mpf(0), mp.mpf(1)
    for _ in range(150):
        mid = (lo + hi) / 2
        if decreasing(mid) > level:
            lo = mid
        else:
            hi = mid
    return (lo + hi) / 2


def upper(k, n, level):
    """Largest p with P[Bin(n, p) <= k] = level (1 when k = n)."""
    if k >= n:
        return mp.mpf(1)
    return bisect(lambda p: cdf_le(n, k, p), level)


def lower(k, n, level):
    """Smallest p with P[Bin(n, p) >= k] = level (0 when k = 0)."""
    if k == 0:
        return mp.mpf(0)
    # P[Bin(n, p) >= k] rises with p: bisect its complement, which falls.
    return bisect(lambda p: cdf_le(n, k - 1, p), 1 - level)


m = R + S
theta_lo, theta_hi = lower(R, m, HALF), upper(R, m, HALF)
q_lo, q_hi = lower(m, N, HALF), upper(m, N, HALF)
corners = [q * (2 * t - 1) for q in (q_lo, q_hi) for t in (theta_lo, theta_hi)]
delta_lo, delta_hi = min(corners), max(corners)
mcnemar = Fraction(sum(comb(m, j) for j in range(0, R + 1)), 2 ** m)
for name, value, level, k, n, side in [
    ("theta_lo", theta_lo, HALF, R, m, "ge"), ("theta_hi", theta_hi, HALF, R, m, "le"),
    ("q_lo", q_lo, HALF, m, N, "ge"), ("q_hi", q_hi, HALF, m, N, "le")]:
    tail = cdf_le(n, k, value) if side == "le" else 1 - cdf_le(n, k - 1, value)
    assert abs(tail - level) < mp.mpf("1e-35"), (name, tail)

result = {
    "description": "Invented worked paired comparison (fixtures/worked/README.md): wk-stump beats wk-plane on wk-split-a; mpmath at 40 significant digits (scripts/worked_claim.py), rounded to the nearest double.",
    "claim": "wk-stump-beats-plane",
    "alpha": float(ALPHA),
    "theta_lo": float(theta_lo), "theta_hi": float(theta_hi),
    "q_lo": float(q_lo), "q_hi": float(q_hi),
    "lower": float(delta_lo), "upper": float(delta_hi),
    "mcnemar_p": float(mcnemar),
    "verdict": "certified" if delta_hi <= 0 else ("refuted" if delta_lo > 0 else "unproven"),
}
with open("fixtures/worked/expected_claims.json", "w") as out:
    json.dump(result, out, indent=1)
    out.write("\n")
for key in ["theta_lo", "theta_hi", "q_lo", "q_hi"]:
    print(key, mp.nstr(eval(key), 12))
print("corners", [mp.nstr(c, 12) for c in corners])
print("delta", mp.nstr(delta_lo, 12), mp.nstr(delta_hi, 12))
print("mcnemar", mp.nstr(mp.mpf(mcnemar.numerator) / mcnemar.denominator, 12))
print(result["verdict"])
