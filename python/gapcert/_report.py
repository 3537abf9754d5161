"""The result of :func:`gapcert.audit`."""

from __future__ import annotations

import html
import io
import json
import os
from typing import Any, Dict, List, Literal, Optional, Union

import polars as pl

from . import _core

PathLike = Union[str, "os.PathLike[str]"]

# How many runs and claims the notebook view lists.
_SHOWN_RUNS = 10
_SHOWN_CLAIMS = 20


class Report:
    """An audit's result: the document ``gapcert audit --format json`` writes, with
    its tables as polars DataFrames.

    Made by :func:`gapcert.audit`; not constructed directly.
    """

    __slots__ = ("_result", "_cache")

    def __init__(self, result: Any) -> None:
        self._result = result
        self._cache: Dict[str, Any] = {}

    # Tables ----------------------------------------------------------------

    def _frame(self, which: Literal["runs", "claims", "splits"]) -> pl.DataFrame:
        if which not in self._cache:
            parts = _core.report_frame(self._result, which)
            frames = []
            while parts:  # each part freed once read
                frames.append(pl.read_ipc(io.BytesIO(parts.pop(0))))
            self._cache[which] = frames[0] if len(frames) == 1 else pl.concat(frames, rechunk=False)
        return self._cache[which]

    @property
    def runs(self) -> pl.DataFrame:
        """One row per run, in input order, with the flat per-run columns of
        ``--format csv`` / ``parquet``: the bounds (intervals as ``_lo`` / ``_hi``
        columns), ``verdict``, ``certifiable_accuracy``, ``holdout_needed``,
        ``train_needed`` and ``findings`` (codes joined by ``;``). The sentences
        (``explanation``, ``finding_messages``) only with ``explain=True``; they
        are always in :meth:`to_json`."""
        return self._frame("runs")

    @property
    def claims(self) -> pl.DataFrame:
        """The claims of the claims files (``claims=``), one row each, in file
        order: ``statement``, ``kind``, ``method``, ``lower`` / ``upper`` bounds on
        the claimed quantity, ``verdict``, ``holdout_needed`` and ``evidence``."""
        return self._frame("claims")

    @property
    def splits(self) -> pl.DataFrame:
        """One row per held-out split (``holdout_set``): how many models were
        compared on it, its best run, ``certifiable_now``, ``certifiable_fresh``,
        ``reuse_cost`` and ``comparisons_left``; ``history`` is the wear history as
        JSON text."""
        return self._frame("splits")

    def worst_runs(self, n: int = _SHOWN_RUNS) -> pl.DataFrame:
        """The ``n`` worst runs, worst first (refuted, unproven, certified, no
        claim; within a verdict the largest excess of the upper bound over the
        claim first), as the table and the HTML page order them. The library audits
        the logs again to find them, keeping only those ``n`` (the report holds no
        run objects)."""
        if isinstance(n, bool) or not isinstance(n, int) or n < 0:
            raise ValueError(f"n must be a whole number >= 0, not {n!r}")
        return self._worst(n)[0]

    def _worst(self, n: int):
        """The ``n`` worst runs (rows of :attr:`runs`) and the sentence explaining
        each verdict."""
        worst = _core.report_worst_runs(self._result, n)
        if not worst:
            return self.runs.clear(), []
        sources = [source for source, _ in worst]
        found = (
            self.runs.select(pl.col("source"))
            .with_row_index("row")
            .filter(pl.col("source").is_in(sources))
        )
        row_of = dict(zip(found["source"].to_list(), found["row"].to_list()))
        return self.runs[[row_of[source] for source in sources]], [why for _, why in worst]

    # The document ----------------------------------------------------------

    @property
    def summary(self) -> Dict[str, Any]:
        """The summary: counts of runs per verdict, of claims per verdict, rows
        read, audited and skipped, and ``"gate"``: ``"pass"`` or ``"fail"``."""
        if "summary" not in self._cache:
            self._cache["summary"] = json.loads(_core.report_summary(self._result))
        return dict(self._cache["summary"])

    @property
    def passed(self) -> bool:
        """Whether the gate passes (``gate="unproven"``, the default: every claim
        certified; ``"refuted"``: none refuted; ``"never"``: always)."""
        return self.summary["gate"] == "pass"

    def to_json(self) -> str:
        """The JSON document, exactly as ``gapcert audit --format json`` writes it
        (SPEC §7): tool, generated_at, settings, inputs, runs, claims, splits,
        summary, skipped rows and files, cautions.

        The first call (or :meth:`write_html`, :meth:`write_certificate`) audits the
        logs again to write every run's sentences, and raises ``ValueError`` if a
        log or claims file changed on disk since the audit."""
        return _core.report_json(self._result)

    def to_dict(self) -> Dict[str, Any]:
        """The JSON document as Python values."""
        return json.loads(self.to_json())

    def summary_line(self) -> str:
        """The one-sentence summary printed under the table."""
        return _core.report_summary_line(self._result)

    # Files -----------------------------------------------------------------

    def write_html(self, path: PathLike) -> None:
        """Writes the self-contained HTML page (inline SVG charts) to ``path``,
        atomically: a temporary file, then a rename. Refuses to replace one of the
        audit's input files."""
        _core.report_write_html(self._result, os.fsdecode(os.fspath(path)))

    def write_certificate(self, path: PathLike) -> None:
        """Writes a certificate to ``path``: the JSON document, the paths as given,
        the folder they are relative to (the folder the audit ran in, recorded
        relative to the certificate's folder), and a seal; ``gapcert verify PATH``
        re-hashes the inputs, recomputes the audit and exits 1 on any drift. Inputs
        outside the certificate's folder are read only with ``verify --root DIR``.

        Needs logs (and claims files) on disk: an audit of a DataFrame raises
        ``ValueError``, since ``verify`` could not read the frame again."""
        _core.report_write_certificate(self._result, os.fsdecode(os.fspath(path)))

    # Display ---------------------------------------------------------------

    def __repr__(self) -> str:
        summary = self.summary
        return (
            f"<gapcert.Report: {summary['runs']} runs ({summary['certified']} certified, "
            f"{summary['unproven']} unproven, {summary['refuted']} refuted, "
            f"{summary['no_claim']} without a claim), {summary.get('claims', 0)} claims, "
            f"gate {'pass' if self.passed else 'FAIL'}>"
        )

    def __str__(self) -> str:
        return self.summary_line()

    def _repr_html_(self) -> str:
        """A compact view for notebooks: the gate, the counts, the claims and the
        worst runs."""
        return _notebook_html(self)


# The notebook view ----------------------------------------------------------

_VERDICT_COLOURS = {
    "certified": "#1a7f37",
    "unproven": "#9a6700",
    "refuted": "#cf222e",
    "no_claim": "#57606a",
}


def _text(value: Any) -> str:
    return html.escape("" if value is None else str(value), quote=True)


def _percent(value: Optional[float]) -> str:
    if value is None:
        return "–"
    return f"{value * 100:.2f}%"


def _verdict(verdict: str) -> str:
    colour = _VERDICT_COLOURS.get(verdict, "#57606a")
    return f'<span style="color:{colour};font-weight:600">{_text(verdict.replace("_", " "))}</span>'


def _table(header: List[str], rows: List[List[str]]) -> str:
    head = "".join(f"<th style='text-align:left'>{_text(h)}</th>" for h in header)
    body = "".join("<tr>" + "".join(f"<td>{cell}</td>" for cell in row) + "</tr>" for row in rows)
    return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"


def _notebook_html(report: Report) -> str:
    summary = report.summary
    gate = "pass" if report.passed else "FAIL"
    gate_colour = _VERDICT_COLOURS["certified" if report.passed else "refuted"]
    parts = [
        "<div class='gapcert-report'>",
        f"<p><strong>gapcert audit</strong> — gate: "
        f"<span style='color:{gate_colour};font-weight:700'>{_text(gate)}</span></p>",
        f"<p>{_text(report.summary_line())}</p>",
    ]
    counts = [
        ["runs", summary["runs"], summary["certified"], summary["unproven"], summary["refuted"], summary["no_claim"]],
    ]
    if summary.get("claims", 0):
        counts.append(
            [
                "claims",
                summary["claims"],
                summary.get("claims_certified", 0),
                summary.get("claims_unproven", 0),
                summary.get("claims_refuted", 0),
                "–",
            ]
        )
    parts.append(
        _table(
            ["", "total", "certified", "unproven", "refuted", "no claim"],
            [[_text(cell) for cell in row] for row in counts],
        )
    )
    claims = report.claims
    if claims.height:
        order = _core.report_worst_claims(report._result)[:_SHOWN_CLAIMS]
        rows = []
        for index in order:
            claim = claims.row(index, named=True)
            rows.append(
                [
                    _text(claim["claim"]),
                    _text(claim["statement"] or ""),
                    _verdict(claim["verdict"]),
                    _text(claim["evidence"]),
                ]
            )
        title = "Claims, worst first"
        if claims.height > len(order):
            title += f" ({len(order)} of {claims.height})"
        parts.append(f"<p><strong>{_text(title)}</strong></p>")
        parts.append(_table(["claim", "statement", "verdict", "evidence"], rows))
    worst, explanations = report._worst(_SHOWN_RUNS)
    if worst.height:
        rows = []
        for run, explanation in zip(worst.iter_rows(named=True), explanations):
            claim = run["claim_error_rate"]
            rows.append(
                [
                    _text(run["run"]),
                    _verdict(run["verdict"]),
                    _text(_percent(run["holdout_error_rate"])),
                    _text(_percent(run["error_upper_bound"])),
                    _text(_percent(None if claim is None else 1 - claim)),
                    _text(_percent(run["certifiable_accuracy"])),
                    _text(explanation),
                ]
            )
        title = "Runs, worst first"
        if summary["runs"] > worst.height:
            title += f" ({worst.height} of {summary['runs']})"
        parts.append(f"<p><strong>{_text(title)}</strong></p>")
        parts.append(
            _table(
                [
                    "run",
                    "verdict",
                    "held-out error",
                    "upper bound",
                    "claimed accuracy",
                    "certifiable accuracy",
                    "why",
                ],
                rows,
            )
        )
    parts.append("</div>")
    return "\n".join(parts)
