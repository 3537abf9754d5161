#!/usr/bin/env bash
# Compares the outputs of two gapcert binaries, byte for byte, on every fixture, in
# every format and under each setting that changes a number; the calculators, the
# growth table and the families list too. Exit codes and standard error are compared
# as well. Volatile text is masked: the `generated_at` time and the certificate's
# working folder.
#
# usage: benches/compare_builds.sh OLD_BINARY NEW_BINARY [--ignore-demo-exit]
#   --ignore-demo-exit: `gapcert demo` may exit 0 in NEW where OLD exited 1 (the demo
#   exits 0 unless --gate is given, since the restructuring).
set -uo pipefail
cd "$(dirname "$0")/.."
old=$1
new=$2
ignore_demo_exit=${3:-}
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
compared=0
differences=0

mask() {
  sed -E -e 's/"generated_at": "[^"]*"/"generated_at": "T"/' \
    -e 's/"working_dir": "[^"]*"/"working_dir": "W"/' \
    -e 's/Generated [0-9T:Z-]+/Generated T/' \
    -e 's/(generated|written) (at |on )?[0-9]{4}-[0-9]{2}-[0-9]{2}T[0-9:]+Z/\1 T/g' "$1"
}

run_both() {
  # run_both NAME ARGS...: runs both binaries with ARGS (the token OUT is replaced by an
  # output file of each run's own) and compares stdout, stderr, exit code and OUT.
  local name=$1
  shift
  local side binary
  for side in old new; do
    binary=$old
    [ "$side" = new ] && binary=$new
    mkdir -p "$work/$side"
    local args=()
    for a in "$@"; do
      args+=("${a//OUT/$work/$side/out}")
    done
    "$binary" "${args[@]}" >"$work/$side/stdout" 2>"$work/$side/stderr"
    echo $? >"$work/$side/code"
    [ -f "$work/$side/out" ] || : >"$work/$side/out"
    [ -f "$work/$side/out.html" ] || : >"$work/$side/out.html"
    [ -f "$work/$side/out.cert" ] || : >"$work/$side/out.cert"
  done
  compared=$((compared + 1))
  local part
  for part in stdout stderr code out out.html out.cert; do
    if [ "$part" = code ] && [ -n "$ignore_demo_exit" ] && [ "$1" = demo ]; then
      continue
    fi
    if [ "$part" = stderr ]; then
      # error messages name the temporary output folder of each side
      sed -i -e "s#$work/old/#W/#g" -e "s#$work/new/#W/#g" "$work/old/stderr" "$work/new/stderr"
    fi
    if ! cmp -s <(mask "$work/old/$part") <(mask "$work/new/$part"); then
      differences=$((differences + 1))
      echo "DIFFERENT $part: $name"
      diff <(mask "$work/old/$part") <(mask "$work/new/$part") | head -5
    fi
  done
  rm -rf "$work/old" "$work/new"
}

logs=(fixtures/demo/runs.csv fixtures/worked/runs.csv fixtures/formats/runs.tsv
  fixtures/formats/runs.parquet fixtures/formats/runs.jsonl fixtures/formats/runs.json
  fixtures/formats/runs.arrow fixtures/edge/bom_crlf.csv fixtures/edge/mixed_case.csv)
settings=("" "--holdout-bound hoeffding" "--familywise" "--same-holdout"
  "--confidence 0.99 --tolerance 0.02 --max-width 0.05" "--claim-accuracy 0.9 --gate refuted")
for log in "${logs[@]}"; do
  for setting in "${settings[@]}"; do
    # shellcheck disable=SC2086
    for format in table json ndjson csv markdown; do
      run_both "audit $log $setting --format $format" audit "$log" $setting --format "$format"
    done
    # shellcheck disable=SC2086
    run_both "audit $log $setting parquet+html+certificate" audit "$log" $setting \
      --format parquet --output OUT --html OUT.html --certificate OUT.cert
  done
done
run_both "edge percent" audit fixtures/edge/percent.csv --percent --format json
run_both "edge renamed" audit fixtures/edge/renamed.csv --map-file fixtures/edge/map.json --format json
run_both "edge mixed folder" audit fixtures/edge/mixed --format json
run_both "edge folder" audit fixtures/edge --format csv
for bad in fixtures/bad/*; do
  [ "${bad##*.}" = md ] && continue
  run_both "bad $bad" audit "$bad" --format json
  run_both "bad $bad lenient" audit "$bad" --lenient --format json
done
for format in table json ndjson csv markdown; do
  run_both "demo $format" demo --format "$format"
done
run_both "demo html" demo --html OUT.html --quiet
for format in table json; do
  run_both "plan holdout $format" plan holdout --error-rate 0.02 --claim-accuracy 0.97 --candidates 10 --format "$format"
  run_both "plan holdout never $format" plan holdout --error-rate 0.05 --claim-accuracy 0.95 --format "$format"
  run_both "plan train $format" plan train --family linear --dim 20 --tolerance 0.05 --format "$format"
  run_both "plan train nets $format" plan train --family relu_net --weights 3300 --layers 3 --units 80 --format "$format"
  run_both "growth $format" growth --family linear --dim 2 --upto 6 --format "$format"
  run_both "growth big $format" growth --family vc --vc-dim 3 --upto 70 --format "$format"
  run_both "families $format" families --format "$format"
done
run_both "growth svg" growth --family box --dim 2 --upto 12 --svg OUT --quiet
run_both "plan bad confidence" plan holdout --error-rate 0.02 --claim-accuracy 0.97 --confidence 1.5
run_both "plan unknown family" plan train --family gbm
run_both "plan missing dim" plan train --family linear
echo "$compared commands compared, $differences difference(s)"
[ "$differences" -eq 0 ]
