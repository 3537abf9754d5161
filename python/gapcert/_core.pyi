# The extension module behind gapcert (private: use the functions of `gapcert`).
# Every function takes positional arguments only.
from typing import Any, Dict, List, Literal, Optional, Tuple

from typing_extensions import CapsuleType

__all__ = [
    "CANDIDATES_CAP",
    "FAMILY_PARAMETERS",
    "GROWTH_TABLE_LIMIT",
    "__version__",
    "audit",
    "bound",
    "families",
    "growth",
    "plan_holdout",
    "plan_reuse",
    "plan_train",
    "report_frame",
    "report_json",
    "report_summary",
    "report_summary_line",
    "report_worst_claims",
    "report_worst_runs",
    "report_write_certificate",
    "report_write_html",
]

__version__: str
FAMILY_PARAMETERS: Tuple[str, ...]
CANDIDATES_CAP: int
GROWTH_TABLE_LIMIT: int

# ("path", path, None) or ("frame", label, Arrow IPC bytes)
_Entry = Tuple[str, str, Optional[bytes]]

def audit(logs: List[_Entry], claims: List[_Entry], options: Dict[str, Any], /) -> CapsuleType: ...
def report_json(report: CapsuleType, /) -> str: ...
def report_summary(report: CapsuleType, /) -> str: ...
def report_summary_line(report: CapsuleType, /) -> str: ...
def report_frame(report: CapsuleType, which: Literal["runs", "claims", "splits"], /) -> List[bytes]: ...
def report_worst_runs(report: CapsuleType, n: int, /) -> List[Tuple[str, str]]: ...
def report_worst_claims(report: CapsuleType, /) -> List[int]: ...
def report_write_html(report: CapsuleType, path: str, /) -> None: ...
def report_write_certificate(report: CapsuleType, path: str, /) -> None: ...
def bound(
    which: Literal["upper", "lower"],
    errors: int,
    n: int,
    confidence: float,
    candidates: int,
    alpha: Optional[float],
    /,
) -> float: ...
def plan_holdout(
    error_rate: float, claim_accuracy: float, candidates: int, confidence: float, /
) -> Tuple[Optional[int], Optional[int]]: ...
def plan_reuse(
    holdout_n: int, error_rate: float, claim_accuracy: float, confidence: float, /
) -> Tuple[Optional[int], Optional[int], int]: ...
def plan_train(
    family: str, params: Dict[str, int], tolerance: float, confidence: float, /
) -> Tuple[Optional[int], Optional[int], Optional[float]]: ...
def growth(
    family: str, params: Dict[str, int], upto: int, /
) -> Tuple[List[Tuple[int, str, float]], Optional[int], Optional[int]]: ...
def families() -> str: ...
