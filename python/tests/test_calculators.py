"""The calculators against the committed reference values.

fixtures/reference/*.csv were computed by scripts/reference_values.py and
scripts/reference_claims_splits.py with mpmath at 50 significant digits (and scipy),
from the definitions, independently of the library (the first line of each file
names the versions). Sources: Clopper & Pearson (1934) and Langford (2005) for the
bounds; Hoeffding (1963); SPEC §11 for split reuse; Cover (1965) and Sauer (1972)
for the growth functions.
"""

from __future__ import annotations

import csv
import doctest
import math
from decimal import Decimal

import pytest

import gapcert
import gapcert._calculators

from conftest import ROOT


def _reference(name: str) -> list:
    path = ROOT / "fixtures" / "reference" / name
    with open(path, newline="") as handle:
        provenance = handle.readline()
        assert provenance.startswith("#") and "mpmath" in provenance, provenance
        return list(csv.DictReader(handle))


def _relative(got: float, want: float) -> float:
    return abs(got) if want == 0 else abs((got - want) / want)


def _complement(text: str) -> float:
    """1 − x for a decimal written as `text`, exactly, then rounded once."""
    return float(Decimal(1) - Decimal(text))


def test_binomial_bounds_match_mpmath_to_1e10_relative():
    rows = _reference("binomial_bounds.csv")
    assert len(rows) > 1000
    worst = 0.0
    for row in rows:
        k, n, alpha, want = int(row["k"]), int(row["n"]), float(row["alpha"]), float(row["value"])
        bound = gapcert.upper_bound if row["bound"] == "upper" else gapcert.lower_bound
        got = bound(k, n, alpha=alpha)
        error = _relative(got, want)
        worst = max(worst, error)
        assert error <= 1e-10, (row, got)
    print(f"\n{len(rows)} binomial bounds, worst relative error {worst:.2e}")


def test_confidence_and_candidates_give_the_level():
    # α = (1 − confidence) / candidates, with 1 − 0.95 taken as the decimal 0.05.
    for errors, n in [(0, 10), (12, 2000), (68, 500), (499, 500), (500, 500)]:
        assert gapcert.upper_bound(errors, n) == gapcert.upper_bound(errors, n, alpha=0.05)
        assert gapcert.lower_bound(errors, n, 0.99, 4) == gapcert.lower_bound(errors, n, alpha=0.0025)
    # The worked example of fixtures/worked/README.md: 68 errors in 500, K = 2.
    assert round(gapcert.upper_bound(68, 500, candidates=2), 4) == 0.1692
    assert round(gapcert.lower_bound(68, 500, candidates=2), 4) == 0.1072
    assert gapcert.upper_bound(500, 500) == 1.0 and gapcert.lower_bound(0, 500) == 0.0


def test_held_out_and_training_sizes_match_the_brute_force_values():
    rows = _reference("sample_sizes.csv")
    for row in rows:
        want = int(row["value"])
        confidence = _complement(row["alpha_or_delta"])
        if row["kind"].startswith("holdout_"):
            got = gapcert.holdout_needed(
                float(row["rate_or_family"]),
                _complement(row["claim_error_or_tolerance"]),
                confidence=confidence,
                method=row["kind"].split("_")[1],
            )
        else:
            params = dict(pair.split("=") for pair in row["params"].split())
            got = gapcert.train_needed(
                row["rate_or_family"],
                tolerance=float(row["claim_error_or_tolerance"]),
                confidence=confidence,
                **{name: int(value) for name, value in params.items()},
            )
        assert got == want, row


def test_split_reuse_matches_the_reference_script():
    rows = _reference("reuse.csv")
    assert len(rows) >= 80
    for row in rows:
        k, n = int(row["k"]), int(row["n"])
        claim = _complement(row["claim_error"])
        confidence = _complement(row["delta"])
        rate = k / n
        want = None if row["max_candidates"] == "" else int(row["max_candidates"])
        assert gapcert.max_candidates(n, rate, claim, confidence) == want, row
        want = None if row["hoeffding_max_candidates"] == "" else int(row["hoeffding_max_candidates"])
        assert gapcert.max_candidates(n, rate, claim, confidence, method="hoeffding") == want, row


def test_the_readme_reuse_example():
    # README: 86 errors in 2,400 clips, claim 95 %: K_max = 96.
    assert gapcert.max_candidates(2400, 0.0358333, 0.95) == 96
    assert gapcert.max_candidates(2400, 0.0358333, 0.95, method="hoeffding") is None


def test_growth_functions_are_the_known_facts():
    # SPEC §5b.
    assert [r.growth for r in gapcert.growth("ray", 4)] == [2, 3, 4, 5]
    plane = {r.n: r.growth for r in gapcert.growth("linear", 5, dim=2)}
    assert (plane[3], plane[4], plane[5]) == (8, 14, 22)
    boxes = {r.n: r.growth for r in gapcert.growth("box", 5, dim=2)}
    assert boxes[4] == 16 and boxes[5] < 32
    # Exact integers beyond 64 bits, and their logarithms.
    rows = gapcert.growth("vc", 200, vc_dim=150)
    assert rows[-1].growth > 2**64 and isinstance(rows[-1].growth, int)
    assert math.isclose(rows[-1].growth_ln, math.log(rows[-1].growth), rel_tol=1e-12)


def test_growth_logarithms_match_mpmath():
    for row in _reference("growth_ln.csv"):
        n = int(row["n"])
        if n > 2000:
            continue  # the table lists every N up to `upto`: keep it small
        params = dict(pair.split("=") for pair in row["params"].split())
        rows = gapcert.growth(row["family"], n, **{k: int(v) for k, v in params.items()})
        assert _relative(rows[-1].growth_ln, float(row["ln_growth"])) < 1e-12, row


def test_families_and_parameters():
    keys = [family["key"] for family in gapcert.families()]
    assert {"ray", "linear", "vc", "relu_net"} <= set(keys)
    assert gapcert.FAMILY_PARAMETERS == (
        "dim", "vc_dim", "size", "weights", "layers", "units", "leaves", "features",
    )
    assert gapcert.train_needed("svm_rbf") is None if "svm_rbf" in keys else True


@pytest.mark.parametrize(
    "call, error, words",
    [
        (lambda: gapcert.upper_bound(5, 0), ValueError, "n must be at least 1"),
        (lambda: gapcert.upper_bound(6, 5), ValueError, "more than n"),
        (lambda: gapcert.upper_bound(1, 5, confidence=95), ValueError, "confidence 95"),
        (lambda: gapcert.upper_bound(1, 5, candidates=0), ValueError, "candidates must be at least 1"),
        (lambda: gapcert.upper_bound(1, 5, alpha=0), ValueError, "alpha"),
        (lambda: gapcert.upper_bound(1.5, 5), TypeError, "whole number"),
        (lambda: gapcert.holdout_needed(1.5, 0.9), ValueError, "error_rate 1.5 is outside [0, 1]"),
        (lambda: gapcert.holdout_needed(0.1, 0.9, method="exact"), ValueError, "binomial"),
        (lambda: gapcert.train_needed("linear"), ValueError, "dim"),
        (lambda: gapcert.train_needed("linear", dimension=3), TypeError, "not a family parameter"),
        (lambda: gapcert.train_needed("lineer", dim=3), ValueError, "linear"),
        (lambda: gapcert.growth("ray", 0), ValueError, "upto"),
        (lambda: gapcert.max_candidates(0, 0.1, 0.9), ValueError, "holdout_n"),
    ],
)
def test_bad_arguments(call, error, words):
    with pytest.raises(error) as raised:
        call()
    assert words in str(raised.value)


def test_docstring_examples():
    for module in (gapcert, gapcert._calculators):
        failures, tried = doctest.testmod(module, raise_on_error=False, verbose=False)
        assert tried > 0 and failures == 0, module.__name__
