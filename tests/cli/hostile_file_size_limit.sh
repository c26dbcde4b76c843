#!/usr/bin/env bash
# The file-size limit (ulimit -f) hit while writing, at 1 and 3 ranks: first the
# results file, then a checkpoint. Each run must exit 1 with one line saying the
# file is larger than the limit allows, every rank must shut down cleanly (no signal, no
# exit 139), no temporary file may be left, and the earlier result and checkpoint
# under the same names must be untouched. The limit is set inside each rank
# (bash -c "ulimit -f ...; exec lodestone"): set on mpirun itself it breaks PMIx.
set -euo pipefail
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
MPI=(mpirun --allow-run-as-root --oversubscribe)
# Open MPI's shared-memory transport backs itself with a file far larger than the
# limit (its ranks would die of SIGXFSZ while starting); TCP on loopback has none.
export OMPI_MCA_btl=self,tcp
fail() { echo "FAIL: $*" >&2; exit 1; }

# 20000 rows: one eigenvector alone is 160 kB, well past a 64 kB limit, while the
# matrix file is only read.
"$LODESTONE" generate walk --n 20000 "$tmp/walk.h5" >/dev/null
"$LODESTONE" generate laplace1d --n 10 "$tmp/rod.h5" >/dev/null
# A slow solve (20 clustered pairs to 1e-14) that a one-second budget always stops.
"$LODESTONE" generate laplace2d --nx 150 --ny 150 "$tmp/plate.h5" >/dev/null
slow=(--pairs 20 --tol 1e-14 --method block --time-budget 1s)
"$LODESTONE" solve "$tmp/rod.h5" --pairs 1 --quiet --out "$tmp/r.h5"
# An earlier checkpoint under the checkpoint name: a run stopped by its time budget writes one (exit 3).
rc=0
"$LODESTONE" solve "$tmp/plate.h5" "${slow[@]}" --quiet --checkpoint "$tmp/ck.h5" --out "$tmp/x.h5" \
  >/dev/null 2>&1 || rc=$?
[[ "$rc" == 3 ]] && "$LODESTONE" inspect "$tmp/ck.h5" >/dev/null || fail "no earlier checkpoint to protect (exit $rc)"
rm -f "$tmp/ck.h5.previous"
before=$(cd "$tmp" && sha256sum r.h5 ck.h5 walk.h5 plate.h5)

limited() {  # WHAT PATTERN ARGS...: lodestone solve under ulimit -f 64, at 1 and 3 ranks
  local what="$1" pattern="$2"; shift 2
  for np in 1 3; do
    local rc=0
    timeout 120 "${MPI[@]}" -n "$np" bash -c 'ulimit -f 64; exec "$@"' limited "$LODESTONE" solve --quiet "$@" \
      >"$tmp/o" 2>"$tmp/e" || rc=$?
    [[ "$rc" == 1 ]] || { cat "$tmp/o" "$tmp/e"; fail "$what at $np ranks: exit $rc, want 1 (139: a rank crashed; 124: hung)"; }
    [[ $(grep -c "^lodestone: error: " "$tmp/e") == 1 ]] || { cat "$tmp/e"; fail "$what at $np ranks: not one error line"; }
    grep -q -- "$pattern" "$tmp/e" || { cat "$tmp/e"; fail "$what at $np ranks: message lacks '$pattern'"; }
    ! grep -Eiq "signal|segmentation|core dumped|exited on|PETSC ERROR|HDF5-DIAG|MPI_ABORT" "$tmp/e" "$tmp/o" ||
      { cat "$tmp/e"; fail "$what at $np ranks: a rank did not shut down cleanly"; }
    ! ls -A "$tmp" | grep -q "partial-" || { ls -A "$tmp"; fail "$what at $np ranks: a temporary file was left"; }
    [[ ! -e "$tmp/new.h5" ]] || fail "$what at $np ranks: a result appeared"
    [[ "$(cd "$tmp" && sha256sum r.h5 ck.h5 walk.h5 plate.h5)" == "$before" ]] || fail "$what at $np ranks: an earlier file changed"
    echo "ok: $what at $np ranks: $(grep "^lodestone: error: " "$tmp/e")"
  done
}

limited "results write" "r.h5: the results file needs about .* file-size limit" "$tmp/walk.h5" --pairs 1 --out "$tmp/r.h5"
# The checkpoint is written when the run stops; the budget of one second stops it.
limited "checkpoint write" "ck.h5: the checkpoint needs about .* file-size limit" "$tmp/plate.h5" "${slow[@]}" \
  --checkpoint "$tmp/ck.h5" --out "$tmp/new.h5"
echo "file-size limit: all checks passed"
