#!/usr/bin/env bash
# rankgate from any CI system or cron: a plain shell script.
#   ./gate.sh check     on every pull request (exit 0 pass, 1 fail, 2 cannot evaluate)
#   ./gate.sh adopt     after a merge to the main branch
#   ./gate.sh nightly   from a nightly schedule
# SCORES is the candidate's score table (id, label, score); produce it before calling this script.
set -euo pipefail

POLICY="${POLICY:-policies/leak-watch.toml}"
SCORES="${SCORES:-scores/candidate.parquet}"
BASELINE="${BASELINE:-baseline}"
HISTORY="${HISTORY:-history/runs.sqlite}"
OUT="${OUT:-gate-out}"
mkdir -p "$OUT"

case "${1:-check}" in
  check)
    rankgate check --policy "$POLICY" --candidate "$SCORES" --baseline "$BASELINE" \
      --summary "$OUT/summary.md" --json "$OUT/report.json" --junit "$OUT/junit.xml"
    ;;
  adopt)
    rankgate adopt --policy "$POLICY" --candidate "$SCORES" --baseline "$BASELINE" \
      --note "adopted $(date -u +%Y-%m-%dT%H:%M:%SZ)"
    ;;
  nightly)
    status=0
    rankgate check --policy "$POLICY" --candidate "$SCORES" --baseline "$BASELINE" \
      --history "$HISTORY" --summary "$OUT/nightly.md" --quiet || status=$?
    if [ "$status" -ge 2 ]; then exit "$status"; fi
    rankgate trend --history "$HISTORY" --policy "$POLICY" --last 60 \
      --summary "$OUT/trend.md" --json "$OUT/trend.json" || status=$?
    exit "$status"
    ;;
  *)
    echo "usage: $0 check|adopt|nightly" >&2
    exit 2
    ;;
esac
