"""Errors: bad input raises gapcert.InputError (a ValueError) listing every problem
with file, row and column; wrong options and paths raise ValueError; files that
cannot be written raise OSError."""

from __future__ import annotations

import polars as pl
import pytest

import gapcert


def test_a_rate_above_one_names_file_row_and_column():
    with pytest.raises(gapcert.InputError) as raised:
        gapcert.audit("fixtures/bad/rate_above_one.csv")
    error = raised.value
    assert isinstance(error, ValueError)
    assert error.problems == [
        {
            "file": "fixtures/bad/rate_above_one.csv",
            "row": 3,
            "column": "holdout_error_rate",
            "message": "holdout_error_rate = 1.7 is outside [0, 1] (pass percent=True if the logs hold percentages)",
        }
    ]
    assert str(error).splitlines() == [
        "fixtures/bad/rate_above_one.csv:3: holdout_error_rate = 1.7 is outside [0, 1] (pass percent=True if the logs hold percentages)",
        "1 problem(s) found; fix them or pass lenient=True to skip bad rows",
    ]


def test_every_problem_is_listed():
    with pytest.raises(gapcert.InputError) as raised:
        gapcert.audit("fixtures/bad/several_bad_rows.csv")
    problems = raised.value.problems
    assert [p["row"] for p in problems] == [1, 2, 3, 4]
    assert [p["column"] for p in problems] == [
        "holdout_error_rate",
        "dim",
        "holdout_misclassified",
        "holdout_n",
    ]


def test_problems_of_several_files_and_of_whole_files():
    with pytest.raises(gapcert.InputError) as raised:
        gapcert.audit(["fixtures/bad/rate_above_one.csv", "fixtures/bad/missing_holdout_n.csv"])
    files = {p["file"] for p in raised.value.problems}
    assert files == {"fixtures/bad/rate_above_one.csv", "fixtures/bad/missing_holdout_n.csv"}
    whole = [p for p in raised.value.problems if p["file"].endswith("missing_holdout_n.csv")]
    assert whole and whole[0]["row"] is None


def test_a_frame_with_a_bad_row_is_located_in_the_frame():
    frame = pl.DataFrame(
        {"run": ["a", "b"], "holdout_n": [100, 100], "holdout_error_rate": [0.1, 1.5]}
    )
    with pytest.raises(gapcert.InputError) as raised:
        gapcert.audit(frame)
    (problem,) = raised.value.problems
    assert (problem["file"], problem["row"], problem["column"]) == ("frame", 2, "holdout_error_rate")


def test_bad_claims_are_input_errors():
    claims = pl.DataFrame(
        {"claim": ["c1"], "kind": ["fastest"], "run": ["kw-lin24-bands"], "value": [0.9]}
    )
    with pytest.raises(gapcert.InputError) as raised:
        gapcert.audit("fixtures/demo/runs.csv", claims=claims)
    (problem,) = raised.value.problems
    assert problem["file"] == "claims" and problem["row"] == 1
    assert "accuracy" in problem["message"]  # the kinds are listed


@pytest.mark.parametrize(
    "options, words",
    [
        ({"confidence": 95}, "confidence 95 is outside [0, 1] (write 0.95, or pass percent=True"),
        ({"confidence": 1.0}, "confidence 1 must be strictly between 0 and 1"),
        ({"percent": True, "claim_accuracy": 0.95}, "claim_accuracy 0.95 reads as 0.95 %"),
        ({"tolerance": -1}, "tolerance -1 must be positive"),
        ({"max_width": 0}, "max_width 0 must be positive"),
        ({"map": ["holdout_n"]}, "holdout_n"),
        ({"map": {"holdout_n": "a", "HOLDOUT_N": "b"}}, "holdout_n"),
        ({"map_file": "no/such/map.json"}, "cannot read the map file"),
        ({"gate_allow": "holdout_reused"}, "only these findings fail the gate"),
        ({"gate": "sometimes"}, 'choose one of "unproven", "refuted", "never"'),
        ({"holdout_bound": "chernoff"}, '"binomial", "hoeffding"'),
        ({"same_holdout": True}, "same_holdout=True"),
    ],
)
def test_wrong_options_are_value_errors(options, words):
    with pytest.raises(ValueError) as raised:
        gapcert.audit("fixtures/demo/runs.csv", **options)
    assert not isinstance(raised.value, gapcert.InputError)
    assert words in str(raised.value)


@pytest.mark.parametrize(
    "source, words",
    [
        ("no/such/log.csv", "no/such/log.csv: cannot read this path (no such file or folder)"),
        ("fixtures/demo/README.md", "unknown log type"),
        ([], "an empty list"),
    ],
)
def test_wrong_paths_are_value_errors(source, words):
    with pytest.raises(ValueError) as raised:
        gapcert.audit(source)
    assert words in str(raised.value)


@pytest.mark.parametrize(
    "options, error",
    [
        ({"percent": "yes"}, TypeError),
        ({"confidence": "high"}, TypeError),
        ({"map": {"holdout_n": 3}}, TypeError),
        ({"gate_allow": [1]}, TypeError),
    ],
)
def test_wrong_types_are_type_errors(options, error):
    with pytest.raises(error):
        gapcert.audit("fixtures/demo/runs.csv", **options)


def test_an_unknown_source_type():
    with pytest.raises(TypeError) as raised:
        gapcert.audit({"holdout_n": [1]})
    assert "__arrow_c_stream__" in str(raised.value)


def test_writing_into_a_missing_folder_is_an_os_error(tmp_path):
    report = gapcert.audit("fixtures/worked/runs.csv")
    with pytest.raises(OSError) as raised:
        report.write_html(tmp_path / "missing" / "audit.html")
    assert "nothing was written there" in str(raised.value)


def test_a_pandas_frame_that_cannot_become_a_table_is_an_input_error():
    """Repeated column names and an object column mixing types are input errors
    naming the frame and the column, not raw pyarrow or polars errors."""
    pd = pytest.importorskip("pandas")
    repeated = pd.DataFrame([[100, 3, 5]], columns=["holdout_n", "holdout_misclassified", "holdout_n"])
    with pytest.raises(gapcert.InputError) as raised:
        gapcert.audit(repeated)
    [problem] = raised.value.problems
    assert problem["file"] == "frame" and problem["column"] == "holdout_n"
    assert "appears 2 times" in problem["message"]
    mixed = pd.DataFrame({"run": ["a", "b", "c"], "holdout_n": [100, "x", 200], "holdout_misclassified": [1, 2, 3]})
    with pytest.raises(gapcert.InputError) as raised:
        gapcert.audit(mixed)
    [problem] = raised.value.problems
    assert problem["column"] == "holdout_n" and problem["row"] == 2
    assert "mixes types (int from row 1, str from row 2)" in problem["message"]
