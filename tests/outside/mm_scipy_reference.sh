#!/usr/bin/env bash
# Matrix Market -> HDF5 round trip: every test file imported at 2 ranks holds
# exactly the entries scipy.io.mmread (Debian python3-scipy, the reference)
# reads from it; a coordinate and an array file imported and checked (`inspect --check`) at 1, 2,
# 3 and 4 ranks give the same fingerprint at every rank count.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
here="$LODESTONE_SOURCE/tests/outside"

"$PY" "$here/mm_scipy_reference.py" write "$work"
for f in "$work"/*.mtx; do
  run 2 "$LODESTONE" import "$f" "${f%.mtx}.h5" > /dev/null
done
"$PY" "$here/mm_scipy_reference.py" compare "$work"

for name in spec_example array_symmetric; do
  prints=()
  for p in 1 2 3 4; do
    out="$work/$name.np$p.h5"
    run "$p" "$LODESTONE" import "$work/$name.mtx" "$out" > /dev/null
    fp="$(run "$p" "$LODESTONE" inspect --check "$out" | awk '/^fingerprint/ {print $2}')"
    [ -n "$fp" ] || { echo "FAIL: no fingerprint for $name at $p ranks"; exit 1; }
    prints+=("$fp")
  done
  echo "$name: fingerprints at 1..4 ranks: ${prints[*]}"
  for fp in "${prints[@]}"; do
    [ "$fp" = "${prints[0]}" ] || { echo "FAIL: $name fingerprint differs across rank counts"; exit 1; }
  done
done
echo "mm_scipy_reference: ok"
