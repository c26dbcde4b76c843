#!/usr/bin/env bash
# Runs README's "When a job was killed" walkthrough exactly as written: a solve
# with a one-second --time-budget (standing in for the kill), inspect of the
# checkpoint, the same solve again, verify. Then checks: the checkpoint was
# summarised, the second solve resumed from it, and verify passed. (Whether the
# first solve stopped or finished within its second depends on the machine; with
# a budget it writes a checkpoint at its first iteration boundary either way, so
# the resume is exercised regardless. checkpoint_resume.sh tests stops as such.)
set -euo pipefail
source "$LODESTONE_SOURCE/tests/cli/readme_walkthrough.bash"
walkthrough_run "When a job was killed"
grep -q "^checkpoint  deck.ckpt.h5" "$WT_LOG" || wt_fail "inspect did not summarise the checkpoint"
grep -q "^resuming from deck.ckpt.h5" "$WT_LOG" || wt_fail "the second solve did not resume"
grep -q "^verified: all 6 converged pairs meet the tolerance" "$WT_LOG" || wt_fail "verify did not pass"
if grep -q "solve stopped with status 3" "$WT_LOG"; then
  echo "the first solve stopped with status 3 and the second resumed"
else
  echo "note: the first solve finished within its budget; the second resumed from its first checkpoint"
fi
echo "readme_walkthrough_killed: the walkthrough ran"
