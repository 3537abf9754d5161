#!/usr/bin/env bash
# Runs every fuzz target for SECONDS each, two at a time, seeded from fixtures/.
# Usage: fuzz/run-all.sh [SECONDS=150]
set -uo pipefail
cd "$(dirname "$0")"
SECONDS_EACH=${1:-150}
export RUSTC_BOOTSTRAP=1 CARGO_TARGET_DIR=${CARGO_TARGET_DIR:-/root/.cache/gapcert-fuzz-target}
mkdir -p logs artifacts
run() {
  local target=$1
  mkdir -p "corpus/$target" "artifacts/$target"
  cargo fuzz run "$target" -O --sanitizer none "corpus/$target" -- \
    -max_total_time="$SECONDS_EACH" -max_len=65536 -rss_limit_mb=4096 -timeout=20 \
    -artifact_prefix="artifacts/$target/" -print_final_stats=1 > "logs/$target.log" 2>&1
  echo "$target: exit $? — $(grep -E '^stat::number_of_executed_units' "logs/$target.log" | awk '{print $2}') executions, $(ls "artifacts/$target" | wc -l) artifact(s)"
}
targets=(ingest_csv ingest_jsonl ingest_json ingest_parquet ingest_arrow column_map claims certificate)
for ((i = 0; i < ${#targets[@]}; i += 2)); do
  run "${targets[i]}" &
  [ -n "${targets[i+1]:-}" ] && run "${targets[i+1]}" &
  wait
done
