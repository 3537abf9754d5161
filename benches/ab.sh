#!/usr/bin/env bash
# Compares gapcert builds on the million-run audit, runs alternating so that a
# shared machine's drift hits every build alike; each run writes a new output file.
# Usage: benches/ab.sh ROUNDS BINARY... (e.g. an older build copied aside and the
# current target/release/gapcert). Needs bench-data/runs-1000000.csv (benches/run.sh).
set -euo pipefail
cd "$(dirname "$0")/.."
ROUNDS=$1; shift
LOG=bench-data/runs-1000000.csv
[ -f "$LOG" ] || { echo "$LOG is missing: run benches/run.sh first" >&2; exit 2; }
times=$(mktemp -d)
for round in $(seq "$ROUNDS"); do
  n=0
  for binary in "$@"; do
    n=$((n + 1))
    out="bench-data/ab-$n.ndjson"
    rm -f "$out"
    /usr/bin/time -f "%e %U %S" -a -o "$times/$n" "$binary" audit "$LOG" --format ndjson --output "$out" --quiet 2>/dev/null || true
  done
done
n=0
for binary in "$@"; do
  n=$((n + 1))
  grep -v Command "$times/$n" | sort -g | awk -v name="$binary" '{w[NR]=$1; u+=$2; s+=$3}
    END {printf "%s: median wall %.2f s (min %.2f, max %.2f), mean CPU user %.2f + system %.2f s, %d runs\n",
         name, w[int((NR+1)/2)], w[1], w[NR], u/NR, s/NR, NR}'
  rm -f "bench-data/ab-$n.ndjson"
done
rm -r "$times"
