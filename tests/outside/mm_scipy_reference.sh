#!/usr/bin/env bash
# Matrix Market -> HDF5 round trip: every test file imported at 2 ranks holds
# exactly the entries scipy.io.mmread (Debian python3-scipy, the reference)
# reads from it; a coordinate and an array file imported and checked (`inspect --check`) at 1, 2,
# 3 and 4 ranks give the same fingerprint at every rank count.
set -euo pipefail
: "${LODESTONE:?}" "${LODESTONE_SOURCE:?}"
py=/usr/bin/python3  # Debian's interpreter, which has numpy, scipy and h5py
here="$LODESTONE_SOURCE/tests/outside"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
run() { local p="$1"; shift; timeout 120 mpirun --allow-run-as-root --oversubscribe -n "$p" "$LODESTONE" "$@"; }

"$py" "$here/mm_scipy_reference.py" write "$tmp"
for f in "$tmp"/*.mtx; do
  run 2 import "$f" "${f%.mtx}.h5" > /dev/null
done
"$py" "$here/mm_scipy_reference.py" compare "$tmp"

for name in spec_example array_symmetric; do
  prints=()
  for p in 1 2 3 4; do
    out="$tmp/$name.np$p.h5"
    run "$p" import "$tmp/$name.mtx" "$out" > /dev/null
    fp="$(run "$p" inspect --check "$out" | awk '/^fingerprint/ {print $2}')"
    [ -n "$fp" ] || { echo "FAIL: no fingerprint for $name at $p ranks"; exit 1; }
    prints+=("$fp")
  done
  echo "$name: fingerprints at 1..4 ranks: ${prints[*]}"
  for fp in "${prints[@]}"; do
    [ "$fp" = "${prints[0]}" ] || { echo "FAIL: $name fingerprint differs across rank counts"; exit 1; }
  done
done
echo "mm_scipy_reference: ok"
