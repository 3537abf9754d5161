#!/usr/bin/env sh
# Runs a gapcert audit as a CI gate and leaves its reports in one folder:
#   audit.xml        JUnit XML, one test case per claim, for the CI system's test report
#   summary.md       the Markdown summary, to post on the merge request
#   audit.html       the page with charts, and audit.cert.json, a verifiable certificate
# Usage: gate.sh LOGS [more gapcert audit options, e.g. --claims release-claims.csv]
# Exit status is gapcert's: 0 the gate passes, 1 it fails, 2 bad input or usage.
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
mkdir -p "$OUT"
status=0
"$GAPCERT" audit "$LOGS" "$@" --output "$OUT/audit.xml" --format junit \
  --html "$OUT/audit.html" --certificate "$OUT/audit.cert.json" || status=$?
# Bad input or usage: nothing was written; the message is on stderr already.
[ "$status" -ge 2 ] && exit "$status"
# The summary is written whatever the gate says (the gate's answer is in $status).
"$GAPCERT" audit "$LOGS" "$@" --output "$OUT/summary.md" --format markdown --gate never || exit $?
exit "$status"
