#!/usr/bin/env bash
# Who calls memcpy/memmove, how often and for how many bytes, in the million-run
# audit: `perf` shows glibc's memmove as the largest single symbol but cannot unwind
# out of it here, so an LD_PRELOAD shim counts the calls per return address instead.
# Usage: benches/copy_census.sh [LOG]   (default: the 1,000,000-run CSV of benches/run.sh)
set -euo pipefail
cd "$(dirname "$0")/.."
export CARGO_TARGET_DIR="${CARGO_TARGET_DIR:-/root/.cache/gapcert-target}"
LOG=${1:-bench-data/runs-1000000.csv}
[ -f "$LOG" ] || { echo "$LOG is missing: run benches/run.sh first" >&2; exit 2; }
cargo build --release --quiet
BIN="$CARGO_TARGET_DIR/release/gapcert"
gcc -O2 -shared -fPIC -fno-builtin -o bench-data/copy_census.so benches/copy_census/copy_census.c
COPY_CENSUS_OUT=bench-data/copy_census.txt LD_PRELOAD="$PWD/bench-data/copy_census.so" \
  "$BIN" audit "$LOG" --format ndjson --output bench-data/copy_census.ndjson --quiet || true
rm -f bench-data/copy_census.ndjson
python3 benches/copy_census/report.py "$BIN" bench-data/copy_census.txt 25
