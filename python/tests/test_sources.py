"""What `gapcert.audit` reads: paths, folders, lists of paths, polars and pandas
frames, objects with the Arrow C stream interface, and claims given either way.

A frame must give the same audit as the file it was read from (but for the file
name in `source` and `inputs`): it goes to the library as Arrow IPC, not as text.
"""

from __future__ import annotations

import json
from pathlib import Path

import polars as pl
import pytest

import gapcert

DEMO = "fixtures/demo/runs.csv"
CLAIMS = "fixtures/demo/claims.csv"


def _runs_without_source(report):
    runs = report.to_dict()["runs"]
    for run in runs:
        run.pop("source")
    return runs


@pytest.fixture(scope="module")
def demo_frame():
    return pl.read_csv(DEMO)


@pytest.fixture(scope="module")
def from_file():
    return gapcert.audit(DEMO)


class ArrowStream:
    """Only the Arrow PyCapsule stream interface, nothing else a library could
    recognise (as a DuckDB or DataFusion result offers it)."""

    def __init__(self, table):
        self._table = table

    def __arrow_c_stream__(self, requested_schema=None):
        return self._table.__arrow_c_stream__(requested_schema)


def test_a_path_as_str_and_as_pathlike(from_file):
    assert gapcert.audit(Path(DEMO)).to_dict()["runs"] == from_file.to_dict()["runs"]
    assert from_file.summary["runs"] == 21
    assert from_file.to_dict()["inputs"][0]["path"] == DEMO


def test_a_folder_and_a_list_of_paths():
    folder = gapcert.audit("fixtures/edge/mixed")
    assert folder.summary["runs"] == 4 and folder.summary["files_skipped"] == 1
    both = gapcert.audit(["fixtures/edge/mixed", Path("fixtures/worked/runs.csv")])
    assert both.runs.height == folder.runs.height + 3
    assert [i["path"] for i in both.to_dict()["inputs"]] == [
        "fixtures/edge/mixed/a.csv",
        "fixtures/edge/mixed/b.jsonl",
        "fixtures/worked/runs.csv",
    ]


def test_every_format_of_the_formats_folder(from_file):
    for path in sorted(Path("fixtures/formats").iterdir()):
        report = gapcert.audit(path)
        assert report.runs.height == 21, path


@pytest.mark.parametrize(
    "convert",
    [
        pytest.param(lambda df: df, id="polars"),
        pytest.param(lambda df: df.lazy(), id="polars-lazy"),
        pytest.param(lambda df: df.to_pandas(), id="pandas"),
        pytest.param(lambda df: df.to_pandas(use_pyarrow_extension_array=True), id="pandas-arrow"),
        pytest.param(lambda df: df.to_arrow(), id="pyarrow-table"),
        pytest.param(lambda df: ArrowStream(df.to_arrow()), id="arrow-c-stream"),
    ],
)
def test_frames_audit_like_the_file(demo_frame, from_file, convert):
    report = gapcert.audit(convert(demo_frame))
    assert _runs_without_source(report) == _runs_without_source(from_file)
    assert report.runs["source"][0] == "frame:1"
    assert report.to_dict()["inputs"][0]["path"] == "frame"
    assert report.summary == from_file.summary


def test_frame_columns_of_other_types(demo_frame, from_file):
    frame = demo_frame.with_columns(
        pl.col("family").cast(pl.Categorical),
        pl.col("holdout_n").cast(pl.UInt32),
        pl.col("candidates").cast(pl.Int128) if hasattr(pl, "Int128") else pl.col("candidates"),
        extra=pl.lit([1, 2]),
        label=pl.struct(a=pl.lit(1)),
    )
    assert _runs_without_source(gapcert.audit(frame)) == _runs_without_source(from_file)


def test_pandas_index_is_kept(demo_frame, from_file):
    indexed = demo_frame.to_pandas().set_index("run")
    assert gapcert.audit(indexed).runs["run"].to_list() == from_file.runs["run"].to_list()


def test_several_frames_are_numbered(demo_frame):
    first, second = demo_frame.head(3), demo_frame.slice(3, 2)
    report = gapcert.audit([first, second])
    assert [i["path"] for i in report.to_dict()["inputs"]] == ["frame1", "frame2"]
    assert report.runs.height == 5


def test_files_and_frames_together(demo_frame):
    report = gapcert.audit([demo_frame.head(2), "fixtures/edge/mixed"])
    # Files first, then frames; folders' other files are still listed as skipped.
    assert [i["path"] for i in report.to_dict()["inputs"]] == [
        "fixtures/edge/mixed/a.csv",
        "fixtures/edge/mixed/b.jsonl",
        "frame",
    ]
    assert report.summary["files_skipped"] == 1
    assert report.to_dict()["skipped_files"][0]["path"].endswith("README.txt")


def test_claims_from_a_file():
    report = gapcert.audit(DEMO, claims=CLAIMS)
    assert report.claims.height == 8
    assert report.summary["claims"] == 8
    assert set(report.claims["verdict"]) <= {"certified", "unproven", "refuted"}
    assert report.to_dict()["settings"]["claims"] == [CLAIMS]


def test_claims_from_a_frame_or_a_path_agree(demo_frame):
    from_paths = gapcert.audit(DEMO, claims=CLAIMS)
    claims_frame = pl.read_csv(CLAIMS)
    for logs, claims in [
        (DEMO, claims_frame),
        (demo_frame, CLAIMS),
        (demo_frame, claims_frame.to_pandas()),
        (DEMO, [claims_frame.head(4), claims_frame.slice(4)]),
    ]:
        report = gapcert.audit(logs, claims=claims)
        got = report.claims.drop("source").to_dicts()
        assert got == from_paths.claims.drop("source").to_dicts()


def test_claims_need_the_runs_they_name():
    # The demo's release note names the demo's runs: against another log, every
    # claim's run is missing, and each is listed with file and row.
    with pytest.raises(gapcert.InputError) as raised:
        gapcert.audit("fixtures/worked/runs.csv", claims=CLAIMS)
    problems = raised.value.problems
    assert len(problems) >= 8
    assert all(p["file"] == CLAIMS and p["row"] for p in problems)


def test_options_reach_the_audit():
    plain = gapcert.audit(DEMO)
    strict = gapcert.audit(DEMO, confidence=0.999, familywise=True, holdout_bound="hoeffding")
    settings = strict.to_dict()["settings"]
    assert settings["confidence"] == 0.999 and settings["familywise"] is True
    assert settings["holdout_bound"] == "hoeffding"
    assert strict.summary["certified"] < plain.summary["certified"]
    # claim_accuracy is the claim of the runs that make none (5 in the demo).
    assert plain.summary["no_claim"] == 5
    claimed = gapcert.audit(DEMO, claim_accuracy=0.5)
    assert claimed.summary["no_claim"] == 0
    assert claimed.runs.filter(pl.col("claim_error_rate") == 0.5).height == 5
    assert gapcert.audit(DEMO, gate="never").passed
    assert not gapcert.audit(DEMO).passed
    renamed = gapcert.audit(
        "fixtures/edge/renamed.csv", map={"holdout_error_rate": "val_err", "holdout_n": "n_val"}
    )
    assert renamed.runs.height == 4


def test_percent_logs():
    report = gapcert.audit("fixtures/edge/percent.csv", percent=True)
    fractions = gapcert.audit("fixtures/edge/bom_crlf.csv")
    got = report.runs["error_upper_bound"].to_list()
    want = fractions.runs["error_upper_bound"].to_list()
    assert all(abs(a - b) < 1e-9 for a, b in zip(got, want))
    assert report.to_dict()["settings"]["percent"] is True


def test_lenient_skips_bad_rows():
    report = gapcert.audit("fixtures/bad/rate_above_one.csv", lenient=True)
    document = report.to_dict()
    assert report.summary["rows_skipped"] == len(document["skipped_rows"]) > 0
    assert report.summary["rows_read"] == report.summary["runs"] + report.summary["rows_skipped"]


def test_json_document_shape(from_file):
    document = json.loads(from_file.to_json())
    assert list(document)[:5] == ["tool", "generated_at", "settings", "inputs", "runs"]
    assert document["tool"] == {"name": "gapcert", "version": gapcert.__version__}
    assert from_file.to_dict()["summary"] == from_file.summary


def test_struct_columns_of_a_frame_are_read_by_dotted_paths():
    # A frame whose metrics sit in a struct column (a column of dicts), invented runs:
    # the same dotted --map that reads nested JSON reads its fields.
    frame = pl.DataFrame(
        {
            "run": ["nested-1", "nested-2"],
            "metrics": [{"n": 4000, "acc": 0.96}, {"n": 4000, "acc": 0.94}],
            "claimed_accuracy": [0.9, 0.9],
        }
    )
    report = gapcert.audit(frame, map={"holdout_n": "metrics.n", "holdout_accuracy": "metrics.acc"})
    assert report.runs["holdout_misclassified"].to_list() == [160, 240]
    with pytest.raises(gapcert.InputError) as caught:
        gapcert.audit(frame, map={"holdout_n": "metrics", "holdout_accuracy": "metrics.acc"})
    assert any("`metrics` is an object" in problem["message"] for problem in caught.value.problems)
