#!/usr/bin/env bash
# jobs/generated/ is exactly what scripts/regenerate-jobs makes from jobs/specs/ with
# this build: the example job scripts never drift from the code. Each example also
# passes bash -n and shellcheck, asks for the lowest modes (the footbridge's vibration
# modes: --select smallest, not the default largest |λ|), and jobs/README.md carries
# the caution on results that drive structural decisions.
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
  grep -qx 'solve_args+=(--select=smallest)' "$f" || { echo "FAIL: $(basename "$f") does not ask for the lowest modes" >&2; exit 1; }
  n=$((n + 1))
done
[ "$n" -ge 3 ] || { echo "FAIL: expected at least 3 example scripts, found $n" >&2; exit 1; }
grep -q "sizing" "$LODESTONE_SOURCE/jobs/README.md" && grep -q "licensed engineering practice" "$LODESTONE_SOURCE/jobs/README.md" \
  || { echo "FAIL: jobs/README.md lacks the caution on results that drive structural decisions" >&2; exit 1; }
echo "plan_jobs_fresh: ok ($n scripts)"
