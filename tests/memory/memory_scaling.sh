#!/usr/bin/env bash
# Per-rank memory of loading a matrix falls as 1/p.
#
# Loads a 5-point Laplacian on a 1000 x 1000 grid (10^6 rows, ~5 x 10^6
# nonzeros, ~60 MB as a PETSc matrix) at 1, 2 and 4 ranks and compares the
# largest per-rank growth of peak resident memory (VmHWM) caused by the load.
# A fixed per-process base is kept out of the growth by loading a tiny matrix
# first. With perfect 1/p scaling the growth at 4 ranks is 0.25x that at 1 rank;
# we accept up to 0.45x (and 0.75x at 2 ranks) to leave room for per-process
# buffers that do not shrink with p: the reader's chunk buffers are capped at
# LoadOptions::chunk_entries entries, a cap that binds at 1 rank only, and MPI-IO
# keeps collective-buffering space on its aggregator ranks.
set -euo pipefail
: "${LODESTONE:?path to the lodestone binary}"
: "${LODESTONE_MEMORY_PROBE:?path to memory_probe}"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
run() { timeout 300 mpirun --allow-run-as-root --oversubscribe "$@"; }

run -n 2 "$LODESTONE" generate laplace2d --nx 1000 --ny 1000 "$tmp/big.h5" >/dev/null
run -n 1 "$LODESTONE" generate laplace1d --n 8 "$tmp/tiny.h5" >/dev/null

declare -A growth
for p in 1 2 4; do
  out="$(run -n "$p" "$LODESTONE_MEMORY_PROBE" "$tmp/tiny.h5" "$tmp/big.h5")"
  echo "$out" | grep -v '^max_growth_kib'
  growth[$p]="$(echo "$out" | awk '/^max_growth_kib/ {print $2}')"
  [ -n "${growth[$p]}" ] && [ "${growth[$p]}" -gt 0 ] || { echo "FAIL: no growth figure at $p ranks"; exit 1; }
done
echo "largest per-rank growth: 1 rank ${growth[1]} KiB, 2 ranks ${growth[2]} KiB, 4 ranks ${growth[4]} KiB"
awk -v g1="${growth[1]}" -v g2="${growth[2]}" -v g4="${growth[4]}" 'BEGIN {
  printf "ratios: 2 ranks %.2f x, 4 ranks %.2f x the 1-rank growth (1/p would be 0.50, 0.25)\n", g2 / g1, g4 / g1
  bad = 0
  if (g2 > 0.75 * g1) { print "FAIL: growth at 2 ranks exceeds 0.75x the 1-rank growth"; bad = 1 }
  if (g4 > 0.45 * g1) { print "FAIL: growth at 4 ranks exceeds 0.45x the 1-rank growth"; bad = 1 }
  exit bad
}'
echo "ok: per-rank memory of the load falls roughly as 1/p"
