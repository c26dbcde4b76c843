#!/usr/bin/env bash
# The planner's memory model against the measured peak resident memory of a whole
# `lodestone solve`, per rank.
#
# For three matrices of different kinds and shapes (a 2-D Laplacian, CSR, symmetric:
# chebyshev; a random walk, CSR, not symmetric: block; a dense symmetric matrix:
# chebyshev) at 1, 2 and 4 ranks, it runs `lodestone plan` for that matrix, K and rank
# count and reads its per-rank peak (the "peak" line: matrix + library + the larger of
# solving and loading, before the safety margin), then runs the solve with every rank
# wrapped so that its peak resident set size (ru_maxrss of the child, i.e. VmHWM) is
# recorded, and compares the model with the rank that used the most. It prints a table
# and fails if any model/measured ratio is outside 0.75-1.25 (issue 5's +-25%).
# The solve is cut short by --max-matvecs (exit 4 is expected): every block is
# allocated in the first iteration, so the peak is reached long before that.
set -euo pipefail
: "${LODESTONE:?path to the lodestone binary}"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
run() { timeout 300 mpirun --allow-run-as-root --oversubscribe "$@"; }

# Each rank's peak resident memory (KiB) as measured by GNU time (Debian `time`),
# written to RSS.<rank>.
peak() { /usr/bin/time -f %M -o "$1.${OMPI_COMM_WORLD_RANK:-0}" "${@:2}"; }
export -f peak

run -n 2 "$LODESTONE" generate laplace2d --nx 1000 --ny 1000 "$tmp/plate.h5" >/dev/null
run -n 2 "$LODESTONE" generate walk --n 1000000 --degree 8 "$tmp/walk.h5" >/dev/null
run -n 2 "$LODESTONE" generate dense-spectrum --n 4000 "$tmp/dense.h5" >/dev/null

# name  file  K  matvec budget  extra plan options
cases=(
  "laplace2d-1000x1000 plate.h5 4 100 --ghost-rows 2000"
  "walk-1e6-deg8 walk.h5 2 40"
  "dense-4000 dense.h5 2 100"
)
to_mib() {  # "187.5 MiB" -> 187.5
  awk -v v="$1" -v u="$2" 'BEGIN { f = (u == "KiB") ? 1/1024 : (u == "MiB") ? 1 : (u == "GiB") ? 1024 : (u == "B") ? 1/1048576 : -1; printf "%.1f", v * f }'
}
printf '%-22s %5s %14s %16s %8s\n' matrix ranks "model (MiB)" "measured (MiB)" ratio
bad=0
for c in "${cases[@]}"; do
  read -r name file k budget extra <<<"$c"
  for p in 1 2 4; do
    # shellcheck disable=SC2086
    plan="$("$LODESTONE" plan "$tmp/$file" --pairs "$k" --scheduler local --cores-per-node "$p" --node-memory 20G $extra)"
    read -r value unit < <(awk '$1 == "peak" { print $2, $3; exit }' <<<"$plan")
    ranks="$(awk '$1 == "allocation" { print $8; exit }' <<<"$plan")"
    [ "$ranks" = "$p" ] || { echo "FAIL: plan chose $ranks ranks, expected $p"; echo "$plan"; exit 1; }
    model="$(to_mib "$value" "$unit")"
    rm -f "$tmp/rss."*
    status=0
    run -n "$p" bash -c 'peak "$@"' peak "$tmp/rss" "$LODESTONE" solve "$tmp/$file" --pairs "$k" \
      --max-matvecs "$budget" --quiet --out "$tmp/r.h5" > "$tmp/solve.txt" 2>&1 || status=$?
    if [ "$status" -ne 0 ] && [ "$status" -ne 4 ]; then cat "$tmp/solve.txt"; echo "FAIL: solve exited $status"; exit 1; fi
    [ "$(find "$tmp" -maxdepth 1 -name 'rss.[0-9]*' | wc -l)" -eq "$p" ] || {
      cat "$tmp/solve.txt"; ls -l "$tmp"; echo "FAIL: not every rank reported its peak"; exit 1; }
    measured="$(grep -h '^[0-9]*$' "$tmp"/rss.* | sort -n | tail -n 1 | awk '{ printf "%.1f", $1 / 1024 }')"
    verdict="$(awk -v m="$model" -v x="$measured" 'BEGIN { r = m / x; printf "%.2f %s", r, (r >= 0.75 && r <= 1.25) ? "ok" : "OUT" }')"
    printf '%-22s %5s %14s %16s %8s\n' "$name" "$p" "$model" "$measured" "$verdict"
    case "$verdict" in *OUT) bad=1 ;; esac
  done
done
if [ "$bad" -ne 0 ]; then echo "FAIL: the memory model is off by more than 25% for the rows marked OUT"; exit 1; fi
echo "ok: the planner's per-rank peak is within 25% of the measured peak resident memory"
