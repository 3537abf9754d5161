"""Logs and claims as the extension takes them: paths, or frames as Arrow IPC bytes.

A frame never goes through CSV: it becomes a polars DataFrame (``polars.from_pandas``
for pandas, ``polars.DataFrame(obj)`` for any object with the Arrow C stream
interface), which is written to Arrow IPC in memory and read by the library's own
Arrow reader, so every value (integers, floats, nulls, timestamps) arrives as it is.
"""

from __future__ import annotations

import io
import os
import sys
from typing import Any, Dict, List, Optional, Tuple

import polars as pl

from ._errors import InputError

# ("path", path, None) or ("frame", label, Arrow IPC bytes)
Entry = Tuple[str, str, Optional[bytes]]

_ACCEPTED = (
    "a path (str or os.PathLike), a list of paths, a polars DataFrame, a pandas "
    "DataFrame, an object with the Arrow C stream interface (__arrow_c_stream__, "
    "for example a pyarrow Table), or a list of these"
)


def _is_path(value: Any) -> bool:
    return isinstance(value, (str, os.PathLike))


def _path_text(value: Any) -> str:
    return os.fsdecode(os.fspath(value))


def _is_pandas(value: Any) -> bool:
    pandas = sys.modules.get("pandas")
    return pandas is not None and isinstance(value, pandas.DataFrame)


def as_polars(value: Any) -> Optional[pl.DataFrame]:
    """``value`` as a polars DataFrame, or None when it is not a frame."""
    if isinstance(value, pl.DataFrame):
        return value
    if isinstance(value, pl.LazyFrame):
        return value.collect()
    if _is_pandas(value):
        # A named or non-default index (``df.set_index("run")``) is kept as a column.
        return pl.from_pandas(value, include_index=True)
    if hasattr(value, "__arrow_c_stream__"):
        return _from_arrow_stream(value)
    return None


def _from_arrow_stream(value: Any) -> pl.DataFrame:
    """A frame from an object with ``__arrow_c_stream__`` (the Arrow PyCapsule
    interface): polars reads it directly (polars 1.3 and later); older polars go
    through pyarrow."""
    try:
        return pl.DataFrame(value)
    except TypeError:
        try:
            import pyarrow as pa
        except ImportError:
            raise TypeError(
                f"{type(value).__name__}: this polars cannot read the Arrow C stream "
                "interface; upgrade polars or install pyarrow"
            ) from None
        frame = pl.from_arrow(pa.RecordBatchReader.from_stream(value).read_all())
        assert isinstance(frame, pl.DataFrame)
        return frame


_WIDE_INTEGERS = tuple(
    dtype for dtype in (getattr(pl, "Int128", None), getattr(pl, "UInt128", None)) if dtype is not None
)


def _readable(frame: pl.DataFrame) -> pl.DataFrame:
    """``frame`` with the column types the library's reader does not take cast to
    ones it does: categoricals and enums to text, decimals to floats, 128-bit
    integers to 64-bit ones (to text where a value does not fit)."""
    casts: Dict[Any, Any] = {}
    for name, dtype in frame.schema.items():
        if isinstance(dtype, (pl.Categorical, pl.Enum)) or dtype in (pl.Categorical, pl.Enum):
            casts[name] = pl.String
        elif isinstance(dtype, pl.Decimal) or dtype == pl.Decimal:
            casts[name] = pl.Float64
        elif dtype in _WIDE_INTEGERS:
            fits = frame.get_column(name).cast(pl.Int64, strict=False).null_count()
            casts[name] = pl.Int64 if fits == frame.get_column(name).null_count() else pl.String
    return frame.cast(casts) if casts else frame


def _check_pandas(frame: Any, label: str) -> None:
    """Raises :class:`InputError` listing every problem that keeps a pandas frame
    from becoming a table: column names that repeat, and object columns whose cells
    mix types (which pyarrow would refuse with a message naming neither)."""
    problems: List[Dict[str, Any]] = []
    names = [str(name) for name in frame.columns]
    seen: Dict[str, int] = {}
    for name in names:
        seen[name] = seen.get(name, 0) + 1
    for name, times in seen.items():
        if times > 1:
            problems.append(
                {
                    "file": label,
                    "row": None,
                    "column": name,
                    "message": f"the column name `{name}` appears {times} times; give each column its own name",
                }
            )
    if not problems:
        for name in names:
            column = frame[name]
            if str(column.dtype) != "object":
                continue
            kinds = []
            first_row: Dict[str, int] = {}
            for row, value in enumerate(column.tolist(), start=1):
                if value is None or (isinstance(value, float) and value != value):
                    continue
                kind = type(value).__name__
                if kind not in first_row:
                    first_row[kind] = row
                    kinds.append(kind)
            if len(kinds) > 1:
                rows = ", ".join(f"{kind} from row {first_row[kind]}" for kind in kinds)
                problems.append(
                    {
                        "file": label,
                        "row": first_row[kinds[1]],
                        "column": name,
                        "message": f"`{name}` mixes types ({rows}); make the column one type (for example df[{name!r}].astype(str), or pandas.to_numeric)",
                    }
                )
    if problems:
        lines = [
            f"{p['file']}{':' + str(p['row']) if p['row'] else ''}: {p['message']}" for p in problems
        ]
        raise InputError("\n".join(lines), problems)


def ipc_bytes(frame: pl.DataFrame) -> bytes:
    """``frame`` as Arrow IPC file bytes (uncompressed)."""
    buffer = io.BytesIO()
    _readable(frame).write_ipc(buffer, compression="uncompressed")
    return buffer.getvalue()


def entries(value: Any, what: str, frame_label: str) -> List[Entry]:
    """The paths and frames of ``value`` (one of them, or a list), in order.

    Frames are labelled ``frame_label`` (``"frame"``, ``"claims"``), or
    ``frame_label`` followed by 1, 2, ... when there are several: the label stands
    for a file name in the report (``frame:3`` is the third row of the frame).
    """
    items = list(value) if isinstance(value, (list, tuple)) else [value]
    if not items:
        raise ValueError(f"{what}: an empty list (give at least one path or frame)")
    frames: List[Optional[pl.DataFrame]] = []
    count = sum(not _is_path(item) for item in items)
    for item in items:
        if _is_path(item):
            frames.append(None)
            continue
        if _is_pandas(item):
            label = frame_label if count == 1 else f"{frame_label}{len(frames) + 1}"
            _check_pandas(item, label)
        frame = as_polars(item)
        if frame is None:
            raise TypeError(f"{what}: {type(item).__name__} is not accepted; give {_ACCEPTED}")
        frames.append(frame)
    count = sum(frame is not None for frame in frames)
    result: List[Entry] = []
    number = 0
    for item, frame in zip(items, frames):
        if frame is None:
            result.append(("path", _path_text(item), None))
        else:
            number += 1
            label = frame_label if count == 1 else f"{frame_label}{number}"
            result.append(("frame", label, ipc_bytes(frame)))
    return result
