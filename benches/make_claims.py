#!/usr/bin/env python3
"""Writes an invented claims file for the claims-scale benchmark (SPEC §8): N_SINGLE
claims on single runs and N_PATTERNS pattern claims over the runs of a log made by
the project's generator (examples/generate_logs.rs: run identifiers
`c<c>-sweep<s>-run<r>`). Half the patterns name one sweep (`c0-sweep12-run*`), half ten
(`c0-sweep12?-run*`), so that they match about 100,000 runs of a million in all; the
script prints how many runs they match.

Usage: python3 benches/make_claims.py LOG.csv OUT.csv [N_SINGLE=9000] [N_PATTERNS=1000]
"""
import collections
import csv
import random
import sys


def main(log, out, n_single=9000, n_patterns=1000):
    rng = random.Random(20261206)
    with open(log, newline="") as f:
        ids = [row[0] for row in csv.reader(f)][1:]
    per_sweep = collections.Counter(run.rsplit("-run", 1)[0] for run in ids)
    sweeps = sorted(per_sweep)
    # A sweep whose number followed by one more digit also names sweeps.
    tens = [s for s in sweeps if any(f"{s}{d}" in per_sweep for d in range(10))]
    rows, matched = [], 0
    for i, run in enumerate(rng.sample(ids, n_single)):
        kind, value = ("accuracy", 0.9) if i % 2 else ("error", 0.1)
        rows.append((f"single-{i}", kind, run, value))
    for i in range(n_patterns):
        prefix = rng.choice(sweeps if i % 2 else tens)
        if i % 2:
            pattern = f"{prefix}-run*"
            matched += per_sweep[prefix]
        else:
            pattern = f"{prefix}?-run*"
            matched += sum(per_sweep[f"{prefix}{d}"] for d in range(10))
        rows.append((f"pattern-{i}", "accuracy", pattern, 0.5))
    with open(out, "w", newline="") as f:
        writer = csv.writer(f)
        writer.writerow(["claim", "kind", "run", "value"])
        writer.writerows(rows)
    print(f"{len(rows)} claims ({n_single} on single runs, {n_patterns} patterns matching {matched} runs)")


if __name__ == "__main__":
    main(sys.argv[1], sys.argv[2], *(int(a) for a in sys.argv[3:]))
