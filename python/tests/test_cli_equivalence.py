"""The package's report against the command line's, on every fixture log.

For every file and folder under fixtures/demo, fixtures/formats, fixtures/edge,
fixtures/worked and fixtures/bad, and for the option settings each fixture is made
for (a map file, percentages, claims files, the other bound, the gates, ...):
``Report.to_json()`` must be the text ``gapcert audit ... --format json`` prints,
but for ``generated_at``; where the command line refuses the input (exit code 2),
the package must raise. ``.runs``, ``.claims`` and ``.splits`` must hold the JSON
document's values.
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import pytest

import gapcert

from conftest import ROOT, run_cli

FOLDERS = ["fixtures/demo", "fixtures/formats", "fixtures/edge", "fixtures/worked", "fixtures/bad"]


def _every_fixture() -> list:
    cases = []
    for folder in FOLDERS:
        cases.append((folder, {}))
        for path in sorted((ROOT / folder).rglob("*")):
            relative = path.relative_to(ROOT).as_posix()
            if path.is_dir():
                cases.append((relative, {}))
            else:
                cases.append((relative, {}))
                if folder == "fixtures/bad":
                    cases.append((relative, {"lenient": True}))
    return cases


SETTINGS = [
    ("fixtures/edge/renamed.csv", {"map_file": "fixtures/edge/map.json"}),
    ("fixtures/edge/renamed.csv", {"map": {"holdout_error_rate": "val_err", "holdout_n": "n_val"}}),
    ("fixtures/edge/renamed.csv", {"map": ["holdout_error_rate=val_err", "holdout_n=n_val"]}),
    ("fixtures/edge/percent.csv", {"percent": True}),
    ("fixtures/edge/percent.csv", {"percent": True, "confidence": 99, "claim_accuracy": 90}),
    ("fixtures/edge/percent.csv", {"percent": True, "claim_accuracy": 0.9}),
    ("fixtures/edge/bom_crlf.csv", {"percent": True}),
    ("fixtures/demo/runs.csv", {"claims": "fixtures/demo/claims.csv"}),
    ("fixtures/demo/runs.csv", {"claims": "fixtures/demo/claims.csv", "familywise": True}),
    ("fixtures/demo/runs.csv", {"claims": "fixtures/demo/claims.csv", "gate": "refuted"}),
    ("fixtures/demo/runs.csv", {"holdout_bound": "hoeffding"}),
    ("fixtures/demo/runs.csv", {"familywise": True}),
    ("fixtures/demo/runs.csv", {"confidence": 0.99, "tolerance": 0.1, "max_width": 0.05}),
    ("fixtures/demo/runs.csv", {"claim_accuracy": 0.9}),
    ("fixtures/demo/runs.csv", {"claim_accuracy": 0.3}),
    ("fixtures/demo/runs.csv", {"claim_accuracy": 0.3, "gate_allow": ["claim_below_half"]}),
    ("fixtures/demo/runs.csv", {"gate": "never"}),
    ("fixtures/demo/runs.csv", {"gate_allow": ["no_such_code"]}),
    ("fixtures/demo/runs.csv", {"confidence": 95}),
    ("fixtures/demo/runs.csv", {"same_holdout": True}),
    ("fixtures/demo/runs_one_split.csv", {"same_holdout": True}),
    ("fixtures/worked/runs.csv", {"claims": "fixtures/worked/claims.csv"}),
    ("fixtures/worked/runs.csv", {"claims": ["fixtures/worked/claims.csv", "fixtures/demo/claims.csv"]}),
    ("fixtures/worked", {"claims": "fixtures/worked/claims.csv", "lenient": True}),
    (["fixtures/demo/runs.csv", "fixtures/formats/runs.parquet"], {}),
    (["fixtures/edge/mixed", "fixtures/worked/runs.csv"], {"confidence": 0.9}),
    ("fixtures/bad", {"lenient": True}),
    ("fixtures/demo/runs.csv", {"keep": "notes"}),
    ("fixtures/demo/runs.csv", {"keep": "notes,holdout_set"}),
    ("fixtures/demo", {"keep": "notes", "lenient": True}),
]

CASES = _every_fixture() + SETTINGS


def _cli_args(paths, options: dict) -> list:
    args = ["audit", *([paths] if isinstance(paths, str) else paths), "--format", "json"]
    for name, value in options.items():
        flag = "--" + name.replace("_", "-")
        if value is True:
            args.append(flag)
        elif name == "map" and isinstance(value, dict):
            for canonical, theirs in value.items():
                args += ["--map", f"{canonical}={theirs}"]
        elif isinstance(value, list):
            for item in value:
                args += [flag, str(item)]
        else:
            args += [flag, str(value)]
    return args


def _case_id(case) -> str:
    paths, options = case
    text = paths if isinstance(paths, str) else "+".join(paths)
    if options:
        text += " " + " ".join(f"{k}={v}" for k, v in options.items())
    return text


_GENERATED_AT = re.compile(r'^  "generated_at": "[^"]*",\n', re.MULTILINE)


def _without_time(document: str) -> str:
    assert _GENERATED_AT.search(document), "no generated_at line"
    return _GENERATED_AT.sub("", document)


RESULTS = {"compared": 0, "refused_by_both": 0}


@pytest.mark.parametrize("case", CASES, ids=[_case_id(c) for c in CASES])
def test_report_is_the_command_lines(cli, case):
    paths, options = case
    completed = run_cli(cli, *_cli_args(paths, options))
    assert completed.returncode in (0, 1, 2), completed.stderr
    if completed.returncode == 2:
        # The command line refuses the input or the options: so must the package.
        with pytest.raises((ValueError, OSError)) as raised:
            gapcert.audit(paths, **options)
        if "problem(s) found" in completed.stderr:
            assert isinstance(raised.value, gapcert.InputError), raised.value
            # Every problem the command line lists, the package lists, located alike.
            count = int(re.search(r"(\d+) problem\(s\) found", completed.stderr).group(1))
            assert len(raised.value.problems) == count
            for problem in raised.value.problems:
                where = problem["file"] + (f":{problem['row']}:" if problem["row"] else ":")
                assert where in completed.stderr, (problem, completed.stderr)
        # With the same words, options written as Python's keyword arguments.
        said = completed.stderr.strip()
        said = said[len("gapcert: "):] if said.startswith("gapcert: ") else said
        if isinstance(raised.value, ValueError):
            said = gapcert._errors._pythonic(said)
        assert str(raised.value) == said
        RESULTS["refused_by_both"] += 1
        return
    report = gapcert.audit(paths, **options)
    assert _without_time(report.to_json()) == _without_time(completed.stdout)
    assert report.passed == (completed.returncode == 0)
    document = json.loads(completed.stdout)
    assert report.summary == document["summary"]
    _frames_match(report, document)
    RESULTS["compared"] += 1


def _same(got, want, what):
    if isinstance(want, float) and isinstance(got, float):
        assert got == want, what  # exact: the JSON round-trips every f64
    else:
        assert got == want, what


def _frames_match(report, document):
    runs = report.runs
    assert runs.height == len(document["runs"])
    for row, run in zip(runs.iter_rows(named=True), document["runs"]):
        for column, value in row.items():
            what = f"{run['run']}.{column}"
            if column.endswith("_interval_lo") or column.endswith("_interval_hi"):
                base, end = column.rsplit("_", 1)
                _same(value, run[base][0 if end == "lo" else 1], what)
            elif column == "findings":
                _same(value, ";".join(f["code"] for f in run["findings"]), what)
            elif column == "copies":  # in JSON a list, written only when not empty
                _same(value, ";".join(run.get("copies", [])), what)
            elif column in run:
                _same(value, run[column], what)
            else:  # a column of keep=
                _same(value, run["kept"][column], what)
    claims = report.claims
    assert claims.height == len(document.get("claims", []))
    for row, claim in zip(claims.iter_rows(named=True), document.get("claims", [])):
        for column, value in row.items():
            _same(value, claim.get(column), f"claim {claim['claim']}.{column}")
    splits = report.splits
    assert splits.height == len(document.get("splits", []))
    for row, split in zip(splits.iter_rows(named=True), document.get("splits", [])):
        for column, value in row.items():
            what = f"split {split['split']}.{column}"
            if column == "history":
                _same(json.loads(value), split.get("history"), what)
            elif column == "size_mismatch":
                _same(value, str(split.get("size_mismatch")).lower(), what)
            else:
                _same(value, split.get(column), what)


def test_every_fixture_was_compared(cli):
    """Runs last in this module: how many cases were compared, and how many both
    refused (the count is printed with -s)."""
    if RESULTS["compared"] == 0:
        pytest.skip("the comparisons did not run in this session")
    print(
        f"\n{RESULTS['compared']} audits equal to the command line's, "
        f"{RESULTS['refused_by_both']} refused by both"
    )
    assert RESULTS["compared"] >= 25
