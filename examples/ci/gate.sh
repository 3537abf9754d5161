#!/usr/bin/env sh
# Runs a gapcert audit as a CI gate and leaves its reports in one folder:
#   audit.xml        JUnit XML, one test case per claim, for the CI system's test report
#   summary.md       the Markdown summary, to post on the merge request
#   audit.html       the page with charts, and audit.cert.json, a verifiable certificate
# One audit writes all four, so the summary always says what the gate decided.
# Usage: gate.sh LOGS [more gapcert audit options, e.g. --claims release-claims.csv,
#        --gate refuted; --format and --output add one more report of your choice]
# Exit status is gapcert's: 0 the gate passes, 1 it fails, 2 bad input or usage
# (then nothing was written; the message is on stderr).
# GAPCERT (the binary, default: gapcert on PATH) and GAPCERT_OUT (default:
# gapcert-report) can be set in the environment.
set -u
GAPCERT=${GAPCERT:-gapcert}
OUT=${GAPCERT_OUT:-gapcert-report}
if [ $# -lt 1 ]; then
  echo "usage: $0 LOGS [gapcert audit options]" >&2
  exit 2
fi
LOGS=$1
shift
mkdir -p "$OUT" || exit 2
status=0
"$GAPCERT" audit "$LOGS" "$@" \
  --report "$OUT/audit.xml" --report "$OUT/summary.md" \
  --html "$OUT/audit.html" --certificate "$OUT/audit.cert.json" || status=$?
exit "$status"
