#!/usr/bin/env python3
"""Writes an invented hyperparameter sweep the way training scripts keep one: a folder
per run, one small `metrics.json` in each (all data invented, seeded).

usage: benches/make_sweep.py FOLDER RUNS [--nested]
  --nested: the metrics nested as scripts often write them,
            {"metrics": {"val": {"acc": ..., "n": ...}}, "config": {...}}
"""
import json
import os
import random
import sys


def main():
    folder, runs = sys.argv[1], int(sys.argv[2])
    nested = "--nested" in sys.argv[3:]
    rng = random.Random(20261202)
    for i in range(runs):
        group = f"group-{i // 1000:03d}"
        path = os.path.join(folder, group, f"run-{i:06d}")
        os.makedirs(path, exist_ok=True)
        n = rng.choice([2000, 5000, 10000])
        k = int(n * rng.uniform(0.02, 0.12))
        train_rate = round(rng.uniform(0.01, 0.1), 4)
        if nested:
            record = {
                "name": f"sweep/{group}/run-{i:06d}",
                "config": {"lr": rng.choice([1e-3, 3e-3, 1e-2]), "seed": i, "family": "linear", "dim": 32},
                "metrics": {
                    "train": {"err": train_rate, "n": 50000},
                    "val": {"acc": round(1 - k / n, 6), "n": n, "split": f"val-{i % 50:02d}"},
                },
                "claim": 0.9,
            }
        else:
            record = {
                "run": f"sweep/{group}/run-{i:06d}",
                "family": "linear",
                "dim": 32,
                "train_n": 50000,
                "train_error_rate": train_rate,
                "holdout_n": n,
                "holdout_misclassified": k,
                "holdout_set": f"val-{i % 50:02d}",
                "claimed_accuracy": 0.9,
                "logged_at": f"2025-03-{1 + i % 28:02d}T{i % 24:02d}:00:00Z",
            }
        with open(os.path.join(path, "metrics.json"), "w") as out:
            json.dump(record, out)


if __name__ == "__main__":
    main()
