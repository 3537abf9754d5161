"""The frames carry codes and numbers, and sentences only with ``explain=True``
(SPEC §7); outputs that need every sentence audit again, from the folder of the
audit, and refuse when a log changed; files and frames make one audit whose summary
counts the files skipped in folders; claims and runs are listed worst first as the
library orders them."""

from __future__ import annotations

import shutil
from pathlib import Path

import polars as pl
import pytest

import gapcert

ROOT = Path(__file__).resolve().parents[2]


def test_frames_carry_codes_unless_explained():
    report = gapcert.audit("fixtures/demo/runs.csv")
    assert "explanation" not in report.runs.columns
    assert "finding_messages" not in report.runs.columns
    explained = gapcert.audit("fixtures/demo/runs.csv", explain=True)
    columns = explained.runs.columns
    assert columns.index("finding_messages") == columns.index("findings") + 1
    assert explained.runs.drop("explanation", "finding_messages").equals(report.runs)
    document = explained.to_dict()["runs"]
    for row, run in zip(explained.runs.iter_rows(named=True), document):
        assert row["explanation"] == run["explanation"]
        assert row["finding_messages"] == [f["message"] for f in run["findings"]]
        assert row["findings"] == ";".join(f["code"] for f in run["findings"])
    assert any(row["finding_messages"] for row in explained.runs.iter_rows(named=True))


def test_explain_takes_a_flag():
    with pytest.raises(TypeError):
        gapcert.audit("fixtures/demo/runs.csv", explain="yes")


def test_runs_read_again_equal_the_first_read():
    report = gapcert.audit("fixtures/demo/runs.csv", claims="fixtures/demo/claims.csv")
    first = report.runs
    report._cache.clear()  # the parts were taken: the library audits again
    assert report.runs.equals(first)


def test_files_and_frames_count_the_files_skipped_in_folders():
    folder_only = gapcert.audit("fixtures/edge/mixed")
    assert folder_only.summary["files_skipped"] > 0
    mixed = gapcert.audit(["fixtures/edge/mixed", pl.read_csv("fixtures/worked/runs.csv")])
    assert mixed.summary["files_skipped"] == folder_only.summary["files_skipped"]
    document = mixed.to_dict()
    assert document["skipped_files"] == folder_only.to_dict()["skipped_files"]
    assert document["inputs"][-1]["path"] == "frame"
    assert mixed.runs["source"].to_list()[-1].startswith("frame:")


def test_claims_and_runs_worst_first():
    report = gapcert.audit("fixtures/demo/runs.csv", claims="fixtures/demo/claims.csv")
    order = gapcert._core.report_worst_claims(report._result)
    severity = {"refuted": 0, "unproven": 1, "certified": 2}
    verdicts = [report.claims["verdict"][row] for row in order]
    assert sorted(order) == list(range(report.claims.height))
    assert [severity[v] for v in verdicts] == sorted(severity[v] for v in verdicts)
    worst = report.worst_runs(report.runs.height)
    assert sorted(worst["source"].to_list()) == sorted(report.runs["source"].to_list())
    runs_severity = {"refuted": 0, "unproven": 1, "certified": 2, "no_claim": 3}
    ranks = [runs_severity[v] for v in worst["verdict"].to_list()]
    assert ranks == sorted(ranks)


def test_outputs_after_changing_folder(tmp_path, monkeypatch):
    report = gapcert.audit("fixtures/worked/runs.csv", claims="fixtures/worked/claims.csv")
    monkeypatch.chdir(tmp_path)  # a notebook may change folder after auditing
    document = report.to_dict()
    assert document["inputs"][0]["path"] == "fixtures/worked/runs.csv"
    report.write_html("page.html")
    assert (tmp_path / "page.html").exists()
    monkeypatch.chdir(ROOT)
    assert document["runs"] == gapcert.audit(
        "fixtures/worked/runs.csv", claims="fixtures/worked/claims.csv"
    ).to_dict()["runs"]


def test_outputs_refuse_a_log_changed_since_the_audit(tmp_path, monkeypatch):
    shutil.copy(ROOT / "fixtures/worked/runs.csv", tmp_path / "runs.csv")
    monkeypatch.chdir(tmp_path)
    report = gapcert.audit("runs.csv")
    runs = report.runs
    text = (tmp_path / "runs.csv").read_text().replace("500,68", "500,90")
    (tmp_path / "runs.csv").write_text(text)
    with pytest.raises(ValueError) as raised:
        report.to_json()
    assert "changed" in str(raised.value)
    with pytest.raises(ValueError):
        report.worst_runs(3)
    with pytest.raises(ValueError):
        report.write_certificate(tmp_path / "runs.cert.json")
    assert not (tmp_path / "runs.cert.json").exists()
    assert report.runs is runs  # the frame read before stays
