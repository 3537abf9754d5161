"""The report's outputs: the HTML page, certificates that `gapcert verify` accepts,
the notebook view, and the refusal to overwrite an input."""

from __future__ import annotations

import html
import json
import os
import shutil
from pathlib import Path

import polars as pl
import pytest

import gapcert

from conftest import ROOT, run_cli


@pytest.fixture(scope="module")
def demo():
    return gapcert.audit("fixtures/demo/runs.csv", claims="fixtures/demo/claims.csv")


def test_write_html(demo, tmp_path):
    path = tmp_path / "audit.html"
    demo.write_html(path)
    page = path.read_text()
    assert page.startswith("<!DOCTYPE html>") or page.lstrip().lower().startswith("<!doctype html>")
    assert "<svg" in page and "kw-relu-3x80" in page
    # Nothing else is left in the folder (written atomically: temporary, rename).
    assert [p.name for p in tmp_path.iterdir()] == ["audit.html"]


def test_write_certificate_and_verify(cli, demo, tmp_path):
    path = tmp_path / "audit.cert.json"
    demo.write_certificate(str(path))
    certificate = json.loads(path.read_text())
    assert certificate["certificate"]["paths"] == ["fixtures/demo/runs.csv"]
    # The folder the audit ran in, relative to the certificate's.
    root = certificate["certificate"]["root"]
    assert (tmp_path.resolve() / root).resolve() == ROOT.resolve()
    assert "working_dir" not in certificate["certificate"]
    assert certificate["runs"] == demo.to_dict()["runs"]
    # The logs lie outside the certificate's folder: read only when --root says so.
    refused = run_cli(cli, "verify", str(path))
    assert refused.returncode == 2 and "--root" in refused.stderr, refused.stderr
    verified = run_cli(cli, "verify", str(path), "--root", str(ROOT))
    assert verified.returncode == 0, verified.stdout + verified.stderr


def test_certificate_records_the_folder_of_the_audit(cli, tmp_path, monkeypatch):
    report = gapcert.audit("fixtures/worked/runs.csv", claims="fixtures/worked/claims.csv")
    monkeypatch.chdir(tmp_path)  # a notebook may change folder after auditing
    report.write_certificate("worked.cert.json")
    written = json.loads((tmp_path / "worked.cert.json").read_text())
    assert (tmp_path.resolve() / written["certificate"]["root"]).resolve() == ROOT.resolve()
    verified = run_cli(cli, "verify", str(tmp_path / "worked.cert.json"), "--root", str(ROOT))
    assert verified.returncode == 0, verified.stdout + verified.stderr


def test_verify_finds_drift_after_the_log_changes(cli, tmp_path, monkeypatch):
    shutil.copy(ROOT / "fixtures/worked/runs.csv", tmp_path / "runs.csv")
    monkeypatch.chdir(tmp_path)
    gapcert.audit("runs.csv").write_certificate("runs.cert.json")
    assert run_cli(cli, "verify", str(tmp_path / "runs.cert.json")).returncode == 0
    text = (tmp_path / "runs.csv").read_text().replace("500,68", "500,90")
    (tmp_path / "runs.csv").write_text(text)
    assert run_cli(cli, "verify", str(tmp_path / "runs.cert.json")).returncode == 1


def test_no_certificate_for_a_frame(tmp_path):
    report = gapcert.audit(pl.read_csv("fixtures/worked/runs.csv"))
    with pytest.raises(ValueError) as raised:
        report.write_certificate(tmp_path / "frame.cert.json")
    assert "DataFrame" in str(raised.value)
    assert not (tmp_path / "frame.cert.json").exists()
    report.write_html(tmp_path / "frame.html")  # the page needs no files
    assert (tmp_path / "frame.html").exists()


def test_outputs_never_replace_an_input(tmp_path):
    log = tmp_path / "runs.csv"
    shutil.copy(ROOT / "fixtures/worked/runs.csv", log)
    before = log.read_bytes()
    report = gapcert.audit(log)
    for write in (report.write_html, report.write_certificate):
        with pytest.raises(ValueError) as raised:
            write(log)
        assert "which the output would replace" in str(raised.value)
    # Also through another name for the same file.
    os.link(log, tmp_path / "alias.csv")
    with pytest.raises(ValueError):
        report.write_html(tmp_path / "alias.csv")
    assert log.read_bytes() == before


def test_notebook_view_escapes_text():
    frame = pl.DataFrame(
        {
            "run": ["<script>alert(1)</script>", "b&b"],
            "holdout_n": [1000, 1000],
            "holdout_misclassified": [10, 90],
            "claimed_accuracy": [0.95, 0.95],
        }
    )
    claims = pl.DataFrame(
        {
            "claim": ["c<1>"],
            "statement": ['"Best" model <b>ever</b>'],
            "kind": ["accuracy"],
            "run": ["b&b"],
            "value": [0.95],
        }
    )
    page = gapcert.audit(frame, claims=claims)._repr_html_()
    assert "<script>" not in page and "<b>ever" not in page
    assert html.escape("<script>alert(1)</script>") in page
    assert "b&amp;b" in page and "c&lt;1&gt;" in page
    assert "FAIL" in page and "refuted" in page
    assert page.count("<table>") == 3  # counts, claims, runs


def test_worst_runs_and_summary(demo):
    worst = demo.worst_runs(3)
    assert worst["verdict"].to_list()[0] == "refuted"
    assert worst.columns == demo.runs.columns
    assert demo.worst_runs(0).height == 0
    assert demo.worst_runs(1000).height == demo.runs.height
    assert demo.summary["gate"] == "fail" and demo.passed is False
    assert "21 runs" in str(demo) and "gate FAIL" in repr(demo)
    summary = demo.summary
    summary["gate"] = "pass"  # a copy: the report does not change
    assert demo.summary["gate"] == "fail"


def test_frames_are_polars(demo):
    assert isinstance(demo.runs, pl.DataFrame)
    assert demo.runs.height == 21 and demo.claims.height == 8
    assert demo.splits.height == len(demo.to_dict()["splits"])
    assert demo.runs.schema["holdout_n"] == pl.UInt64
    assert demo.runs is demo.runs  # read once
