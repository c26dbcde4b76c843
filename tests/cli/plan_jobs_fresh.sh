#!/usr/bin/env bash
# jobs/generated/ is exactly what scripts/regenerate-jobs makes from jobs/specs/ with
# this build: the example job scripts never drift from the code. Each example also
# passes bash -n and shellcheck.
set -euo pipefail
: "${LODESTONE:?}" "${LODESTONE_SOURCE:?}"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
"$LODESTONE_SOURCE/scripts/regenerate-jobs" --lodestone "$LODESTONE" --into "$tmp/generated" >/dev/null
if ! diff -r "$LODESTONE_SOURCE/jobs/generated" "$tmp/generated"; then
  echo "FAIL: jobs/generated is stale; run scripts/regenerate-jobs and commit the result" >&2
  exit 1
fi
n=0
for f in "$tmp"/generated/*.slurm "$tmp"/generated/*.pbs "$tmp"/generated/*.sh; do
  bash -n "$f"
  shellcheck -s bash "$f"
  n=$((n + 1))
done
[ "$n" -ge 3 ] || { echo "FAIL: expected at least 3 example scripts, found $n" >&2; exit 1; }
echo "plan_jobs_fresh: ok ($n scripts)"
