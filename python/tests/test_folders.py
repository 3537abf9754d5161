"""A sweep folder of many small CSV logs, audited in a child process (a crash must
not take the test session with it).

Regression: each file of a folder used to be read on a worker of rayon's global pool,
where polars' CSV reader waits on a pool of its own and the waiting worker ran the next
file's read meanwhile, so reads nested on one stack until it overflowed (SIGSEGV in the
extension, "stack overflow" from the command line) on folders of about a thousand CSVs.
Files are now read on plain threads.
"""

from __future__ import annotations

import subprocess
import sys

import numpy as np
import polars as pl


def test_a_folder_of_1500_csv_logs(tmp_path):
    rows = 30_000
    rng = np.random.default_rng(4)
    frame = pl.DataFrame(
        {
            "index": np.arange(rows),
            "holdout_n": rng.integers(500, 5000, rows),
            "holdout_misclassified": rng.integers(0, 400, rows),
        }
    ).select(pl.format("r{}", "index").alias("run"), "holdout_n", "holdout_misclassified")
    for number in range(1500):
        frame.slice(number * 20, 20).write_csv(tmp_path / f"run-{number:04d}.csv")
    child = subprocess.run(
        [
            sys.executable,
            "-c",
            "import sys, gapcert; print(gapcert.audit(sys.argv[1]).summary['runs'])",
            str(tmp_path),
        ],
        capture_output=True,
        text=True,
        timeout=600,
    )
    assert child.returncode == 0, f"exit {child.returncode}: {child.stderr[-500:]}"
    assert child.stdout.strip() == str(rows)
