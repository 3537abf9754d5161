"""The command line's JUnit report (``--format junit``), parsed with the standard
library's XML parser and counted against the package's report of the same audit: one
test case per claim (each run with a claim, then each claim of the claims files), and
a failure exactly where the gate fails."""

from __future__ import annotations

import xml.etree.ElementTree as ElementTree

import pytest

import gapcert

from conftest import run_cli

SLIPS = {
    "claim_below_half",
    "claim_looks_like_error_rate",
    "claim_looks_like_accuracy",
    "holdout_n_equals_train_n",
}


@pytest.mark.parametrize("gate", ["unproven", "refuted", "never"])
def test_junit_counts_match_the_report(cli, tmp_path, gate):
    out = tmp_path / "audit.xml"
    done = run_cli(
        cli,
        "audit",
        "fixtures/demo/runs.csv",
        "--claims",
        "fixtures/demo/claims.csv",
        "--gate",
        gate,
        "--output",
        str(out),
    )
    assert done.returncode in (0, 1), done.stderr
    root = ElementTree.parse(out).getroot()
    cases = root.findall("./testsuite/testcase")
    failed = [case for case in cases if case.find("failure") is not None]

    report = gapcert.audit(
        "fixtures/demo/runs.csv", claims="fixtures/demo/claims.csv", gate=gate
    )
    runs = report.runs.filter(report.runs["verdict"] != "no_claim")
    claims = report.claims
    assert len(cases) == runs.height + claims.height
    assert int(root.get("tests")) == len(cases)
    assert int(root.get("failures")) == len(failed)

    def run_fails(row) -> bool:
        slip = bool(set(filter(None, (row["findings"] or "").split(";"))) & SLIPS)
        if gate == "unproven":
            return row["verdict"] != "certified" or slip
        if gate == "refuted":
            return row["verdict"] == "refuted" or slip
        return False

    def claim_fails(row) -> bool:
        if gate == "unproven":
            return row["verdict"] != "certified"
        if gate == "refuted":
            return row["verdict"] == "refuted"
        return False

    expected = sum(run_fails(r) for r in runs.iter_rows(named=True)) + sum(
        claim_fails(c) for c in claims.iter_rows(named=True)
    )
    assert len(failed) == expected
    # The gate fails exactly when a case does, and the exit code says so.
    assert report.passed == (len(failed) == 0)
    assert done.returncode == (1 if failed else 0)
    for case in cases:
        names = {p.get("name") for p in case.findall("./properties/property")}
        assert {"verdict", "method", "confidence"} <= names
