#!/usr/bin/env bash
# Runs README's "A small case on a laptop" walkthrough exactly as written (the
# built binary as build/src/lodestone, this tree's scripts/), so it cannot rot.
set -euo pipefail
source "$LODESTONE_SOURCE/tests/cli/readme_walkthrough.bash"
walkthrough_run "A small case on a laptop"
cd "$WT_WORK"
test -s plate-history.png || wt_fail "no plate-history.png"
test -s plate-modes.h5 || wt_fail "no plate-modes.h5"
grep -q "8 pair(s)" "$WT_LOG" || wt_fail "inspect did not list the 8 pairs"
echo "readme_walkthrough: the laptop walkthrough ran"
