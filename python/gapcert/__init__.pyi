# Type stubs of the public API of gapcert (the docstrings are in the modules).
import os
from typing import Any, Dict, Iterable, List, NamedTuple, Optional, Sequence, Tuple, Union

import polars as pl

from typing_extensions import Literal

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

__version__: str
FAMILY_PARAMETERS: Tuple[str, ...]

_Path = Union[str, "os.PathLike[str]"]
# A path, a polars DataFrame or LazyFrame, a pandas DataFrame, an object with
# __arrow_c_stream__, or a list of these.
_Source = Any

class InputError(ValueError):
    """The logs or claims files have problems: every one, with file, row and column."""

    problems: List[Dict[str, Any]]
    def __init__(self, message: str, problems: Sequence[Dict[str, Any]] = ...) -> None: ...

class Report:
    """An audit's result (made by `audit`)."""

    def __init__(self, result: Any) -> None: ...
    @property
    def runs(self) -> pl.DataFrame: ...
    @property
    def claims(self) -> pl.DataFrame: ...
    @property
    def splits(self) -> pl.DataFrame: ...
    @property
    def summary(self) -> Dict[str, Any]: ...
    @property
    def passed(self) -> bool: ...
    def worst_runs(self, n: int = ...) -> pl.DataFrame: ...
    def to_json(self) -> str: ...
    def to_dict(self) -> Dict[str, Any]: ...
    def summary_line(self) -> str: ...
    def write_html(self, path: _Path) -> None: ...
    def write_certificate(self, path: _Path) -> None: ...
    def _repr_html_(self) -> str: ...

def audit(
    source: _Source,
    *,
    confidence: Optional[float] = None,
    holdout_bound: Literal["binomial", "hoeffding"] = "binomial",
    claim_accuracy: Optional[float] = None,
    familywise: bool = False,
    same_holdout: bool = False,
    tolerance: float = 0.05,
    max_width: float = 0.10,
    percent: bool = False,
    lenient: bool = False,
    map: Union[Dict[str, str], Iterable[str], None] = None,
    map_file: Optional[_Path] = None,
    gate: Literal["unproven", "refuted", "never"] = "unproven",
    gate_allow: Union[str, Iterable[str], None] = None,
    claims: _Source = None,
    keep: Union[str, Iterable[str], None] = None,
    separator: Optional[str] = None,
    decimal_comma: bool = False,
    explain: bool = False,
) -> Report: ...
def upper_bound(
    errors: int,
    n: int,
    confidence: float = 0.95,
    candidates: int = 1,
    *,
    alpha: Optional[float] = None,
) -> float: ...
def lower_bound(
    errors: int,
    n: int,
    confidence: float = 0.95,
    candidates: int = 1,
    *,
    alpha: Optional[float] = None,
) -> float: ...
def holdout_needed(
    error_rate: float,
    claim_accuracy: float,
    confidence: float = 0.95,
    candidates: int = 1,
    method: Literal["binomial", "hoeffding"] = "binomial",
) -> Optional[int]: ...
def max_candidates(
    holdout_n: int,
    error_rate: float,
    claim_accuracy: float,
    confidence: float = 0.95,
    method: Literal["binomial", "hoeffding"] = "binomial",
) -> Optional[int]: ...
def train_needed(
    family: str,
    tolerance: float = 0.05,
    confidence: float = 0.95,
    **params: int,
) -> Optional[int]: ...

class GrowthRow(NamedTuple):
    n: int
    growth: int
    growth_ln: float

def growth(family: str, upto: int, **params: int) -> List[GrowthRow]: ...
def families() -> List[Dict[str, Any]]: ...
