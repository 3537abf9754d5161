#!/usr/bin/env bash
# Throughput benchmark (SPEC §8). Generates synthetic logs (invented data), then
# measures, in one run:
#   1. polars alone reading 1,000,000 runs from CSV vs `gapcert audit --format ndjson`
#      on the same file (median of REPEATS runs each; target ratio <= 5, floor ~4.4);
#   2. a sweep folder of FOLDER_RUNS run folders with one small metrics.json each vs a
#      plain Python walk + json.load of the same folder (median of REPEATS; target
#      ratio <= 1.5), and FOLDER_BIG_RUNS such files: wall time, peak memory, and the
#      most file descriptors open at once;
#   3. a 20-run log audited, process start to exit (median of 50; target < 20 ms);
#   4. peak resident memory auditing 10,000,000 runs from Parquet (target <= 4 GB);
#   5. the pandas + scipy reference script vs gapcert on the same file (target >= 10x).
#   0. first, the previous build (benches/PREVIOUS: the last landed commit) against
#      this one on the million-run audit, alternating (medians, CPU).
# Usage: [ROWS=1000000] [FOLDER_RUNS=20000] [FOLDER_BIG_RUNS=200000] [BIG_ROWS=10000000]
#        [PY_ROWS=10000] [REPEATS=5] [PREVIOUS_BIN=old-gapcert | PREVIOUS=none]
#        benches/run.sh
# ROWS=0, FOLDER_RUNS=0, FOLDER_BIG_RUNS=0, BIG_ROWS=0 or PY_ROWS=0 skips that part.
# PY_ROWS is smaller because the Python script needs about 30 ms per run (its exact
# holdout_needed search calls scipy once per candidate n).
set -euo pipefail
cd "$(dirname "$0")/.."
ROWS=${ROWS:-1000000}
FOLDER_RUNS=${FOLDER_RUNS:-20000}
FOLDER_BIG_RUNS=${FOLDER_BIG_RUNS:-200000}
BIG_ROWS=${BIG_ROWS:-10000000}
REPEATS=${REPEATS:-5}
PY_ROWS=${PY_ROWS:-10000}
# The previous build to compare with: PREVIOUS_BIN (a binary), or built from the
# commit in benches/PREVIOUS into PREVIOUS_TARGET; PREVIOUS=none skips it.
PREVIOUS=${PREVIOUS:-}
PREVIOUS_BIN=${PREVIOUS_BIN:-}
PREVIOUS_TARGET=${PREVIOUS_TARGET:-$HOME/.cache/gapcert-previous-target}
export CARGO_TARGET_DIR="${CARGO_TARGET_DIR:-/root/.cache/gapcert-target}"
BIN="$CARGO_TARGET_DIR/release"
DATA=bench-data
mkdir -p "$DATA"

cargo build --release --quiet
cargo build --release --quiet --example generate_logs --example polars_read
EX="$CARGO_TARGET_DIR/release/examples"

median() { sort -g | awk '{a[NR]=$1} END {print (NR%2 ? a[(NR+1)/2] : (a[NR/2]+a[NR/2+1])/2)}'; }
seconds() { local s e; s=$(date +%s.%N); "$@" >/dev/null 2>&1 || true; e=$(date +%s.%N); awk -v a="$s" -v b="$e" 'BEGIN {print b - a}'; }
div() { awk -v a="$1" -v b="$2" 'BEGIN {print a / b}'; }

if [ "$ROWS" -gt 0 ]; then
  [ -f "$DATA/runs-$ROWS.csv" ] || "$EX/generate_logs" --rows "$ROWS" --seed 7 --output "$DATA/runs-$ROWS.csv"
  if [ "$PREVIOUS" != none ]; then
    # The previous build, side by side with this one on the million-run audit: a
    # change that costs more than 5 % says so in the README (SPEC §8).
    if [ -z "$PREVIOUS_BIN" ]; then
      commit=$(cat benches/PREVIOUS)
      src="$DATA/previous-src"
      [ -d "$src" ] && git worktree remove --force "$src" 2>/dev/null
      rm -rf "$src"
      git worktree add --detach "$src" "$commit" >/dev/null
      # Its own target folder: the two builds never pick up each other's gapcert
      # (the first build compiles polars there too, about 20 minutes).
      ( cd "$src" && CARGO_TARGET_DIR="$PREVIOUS_TARGET" cargo build --release --quiet )
      PREVIOUS_BIN="$DATA/gapcert-previous"
      cp "$PREVIOUS_TARGET/release/gapcert" "$PREVIOUS_BIN"
      git worktree remove --force "$src"
    fi
    echo "== 0. the previous build ($(cat benches/PREVIOUS | cut -c1-10)) and this one, alternating"
    benches/ab.sh "$REPEATS" "$PREVIOUS_BIN" "$BIN/gapcert"
  fi
  echo "== 1. $ROWS runs from CSV ($(du -h "$DATA/runs-$ROWS.csv" | cut -f1))"
  # The audit writes a new output file, as in a fresh CI checkout: the previous one is
  # removed before each timed run (untimed). Replacing an existing 0.9 GB output costs
  # more, because the file system frees the old file's blocks at the rename; that case
  # is timed separately, right after each fresh run.
  read_times=(); audit_times=(); replace_times=()
  for i in $(seq "$REPEATS"); do
    read_times+=("$("$EX/polars_read" "$DATA/runs-$ROWS.csv" 2>/dev/null)")
    rm -f "$DATA/out.ndjson"
    audit_times+=("$(seconds "$BIN/gapcert" audit "$DATA/runs-$ROWS.csv" --format ndjson --output "$DATA/out.ndjson" --quiet)")
    replace_times+=("$(seconds "$BIN/gapcert" audit "$DATA/runs-$ROWS.csv" --format ndjson --output "$DATA/out.ndjson" --quiet)")
  done
  read_median=$(printf '%s\n' "${read_times[@]}" | median)
  audit_median=$(printf '%s\n' "${audit_times[@]}" | median)
  replace_median=$(printf '%s\n' "${replace_times[@]}" | median)
  printf 'polars read (median of %s): %.3f s\n' "$REPEATS" "$read_median"
  printf 'gapcert audit -> new ndjson file (median of %s): %.3f s\n' "$REPEATS" "$audit_median"
  printf 'ratio audit/read: %.2f (target <= 5; floor about 4.4, SPEC §8)\n' "$(div "$audit_median" "$read_median")"
  printf 'gapcert audit -> replacing the previous output (median of %s): %.3f s, ratio %.2f\n' \
    "$REPEATS" "$replace_median" "$(div "$replace_median" "$read_median")"
  rm -f "$DATA/out.ndjson"
  # A claims file does not change the memory profile (one engine: the claims are
  # decided from the runs they name, before the runs stream out). Target: peak
  # memory with claims within 1.25x of the audit without.
  printf 'claim,kind,run,value\nc1,accuracy,c0-sweep1-run0,0.9\nc2,error,c0-sweep1-run1,0.05\nc3,accuracy,c0-sweep2-run1*,0.9\n' > "$DATA/claims3.csv"
  for claims in "" "--claims $DATA/claims3.csv"; do
    # shellcheck disable=SC2086
    /usr/bin/time -v "$BIN/gapcert" audit "$DATA/runs-$ROWS.csv" $claims --format ndjson \
      --output "$DATA/out.ndjson" --quiet 2> "$DATA/time-claims.txt" || true
    rss_kb=$(grep 'Maximum resident set size' "$DATA/time-claims.txt" | awk '{print $NF}')
    wall=$(grep 'Elapsed (wall clock)' "$DATA/time-claims.txt" | awk '{print $NF}')
    printf 'ndjson %s: peak RSS %.0f MB, wall %s\n' "${claims:-without claims}" "$(div "$rss_kb" 1024)" "$wall"
  done
  # Claims scale (SPEC §8): 10,000 claims, 1,000 of them patterns matching about
  # 100,000 runs, in at most 2x the audit without claims (medians, alternating).
  python3 benches/make_claims.py "$DATA/runs-$ROWS.csv" "$DATA/claims10k.csv"
  plain_times=(); claims_times=()
  for i in $(seq "$REPEATS"); do
    plain_times+=("$(seconds "$BIN/gapcert" audit "$DATA/runs-$ROWS.csv" --format ndjson --output "$DATA/out.ndjson" --quiet)")
    claims_times+=("$(seconds "$BIN/gapcert" audit "$DATA/runs-$ROWS.csv" --claims "$DATA/claims10k.csv" --format ndjson --output "$DATA/out.ndjson" --quiet)")
  done
  plain_median=$(printf '%s\n' "${plain_times[@]}" | median)
  claims_median=$(printf '%s\n' "${claims_times[@]}" | median)
  printf 'without claims %.3f s, with 10,000 claims %.3f s (medians of %s): ratio %.2f (target <= 2)\n' \
    "$plain_median" "$claims_median" "$REPEATS" "$(div "$claims_median" "$plain_median")"
  rm -f "$DATA/out.ndjson"
fi

if [ "$FOLDER_RUNS" -gt 0 ]; then
  sweep="$DATA/sweep-$FOLDER_RUNS"
  [ -d "$sweep" ] || python3 benches/make_sweep.py "$sweep" "$FOLDER_RUNS"
  echo "== 2. a sweep of $FOLDER_RUNS run folders, one metrics.json each"
  # Both read warm files (a first, untimed pass of each fills the page cache).
  python3 benches/walk_and_load.py "$sweep" 2>/dev/null
  "$BIN/gapcert" audit "$sweep" --format json --output "$DATA/sweep.json" --gate never --quiet || true
  py_times=(); folder_times=()
  for i in $(seq "$REPEATS"); do
    py_times+=("$(seconds python3 benches/walk_and_load.py "$sweep")")
    folder_times+=("$(seconds "$BIN/gapcert" audit "$sweep" --format json --output "$DATA/sweep.json" --gate never --quiet)")
  done
  py_median=$(printf '%s\n' "${py_times[@]}" | median)
  folder_median=$(printf '%s\n' "${folder_times[@]}" | median)
  printf 'python walk + json.load (median of %s): %.3f s\n' "$REPEATS" "$py_median"
  printf 'gapcert audit of the folder -> JSON (median of %s): %.3f s\n' "$REPEATS" "$folder_median"
  printf 'ratio audit/walk-and-load: %.2f (target <= 1.5)\n' "$(div "$folder_median" "$py_median")"
  if [ "$FOLDER_BIG_RUNS" -gt 0 ]; then
    big_sweep="$DATA/sweep-$FOLDER_BIG_RUNS"
    [ -d "$big_sweep" ] || python3 benches/make_sweep.py "$big_sweep" "$FOLDER_BIG_RUNS"
    # Warm files, as above: a first read of 200,000 files from disk takes several times
    # longer (59 s against 12 s here) and measures the disk, not the audit.
    python3 benches/walk_and_load.py "$big_sweep" >/dev/null 2>&1
    # The soft descriptor limit of many systems: the audit must not need more.
    ( ulimit -n 1024
      /usr/bin/time -v "$BIN/gapcert" audit "$big_sweep" --format json --output "$DATA/big-sweep.json" \
        --gate never --quiet 2> "$DATA/time-sweep.txt" ) || true
    rss_kb=$(grep 'Maximum resident set size' "$DATA/time-sweep.txt" | awk '{print $NF}')
    wall=$(grep 'Elapsed (wall clock)' "$DATA/time-sweep.txt" | awk '{print $NF}')
    status=$(grep 'Exit status' "$DATA/time-sweep.txt" | awk '{print $NF}')
    printf '%s run folders (ulimit -n 1024): exit %s, wall %s, peak RSS %.0f MB, %s runs audited\n' \
      "$FOLDER_BIG_RUNS" "$status" "$wall" "$(div "$rss_kb" 1024)" \
      "$(python3 -c 'import json,sys; print(json.load(open(sys.argv[1]))["summary"]["runs"])' "$DATA/big-sweep.json")"
    rm -f "$DATA/big-sweep.json"
  fi
fi

echo "== 3. a 20-run log, process start to exit"
# Timed from Python (fork, exec, exit) so that no shell or date process is counted.
small_ms=$(python3 - "$BIN/gapcert" "$DATA/small.json" <<'PY'
import statistics, subprocess, sys, time
times = []
for _ in range(50):
    start = time.perf_counter()
    subprocess.run([sys.argv[1], "audit", "fixtures/demo/runs.csv", "--format", "json",
                    "--output", sys.argv[2], "--gate", "never"], check=True)
    times.append(time.perf_counter() - start)
print(f"{statistics.median(times) * 1000:.1f}")
PY
)
printf '20-run log (median of 50): %s ms (target < 20 ms)\n' "$small_ms"

if [ "$BIG_ROWS" -gt 0 ]; then
  echo "== 4. $BIG_ROWS runs from Parquet: peak resident memory"
  [ -f "$DATA/runs-$BIG_ROWS.parquet" ] || "$EX/generate_logs" --rows "$BIG_ROWS" --seed 11 --output "$DATA/runs-$BIG_ROWS.parquet"
  /usr/bin/time -v "$BIN/gapcert" audit "$DATA/runs-$BIG_ROWS.parquet" --format ndjson --output "$DATA/big.ndjson" --quiet 2> "$DATA/time.txt" || true
  rss_kb=$(grep 'Maximum resident set size' "$DATA/time.txt" | awk '{print $NF}')
  wall=$(grep 'Elapsed (wall clock)' "$DATA/time.txt" | awk '{print $NF}')
  printf 'peak RSS: %.2f GB (target <= 4), wall %s\n' "$(div "$rss_kb" 1048576)" "$wall"
  rm -f "$DATA/big.ndjson"  # 9 GB
fi

[ "$PY_ROWS" -gt 0 ] || exit 0
echo "== 5. pandas + scipy reference vs gapcert on $PY_ROWS runs"
python3 -c 'import pandas, scipy' 2>/dev/null || pip install --quiet pandas scipy pyarrow
[ -f "$DATA/runs-$PY_ROWS.csv" ] || "$EX/generate_logs" --rows "$PY_ROWS" --seed 7 --output "$DATA/runs-$PY_ROWS.csv"
py=$(seconds python3 benches/reference_audit.py "$DATA/runs-$PY_ROWS.csv" --out "$DATA/py.csv")
rs=$(seconds "$BIN/gapcert" audit "$DATA/runs-$PY_ROWS.csv" --format csv --output "$DATA/rs.csv" --quiet)
printf 'pandas + scipy: %.2f s, gapcert: %.2f s, speed-up %.1fx (target >= 10)\n' "$py" "$rs" "$(div "$py" "$rs")"
python3 benches/compare_outputs.py "$DATA/rs.csv" "$DATA/py.csv"
