"""The exceptions of the package, and the wording of the library's messages.

The library's messages name command-line flags (``--claim-accuracy``,
``--percent``); from Python those are keyword arguments, so a message says
``claim_accuracy`` and ``percent=True`` instead.
"""

from __future__ import annotations

import re
from typing import Any, Dict, List, Optional, Sequence

__all__ = ["InputError"]


class InputError(ValueError):
    """The logs or claims files have problems: every one found is listed.

    A ``ValueError``. ``problems`` is a list of dicts, one per problem, with the
    keys ``"file"`` (the path, or the label of a frame: ``"frame"``),
    ``"row"`` (the 1-based data row, the header not counted; the record number
    for JSON; ``None`` for a problem with the whole file), ``"column"`` (the
    column, or ``None``) and ``"message"``.

    Pass ``lenient=True`` to :func:`gapcert.audit` to skip bad rows instead
    (they are listed in the report's ``skipped_rows``).
    """

    problems: List[Dict[str, Any]]

    def __init__(self, message: str, problems: Sequence[Dict[str, Any]] = ()) -> None:
        super().__init__(message)
        self.problems = [dict(problem) for problem in problems]


# Flags of the command line and the keyword arguments they are from Python.
_BOOLEAN_FLAGS = {"percent", "lenient", "familywise", "same-holdout", "decimal-comma"}
_VALUE_FLAGS = {
    "confidence",
    "holdout-bound",
    "claim-accuracy",
    "tolerance",
    "max-width",
    "map",
    "map-file",
    "gate",
    "gate-allow",
    "claims",
    "separator",
    "keep",
    "error-rate",
    "candidates",
    "holdout-n",
    "family",
    "upto",
    "dim",
    "vc-dim",
    "size",
    "weights",
    "layers",
    "units",
    "leaves",
    "features",
}
_FLAG = re.compile(r"--([a-z][a-z0-9]*(?:-[a-z0-9]+)*)")


def _pythonic(message: str) -> str:
    """``message`` with command-line flags written as keyword arguments."""

    def replace(match: "re.Match[str]") -> str:
        flag = match.group(1)
        if flag in _BOOLEAN_FLAGS:
            return flag.replace("-", "_") + "=True"
        if flag in _VALUE_FLAGS:
            return flag.replace("-", "_")
        return match.group(0)

    return _FLAG.sub(replace, message)


def _problem_line(problem: Dict[str, Any]) -> str:
    if problem.get("row") is not None:
        return f"{problem['file']}:{problem['row']}: {problem['message']}"
    return f"{problem['file']}: {problem['message']}"


def _from_core(kind: str, message: str, problems: Optional[List[Dict[str, Any]]]) -> BaseException:
    """The exception for an error of the library (called by ``gapcert._core``)."""
    if kind == "input":
        problems = [
            dict(problem, message=_pythonic(str(problem["message"]))) for problem in problems or []
        ]
        lines = [_problem_line(problem) for problem in problems]
        lines.append(
            _pythonic(message)
            if message
            else f"{len(problems)} problem(s) found; fix them or pass lenient=True to skip bad rows"
        )
        return InputError("\n".join(lines), problems)
    if kind == "io":
        return OSError(message)
    if kind == "interrupted":
        return KeyboardInterrupt(message)
    return ValueError(_pythonic(message))
