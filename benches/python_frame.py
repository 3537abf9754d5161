#!/usr/bin/env python3
"""SPEC §8: `gapcert.audit(frame)` on a million rows plus the first `.runs` access,
against the command line's NDJSON audit of the same rows (target: at most 1.3×).

Usage (from the repository root, with the package installed in the Python that runs
this script and the release binary built):

    cargo build --release
    cargo run --release --example generate_logs -- --rows 1000000 --seed 7 \
        --output bench-data/runs-1000000.csv
    python benches/python_frame.py bench-data/runs-1000000.csv [--binary PATH] [--rounds 5]

Each round runs the two sides alternately, each in a fresh process under
/usr/bin/time -v (peak RSS); the Python side reads the CSV into a polars frame first
and times only `gapcert.audit(frame)` + `report.runs`. Prints the medians and the
ratio. `--explain` times `explain=True` instead; `--python VENV/bin/python` times the
package installed there (an earlier build, for a before/after comparison).
"""

from __future__ import annotations

import argparse
import re
import statistics
import subprocess
import sys
import tempfile
import time
from pathlib import Path

PYTHON_SIDE = r"""
import sys, time, polars as pl, gapcert
frame = pl.read_csv(sys.argv[1], infer_schema_length=100000)
started = time.perf_counter()
report = gapcert.audit(frame, **({"explain": True} if sys.argv[2] == "1" else {}))
runs = report.runs
took = time.perf_counter() - started
assert runs.height == report.summary["runs"]
print(f"took {took:.4f}")
"""


def peak_rss_gb(stderr: str) -> float:
    match = re.search(r"Maximum resident set size \(kbytes\): (\d+)", stderr)
    return int(match.group(1)) / 1024 / 1024 if match else float("nan")


def cli_round(binary: str, log: str, output: str):
    started = time.perf_counter()
    done = subprocess.run(
        ["/usr/bin/time", "-v", binary, "audit", log, "--format", "ndjson", "--output", output],
        capture_output=True,
        text=True,
    )
    took = time.perf_counter() - started
    if done.returncode not in (0, 1):
        sys.exit(f"gapcert failed: {done.stderr}")
    return took, peak_rss_gb(done.stderr)


def python_round(python: str, log: str, explain: bool):
    done = subprocess.run(
        ["/usr/bin/time", "-v", python, "-c", PYTHON_SIDE, log, "1" if explain else "0"],
        capture_output=True,
        text=True,
    )
    if done.returncode != 0:
        sys.exit(f"python side failed: {done.stderr}")
    took = float(re.search(r"took (\S+)", done.stdout).group(1))
    return took, peak_rss_gb(done.stderr)


def main() -> None:
    parser = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    parser.add_argument("log")
    parser.add_argument("--binary", default="target/release/gapcert")
    parser.add_argument("--rounds", type=int, default=5)
    parser.add_argument("--explain", action="store_true")
    parser.add_argument(
        "--python",
        default=sys.executable,
        help="the interpreter whose gapcert is timed (say, a venv with an earlier build)",
    )
    args = parser.parse_args()
    with tempfile.TemporaryDirectory() as folder:
        output = str(Path(folder) / "runs.ndjson")
        cli, python = [], []
        for round_ in range(args.rounds):
            cli.append(cli_round(args.binary, args.log, output))
            python.append(python_round(args.python, args.log, args.explain))
            print(
                f"round {round_ + 1}: command line {cli[-1][0]:.2f} s ({cli[-1][1]:.2f} GB), "
                f"python {python[-1][0]:.2f} s ({python[-1][1]:.2f} GB)",
                flush=True,
            )
    cli_time = statistics.median(t for t, _ in cli)
    python_time = statistics.median(t for t, _ in python)
    print(
        f"median: command line NDJSON {cli_time:.2f} s (peak {max(m for _, m in cli):.2f} GB); "
        f"gapcert.audit(frame) + .runs{' (explain=True)' if args.explain else ''} "
        f"{python_time:.2f} s (peak {max(m for _, m in python):.2f} GB); "
        f"ratio {python_time / cli_time:.2f} (target 1.3)"
    )


if __name__ == "__main__":
    main()
