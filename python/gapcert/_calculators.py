"""The calculators: exact binomial bounds, held-out and training sizes, growth
functions and split reuse (the library's, as ``gapcert plan`` and ``gapcert growth``
use them)."""

from __future__ import annotations

import json
import numbers
from typing import Any, Dict, List, Literal, NamedTuple, Optional

from . import _core

__all__ = [
    "GrowthRow",
    "families",
    "growth",
    "holdout_needed",
    "lower_bound",
    "max_candidates",
    "train_needed",
    "upper_bound",
]


def _count(name: str, value: Any, minimum: int) -> int:
    if isinstance(value, bool) or not isinstance(value, numbers.Integral):
        raise TypeError(f"{name} must be a whole number, not {type(value).__name__}")
    value = int(value)
    if value < minimum:
        raise ValueError(f"{name} must be at least {minimum}, not {value}")
    return value


def _real(name: str, value: Any) -> float:
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise TypeError(f"{name} must be a number, not {type(value).__name__}")
    return float(value)


def _method(method: str) -> int:
    if method == "binomial":
        return 0
    if method == "hoeffding":
        return 1
    raise ValueError(f'method {method!r}: choose "binomial" or "hoeffding"')


def _bound(which: Literal["upper", "lower"], errors: Any, n: Any, confidence: Any, candidates: Any, alpha: Any) -> float:
    return _core.bound(
        which,
        _count("errors", errors, 0),
        _count("n", n, 1),
        _real("confidence", confidence),
        _count("candidates", candidates, 1),
        None if alpha is None else _real("alpha", alpha),
    )


def upper_bound(
    errors: int,
    n: int,
    confidence: float = 0.95,
    candidates: int = 1,
    *,
    alpha: Optional[float] = None,
) -> float:
    """One-sided upper confidence bound on the true error rate, given ``errors``
    misclassified of ``n`` held-out examples: the exact binomial (Clopper–Pearson)
    bound at level α = (1 − confidence) / candidates, the largest p with
    P[Bin(n, p) ≤ errors] ≥ α, i.e. BetaInv(1 − α; errors + 1, n − errors); 1 when
    errors = n. ``candidates`` counts the models compared on the same held-out
    set (a union bound over them). ``alpha`` gives the level directly instead.

    Sources: Clopper & Pearson (1934); Langford (2005), the test set bound.

    >>> round(upper_bound(12, 2000), 6)
    0.009703
    """
    return _bound("upper", errors, n, confidence, candidates, alpha)


def lower_bound(
    errors: int,
    n: int,
    confidence: float = 0.95,
    candidates: int = 1,
    *,
    alpha: Optional[float] = None,
) -> float:
    """One-sided lower confidence bound on the true error rate: the smallest p
    with P[Bin(n, p) ≥ errors] ≥ α, i.e. BetaInv(α; errors, n − errors + 1), at
    level α = (1 − confidence) / candidates (or ``alpha``); 0 when errors = 0.

    >>> round(lower_bound(12, 2000), 6)
    0.003466
    """
    return _bound("lower", errors, n, confidence, candidates, alpha)


def holdout_needed(
    error_rate: float,
    claim_accuracy: float,
    confidence: float = 0.95,
    candidates: int = 1,
    method: str = "binomial",
) -> Optional[int]:
    """The smallest held-out size at which a held-out set with the observed
    ``error_rate`` certifies ``claim_accuracy`` (``gapcert plan holdout``).

    ``method="binomial"``: exact, with k = ⌈error_rate · n⌉ errors;
    ``"hoeffding"``: ⌈ln(K/δ) / (2(c − ê)²)⌉. None when no size can (the error
    rate is at or above the claimed error rate). ``candidates`` = K models compared
    on the split, δ = 1 − confidence.

    >>> holdout_needed(0.136, 0.85, candidates=2)
    2544
    """
    choice = _method(method)
    plan = _core.plan_holdout(
        _real("error_rate", error_rate),
        _real("claim_accuracy", claim_accuracy),
        _count("candidates", candidates, 1),
        _real("confidence", confidence),
    )
    return plan[choice]


def max_candidates(
    holdout_n: int,
    error_rate: float,
    claim_accuracy: float,
    confidence: float = 0.95,
    method: str = "binomial",
) -> Optional[int]:
    """How many models in all (K) can be compared on a held-out split of
    ``holdout_n`` examples before a best run with ``error_rate`` (k = ⌈E·N⌉
    errors) stops certifying ``claim_accuracy`` (``gapcert plan reuse``).

    ``method="binomial"``: ⌊δ / P[Bin(N, c) ≤ k]⌋ (exact); ``"hoeffding"``:
    ⌊δ·exp(2N(c − ê)²)⌋. None when even K = 1 fails; capped at 10¹².

    >>> max_candidates(2400, 0.0358333, 0.95)
    96
    """
    choice = _method(method)
    plan = _core.plan_reuse(
        _count("holdout_n", holdout_n, 1),
        _real("error_rate", error_rate),
        _real("claim_accuracy", claim_accuracy),
        _real("confidence", confidence),
    )
    return plan[choice]


def _params(params: Dict[str, Any]) -> Dict[str, int]:
    checked = {}
    for name, value in params.items():
        if name not in _core.FAMILY_PARAMETERS:
            raise TypeError(
                f"{name} is not a family parameter; the parameters are "
                + ", ".join(_core.FAMILY_PARAMETERS)
            )
        if isinstance(value, bool) or not isinstance(value, numbers.Integral):
            raise TypeError(f"{name} must be a whole number, not {type(value).__name__}")
        checked[name] = int(value)
    return checked


def train_needed(
    family: str,
    tolerance: float = 0.05,
    confidence: float = 0.95,
    **params: int,
) -> Optional[int]:
    """The smallest training size N at which the VC allowance
    Ω(N) = sqrt((8/N) · ln(4 · m_H(2N) / δ)) is at most ``tolerance``
    (``gapcert plan train``); None for a family without a finite growth bound.

    ``params`` are the family's parameters (``dim=``, ``vc_dim=``, ``size=``,
    ``weights=``, ``layers=``, ``units=``, ``leaves=``, ``features=``; see
    :func:`families`).

    >>> train_needed("linear", dim=2, tolerance=0.1) > 10_000
    True
    """
    needed, _vc_dim, _allowance = _core.plan_train(
        str(family), _params(params), _real("tolerance", tolerance), _real("confidence", confidence)
    )
    return needed


class GrowthRow(NamedTuple):
    """One row of :func:`growth`: N, m_H(N) exactly, and ln m_H(N)."""

    n: int
    growth: int
    growth_ln: float


def growth(family: str, upto: int, **params: int) -> List[GrowthRow]:
    """The growth function m_H(N) of ``family`` for N = 1 … ``upto``
    (``gapcert growth``): exact integers (Python ints, however large) and their
    natural logarithms. ``params`` as for :func:`train_needed`.

    >>> [row.growth for row in growth("linear", 5, dim=2)]
    [2, 4, 8, 14, 22]
    """
    rows, _vc_dim, _break_point = _core.growth(
        str(family), _params(params), _count("upto", upto, 1)
    )
    return [GrowthRow(n, int(value), ln) for n, value, ln in rows]


def families() -> List[Dict[str, Any]]:
    """The model families (``gapcert families``): each with ``key``,
    ``parameters``, ``growth`` (the formula), ``vc_dim`` and ``source``."""
    return json.loads(_core.families())
