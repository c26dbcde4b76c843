#!/usr/bin/env bash
# `lodestone generate`: the walk, dense-spectrum and hypercube kinds give the
# same fingerprint on 1, 2, 3 and 4 ranks (every kind is also checked on
# sub-communicators in tests/unit/test_generators.cpp), and each kind's output, read with h5py, passes checks against closed forms and
# LAPACK through numpy (mm_generators_lapack.py names each reference).
source "$LODESTONE_SOURCE/tests/support/script_env.bash"

declare -A kinds=(
  [laplace2d]="laplace2d --nx 7 --ny 5"
  [walk]="walk --n 300 --degree 6 --damping 0.85 --seed 4"
  [walk_communities]="walk --n 600 --degree 6 --communities 3 --mixing 0.1 --seed 4"
  [dense_linear]="dense-spectrum --n 40 --spectrum linear --seed 2"
  [dense_geometric]="dense-spectrum --n 40 --spectrum geometric --ratio 0.8 --seed 3"
  [hypercube]="hypercube --dim 6"
)
for name in "${!kinds[@]}"; do
  prints=()
  counts="1 2 3 4"
  case "$name" in laplace2d | dense_linear) counts=3 ;; walk_communities) counts="1 3" ;; esac
  for p in $counts; do
    out="$work/$name.np$p.h5"
    # shellcheck disable=SC2086
    run "$p" "$LODESTONE" generate ${kinds[$name]} "$out" > /dev/null
    fp="$(run "$p" "$LODESTONE" inspect --check "$out" | awk '/^fingerprint/ {print $2}')"
    [ -n "$fp" ] || { echo "FAIL: no fingerprint for $name at $p ranks"; exit 1; }
    prints+=("$fp")
  done
  echo "$name: fingerprints at ranks $counts: ${prints[*]}"
  for fp in "${prints[@]}"; do
    [ "$fp" = "${prints[0]}" ] || { echo "FAIL: $name fingerprint differs across rank counts"; exit 1; }
  done
  cp "$work/$name.np3.h5" "$work/$name.h5"
done
"$PY" "$LODESTONE_SOURCE/tests/outside/mm_generators_lapack.py" "$work"
echo "mm_generators_lapack: ok"
