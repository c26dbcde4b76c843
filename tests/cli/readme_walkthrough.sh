#!/usr/bin/env bash
# Runs README's "A small case on a laptop" walkthrough exactly as written (with the
# built binary and this source tree's scripts), so the README cannot rot.
set -euo pipefail
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
cd "$tmp"
block=$(awk '/^\*\*A small case on a laptop\.\*\*/{f=1} f&&/^```sh/{g=1;next} g&&/^```/{exit} g{print}' \
  "$LODESTONE_SOURCE/README.md")
test -n "$block"
echo "$block"
script="${block//build\/src\/lodestone/\"\$LODESTONE\"}"
script="${script//scripts\//\"\$LODESTONE_SOURCE\"/scripts/}"
script="${script//mpirun -n/timeout 300 mpirun --allow-run-as-root --oversubscribe -n}"
bash -euo pipefail -c "$script"
test -s plate-history.png
test -s plate-modes.h5
