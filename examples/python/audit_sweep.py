"""Audit a hyper-parameter sweep from a notebook or a script.

    pip install ./python          # from the root of a gapcert clone
    python examples/python/audit_sweep.py [OUTPUT.html]

The sweep below is INVENTED for this example: the run names, error counts and claims
are made up with a fixed random seed and describe no real model or data set. In a
notebook, run the cells one by one; the last expression of a cell that holds a
report shows its summary, claims and worst runs (``Report._repr_html_``).
"""

# %% An invented sweep: 40 learning-rate / width settings of a classifier, each
# scored on one of two held-out splits. Every run claims 96 % accuracy.
import random
import sys

import polars as pl

import gapcert

rng = random.Random(7)  # invented data, reproducible
rows = []
for trial in range(40):
    width = rng.choice([64, 128, 256])
    split = "val-a" if trial < 25 else "val-b"
    holdout_n = 4000 if split == "val-a" else 1500
    true_error = rng.uniform(0.015, 0.06)
    rows.append(
        {
            "run": f"sweep-{trial:02d}-w{width}",
            "family": "relu_net",
            "weights": width * 785 + width * 11,
            "layers": 2,
            "units": width + 10,
            "train_n": 60_000,
            "train_error_rate": round(true_error * rng.uniform(0.3, 0.9), 4),
            "holdout_n": holdout_n,
            "holdout_misclassified": round(true_error * holdout_n),
            "holdout_set": split,
            "claimed_accuracy": 0.96,
        }
    )
sweep = pl.DataFrame(rows)

# %% Audit it. The frame goes to the library as Arrow data, not as text. Every run
# compared on "val-a" pays for the 25 comparisons made there (K = 25).
report = gapcert.audit(sweep, confidence=0.95)
print(report.summary_line())
print()
print("summary:", report.summary)

# %% The worst runs first: refuted, then unproven, then certified.
worst = report.worst_runs(8).select(
    "run",
    "holdout_set",
    "candidates",
    "holdout_error_rate",
    "error_upper_bound",
    "certifiable_accuracy",
    "verdict",
    "holdout_needed",
)
with pl.Config(tbl_rows=10, tbl_cols=10, tbl_width_chars=140):
    print(worst)

# %% How much certifying power each split has left.
print(report.splits.select("split", "candidates", "best_run", "certifiable_now", "comparisons_left"))

# %% What it would take: the unproven runs nearest to certification, and the
# held-out examples each would need at its error rate (the calculator gives the
# same number as the audit's `holdout_needed`).
nearest = (
    report.runs.filter(pl.col("verdict") == "unproven")
    .sort("holdout_needed", nulls_last=True)
    .select("run", "holdout_n", "holdout_error_rate", "candidates", "holdout_needed")
    .head(3)
)
print(nearest)
first = nearest.row(0, named=True)
needed = gapcert.holdout_needed(first["holdout_error_rate"], 0.96, candidates=first["candidates"])
print(f"{first['run']}: {needed} held-out examples at {first['holdout_error_rate']:.2%} would certify 96 %")

# %% The HTML page: charts of every run's interval against its claim, and of each split.
output = sys.argv[1] if len(sys.argv) > 1 else "audit_sweep.html"
report.write_html(output)
print(f"wrote {output}; the gate {'passes' if report.passed else 'fails'}")
