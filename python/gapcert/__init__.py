"""gapcert: audits machine-learning run logs and certifies, or refuses to certify, the
accuracy they claim.

Each run of a log (a row: held-out examples, errors, an optional claim such as
"97 % accuracy") gets exact binomial (Clopper–Pearson) bounds on its true error,
corrected for how many models were compared on the same held-out split, a verdict
(certified, unproven, refuted or no claim) and what it would take to certify it.

>>> import gapcert, polars as pl
>>> sweep = pl.DataFrame({          # invented runs
...     "run": ["a", "b"],
...     "holdout_n": [2000, 2000],
...     "holdout_misclassified": [12, 80],
...     "claimed_accuracy": [0.98, 0.98],
...     "holdout_set": ["val", "val"],
... })
>>> report = gapcert.audit(sweep)
>>> report.runs["verdict"].to_list()
['certified', 'refuted']
>>> report.passed
False

The functions :func:`upper_bound`, :func:`lower_bound`, :func:`holdout_needed`,
:func:`train_needed`, :func:`growth` and :func:`max_candidates` are the
calculators of ``gapcert plan`` and ``gapcert growth``.
"""

from __future__ import annotations

import numbers
import os
from typing import Any, Dict, Iterable, List, Optional, Sequence, Union

from . import _core
from ._calculators import (
    GrowthRow,
    families,
    growth,
    holdout_needed,
    lower_bound,
    max_candidates,
    train_needed,
    upper_bound,
)
from ._errors import InputError
from ._report import Report
from ._sources import entries

__all__ = [
    "FAMILY_PARAMETERS",
    "GrowthRow",
    "InputError",
    "Report",
    "__version__",
    "audit",
    "families",
    "growth",
    "holdout_needed",
    "lower_bound",
    "max_candidates",
    "train_needed",
    "upper_bound",
]

#: The version of the gapcert library inside (the command line's version).
__version__: str = _core.__version__

#: Parameter names of the model families (keyword arguments of
#: :func:`train_needed` and :func:`growth`, and log columns).
FAMILY_PARAMETERS = tuple(_core.FAMILY_PARAMETERS)

_HOLDOUT_BOUNDS = ("binomial", "hoeffding")
_GATES = ("unproven", "refuted", "never")


def _flag(name: str, value: Any) -> bool:
    if isinstance(value, bool) or type(value).__name__ == "bool_":
        return bool(value)
    raise TypeError(f"{name} must be True or False, not {value!r}")


def _number(name: str, value: Any, optional: bool = False) -> Optional[float]:
    if value is None and optional:
        return None
    if isinstance(value, bool) or not isinstance(value, numbers.Real):
        raise TypeError(f"{name} must be a number, not {value!r}")
    return float(value)


def _choice(name: str, value: Any, choices: Sequence[str]) -> str:
    if value not in choices:
        listed = ", ".join(f'"{c}"' for c in choices)
        raise ValueError(f"{name}={value!r}: choose one of {listed}")
    return value


def _strings(name: str, value: Any) -> List[str]:
    if value is None:
        return []
    items = [value] if isinstance(value, str) else list(value)
    for item in items:
        if not isinstance(item, str):
            raise TypeError(f"{name} takes text, not {type(item).__name__}")
    return items


def _text(name: str, value: Any) -> str:
    if not isinstance(value, str):
        raise TypeError(f"{name} takes text, not {type(value).__name__}")
    return value


def _keep(value: Any) -> List[str]:
    # "a,b" as on the command line, or a list of names.
    if isinstance(value, str):
        return [name for name in value.split(",")]
    return _strings("keep", value)


def _map_pairs(value: Any) -> List[str]:
    if value is None:
        return []
    if isinstance(value, dict):
        pairs = []
        for canonical, theirs in value.items():
            if not isinstance(canonical, str) or not isinstance(theirs, str):
                raise TypeError("map: a dict of text (canonical column → your column)")
            pairs.append(f"{canonical}={theirs}")
        return pairs
    return _strings("map", value)


def audit(
    source: Any,
    *,
    confidence: Optional[float] = None,
    holdout_bound: str = "binomial",
    claim_accuracy: Optional[float] = None,
    familywise: bool = False,
    same_holdout: bool = False,
    tolerance: float = 0.05,
    max_width: float = 0.10,
    percent: bool = False,
    lenient: bool = False,
    map: Union[Dict[str, str], Iterable[str], None] = None,
    map_file: Union[str, "os.PathLike[str]", None] = None,
    gate: str = "unproven",
    gate_allow: Union[str, Iterable[str], None] = None,
    claims: Any = None,
    keep: Union[str, Iterable[str], None] = None,
    separator: Optional[str] = None,
    decimal_comma: bool = False,
    explain: bool = False,
) -> Report:
    """Reads run logs and audits every run: the same audit as ``gapcert audit``.

    ``source`` is a path (``str`` or ``os.PathLike``: a log file of any format
    gapcert reads, or a folder, searched recursively), a list of paths, a polars
    DataFrame (or LazyFrame), a pandas DataFrame, any object with the Arrow C stream
    interface (``__arrow_c_stream__``: a pyarrow Table, a DuckDB result, ...), or a
    list of these. A frame is passed to the library as Arrow IPC in memory (never
    through CSV) and reported under the name ``frame`` (``frame1``, ``frame2``, ...
    for several; default run identifiers are ``frame:ROW``); in a list, frames
    come after the files. Each row is a run, with the columns of the README
    (``holdout_n`` and one of ``holdout_error_rate``, ``holdout_accuracy``,
    ``holdout_misclassified`` required).

    The keyword arguments are the options of ``gapcert audit``:

    - ``confidence``: default 0.95 (with ``percent=True``: 95).
    - ``holdout_bound``: ``"binomial"`` (exact, default) or ``"hoeffding"``.
    - ``claim_accuracy``: the claim for runs whose logs make none.
    - ``familywise``: divide the level among all claims (Bonferroni).
    - ``same_holdout``: all runs were compared on one held-out split.
    - ``tolerance``: the VC allowance ``train_needed`` aims at (default 0.05).
    - ``max_width``: two-sided intervals wider than this get ``holdout_small``.
    - ``percent``: rates, claims, ``claim_accuracy`` and ``confidence`` are
      percentages.
    - ``lenient``: skip bad rows (listed in the report) instead of failing.
    - ``map``: renames, ``{"holdout_n": "n_val"}`` (canonical → your column) or
      ``["holdout_n=n_val"]``; dotted paths reach into nested JSON.
    - ``map_file``: a JSON file of such renames.
    - ``gate``: ``"unproven"`` (default: pass only when every claim is
      certified), ``"refuted"`` (fail only on refuted claims) or ``"never"``.
    - ``gate_allow``: finding codes that do not fail the gate.
    - ``claims``: claims under review (SPEC §10): a claims file, a list of them,
      or a frame with the claims-file columns (``claim``, ``statement``, ``kind``,
      ``run``, ``baseline``, ``value``, ...).
    - ``keep``: extra columns of the logs carried into every output (``.runs``
      gets a text column for each).
    - ``separator``: the field separator of CSV logs (one character, ``"\\t"``
      for a tab), for spreadsheet exports; ``decimal_comma``: numbers written
      ``0,95``.
    - ``explain``: the frames carry the sentences too: ``.runs`` gets
      ``explanation`` (why the verdict) and ``finding_messages`` (each finding's
      sentence, in the order of the codes in ``findings``). Without it they carry
      codes and numbers only (SPEC §7), which at a million runs is faster and
      smaller; :meth:`Report.to_json` and the HTML page always have the sentences.

    Returns a :class:`Report`. Raises :class:`InputError` (a ``ValueError``)
    listing every problem of the logs or claims with file, row and column;
    ``ValueError`` for wrong options or paths; ``OSError`` when a file cannot be
    read; ``KeyboardInterrupt`` on Ctrl-C (the audit stops at the next file or
    batch; nothing is kept).

    The audit runs without the GIL, on a thread of its own.
    """
    logs = entries(source, "source", "frame")
    claim_entries = [] if claims is None else entries(claims, "claims", "claims")
    options = {
        "confidence": _number("confidence", confidence, optional=True),
        "holdout_bound": _choice("holdout_bound", holdout_bound, _HOLDOUT_BOUNDS),
        "claim_accuracy": _number("claim_accuracy", claim_accuracy, optional=True),
        "familywise": _flag("familywise", familywise),
        "same_holdout": _flag("same_holdout", same_holdout),
        "tolerance": _number("tolerance", tolerance),
        "max_width": _number("max_width", max_width),
        "percent": _flag("percent", percent),
        "lenient": _flag("lenient", lenient),
        "map": _map_pairs(map),
        "map_file": None if map_file is None else os.fsdecode(os.fspath(map_file)),
        "gate": _choice("gate", gate, _GATES),
        "gate_allow": _strings("gate_allow", gate_allow),
        "keep": _keep(keep),
        "separator": None if separator is None else _text("separator", separator),
        "decimal_comma": _flag("decimal_comma", decimal_comma),
        "explain": _flag("explain", explain),
    }
    return Report(_core.audit(logs, claim_entries, options))
