#!/usr/bin/env bash
# Where the million-run audit spends its CPU time: `perf record` over one
# `gapcert audit --format ndjson --output`, grouped by benches/profile_shares.py.
# Usage: benches/profile.sh [LOG]   (default: the 1,000,000-run CSV of benches/run.sh)
set -euo pipefail
cd "$(dirname "$0")/.."
export CARGO_TARGET_DIR="${CARGO_TARGET_DIR:-/root/.cache/gapcert-target}"
LOG=${1:-bench-data/runs-1000000.csv}
command -v perf >/dev/null || { echo "profile.sh needs perf (linux-perf)" >&2; exit 2; }
[ -f "$LOG" ] || { echo "$LOG is missing: run benches/run.sh first" >&2; exit 2; }
cargo build --release --quiet
perf record -q -F 2000 -o bench-data/perf.data \
  "$CARGO_TARGET_DIR/release/gapcert" audit "$LOG" --format ndjson --output bench-data/profile.ndjson --quiet || true
echo "== shares of CPU samples ($(perf report -i bench-data/perf.data --stdio 2>/dev/null | grep -m1 'of event' || true))"
perf report --no-children --sort dso,symbol --stdio -i bench-data/perf.data 2>/dev/null | python3 benches/profile_shares.py
echo "== phases (GAPCERT_TIMING=1; audit and writing overlap)"
GAPCERT_TIMING=1 "$CARGO_TARGET_DIR/release/gapcert" audit "$LOG" --format ndjson --output bench-data/profile.ndjson --quiet 2>&1 \
  | grep -E 'parse|validate|audit \+ write' || true
