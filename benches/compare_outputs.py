#!/usr/bin/env python3
"""Checks that two flat audit outputs (CSV) agree: gapcert's and the pandas + scipy
reference script's (benches/reference_audit.py), run by benches/run.sh on the same
generated log. Numbers must agree to a relative 1e-9 (absolute 1e-12 near zero);
verdicts, sample sizes and finding codes exactly.

Usage: python3 benches/compare_outputs.py GAPCERT.csv REFERENCE.csv
"""
import math
import sys

import pandas as pd

NUMBERS = [
    "delta", "hoeffding_interval_lo", "hoeffding_interval_hi", "binomial_interval_lo",
    "binomial_interval_hi", "error_upper_bound", "error_lower_bound", "growth_ln",
    "vc_allowance", "vc_bound", "observed_gap", "certified_gap_max", "claim_error_rate",
]
EXACT = ["candidates", "holdout_misclassified", "vc_dim", "verdict", "holdout_needed", "train_needed"]


def main(ours_path, theirs_path):
    ours = pd.read_csv(ours_path, keep_default_na=True).set_index("source")
    theirs = pd.read_csv(theirs_path, keep_default_na=True).set_index("source")
    if "selection_k" in theirs:
        # The reference script keeps the logged candidates and writes K apart;
        # gapcert's `candidates` is K (README, decisions).
        theirs["candidates"] = theirs["selection_k"]
    if len(ours) != len(theirs) or not ours.index.equals(theirs.index):
        print(f"different runs: {len(ours)} vs {len(theirs)}")
        return 1
    worst, problems = 0.0, 0
    for column in NUMBERS:
        for source, a, b in zip(ours.index, ours[column], theirs[column]):
            if pd.isna(a) and pd.isna(b):
                continue
            if pd.isna(a) or pd.isna(b):
                problems += 1
                print(f"{source} {column}: {a} vs {b}")
                continue
            scale = max(abs(a), abs(b))
            difference = abs(a - b) / scale if scale > 1e-3 else abs(a - b)
            worst = max(worst, difference)
            if difference > 1e-9 and abs(a - b) > 1e-12:
                problems += 1
                if problems <= 10:
                    print(f"{source} {column}: {a!r} vs {b!r}")
    for column in EXACT:
        for source, a, b in zip(ours.index, ours[column], theirs[column]):
            if pd.isna(a) and pd.isna(b):
                continue
            a, b = str(a), str(b)
            if a != b and not (_number(a) is not None and _number(a) == _number(b)):
                problems += 1
                if problems <= 10:
                    print(f"{source} {column}: {a} vs {b}")
    codes = lambda text: sorted(str(text).split(";")) if isinstance(text, str) else []
    for source, a, b in zip(ours.index, ours["findings"], theirs["findings"]):
        if codes(a) != codes(b):
            problems += 1
            if problems <= 10:
                print(f"{source} findings: {a} vs {b}")
    print(f"{len(ours)} runs compared: max relative difference {worst:.2e}, {problems} disagreement(s)")
    return 1 if problems else 0


def _number(text):
    try:
        value = float(text)
    except ValueError:
        return None
    return None if math.isnan(value) else value


if __name__ == "__main__":
    sys.exit(main(*sys.argv[1:3]))
