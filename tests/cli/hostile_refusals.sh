#!/usr/bin/env bash
# The defects of issue 7's list not covered by the validation catalogue, the
# import_defect_* scripts or solve_refusals.sh, at 1 and 3 ranks: --select
# smallest on non-symmetric input, malformed durations (solve) and sizes and
# walltimes (plan), an output directory nobody can create files in, and a refused
# run next to an earlier checkpoint. Each exits with its documented status, prints
# one "lodestone: error:" line once (no stack dump), leaves no partial file, and
# leaves the earlier result, checkpoint and input byte for byte as they were.
set -euo pipefail
tmp=$(mktemp -d)
trap 'chmod -R u+w "$tmp" 2>/dev/null || true; rm -rf "$tmp"' EXIT
MPI=(mpirun --allow-run-as-root --oversubscribe)
fail() { echo "FAIL: $*" >&2; exit 1; }

"$LODESTONE" generate laplace1d --n 10 "$tmp/rod.h5" >/dev/null
"$LODESTONE" generate walk --n 40 "$tmp/walk.h5" >/dev/null
"$LODESTONE" solve "$tmp/rod.h5" --pairs 1 --quiet --out "$tmp/earlier.h5"
# An earlier checkpoint: a run stopped by its time budget writes one (exit 3).
# A slow solve (20 clustered pairs to 1e-14) that a one-second budget always stops.
"$LODESTONE" generate laplace2d --nx 150 --ny 150 "$tmp/big.h5" >/dev/null
rc=0
"$LODESTONE" solve "$tmp/big.h5" --pairs 20 --tol 1e-14 --method block --quiet --time-budget 1s --checkpoint "$tmp/ck.h5" --out "$tmp/unused.h5" \
  >/dev/null 2>&1 || rc=$?
[[ "$rc" == 3 ]] && "$LODESTONE" inspect "$tmp/ck.h5" >/dev/null || fail "no earlier checkpoint to protect (exit $rc)"
rm -f "$tmp/big.h5"
sums() { (cd "$tmp" && sha256sum rod.h5 walk.h5 earlier.h5 ck.h5); }
before=$(sums)

# check STATUS PATTERN -- COMMAND...: runs COMMAND at 1 and 3 ranks.
check() {
  local want="$1" pattern="$2"; shift 3
  for np in 1 3; do
    local rc=0
    timeout 120 "${MPI[@]}" -n "$np" "$LODESTONE" "$@" >"$tmp/o" 2>"$tmp/e" || rc=$?
    [[ "$rc" == "$want" ]] || { cat "$tmp/o" "$tmp/e"; fail "[$*] at $np ranks: exit $rc, want $want (124: hung)"; }
    [[ $(grep -c "^lodestone: error: " "$tmp/e") == 1 ]] || { cat "$tmp/e"; fail "[$*] at $np ranks: not one error line"; }
    grep -q -- "$pattern" "$tmp/e" || { cat "$tmp/e"; fail "[$*] at $np ranks: message lacks '$pattern'"; }
    ! grep -Eq "PETSC ERROR|HDF5-DIAG|Segmentation|Signal:|terminate called|MPI_ABORT" "$tmp/e" "$tmp/o" ||
      { cat "$tmp/e"; fail "[$*] at $np ranks: a stack dump or abort"; }
    ! ls -A "$tmp" | grep -q "partial-" || { ls -A "$tmp"; fail "[$*] at $np ranks: a temporary file was left"; }
    [[ "$(sums)" == "$before" ]] || fail "[$*] at $np ranks: an earlier file or an input changed"
  done
  echo "ok: exit $want, one line: $(grep "^lodestone: error: " "$tmp/e" | cut -c1-150)"
}

solve_ck=(solve "$tmp/rod.h5" --pairs 2 --checkpoint "$tmp/ck.h5" --out "$tmp/earlier.h5")
# --select smallest is for symmetric matrices only; the walk matrix is not symmetric.
check 2 "--select smallest needs a symmetric matrix" -- solve "$tmp/walk.h5" --pairs 2 --select smallest --out "$tmp/earlier.h5"
# Malformed durations.
for bad in "1h-5m" "99:99"; do  # more forms: tests/unit/test_stop_duration.cpp
  check 2 "--checkpoint-every '$bad': " -- "${solve_ck[@]}" --checkpoint-every "$bad"
done
for bad in "0"; do
  check 2 "--time-budget '$bad'" -- "${solve_ck[@]}" --time-budget "$bad"
done
# A refused run (K > n) beside an earlier checkpoint of the same name: untouched.
check 2 "exceeds the matrix order" -- solve "$tmp/rod.h5" --pairs 11 --checkpoint "$tmp/ck.h5" --resume --out "$tmp/earlier.h5"
# A checkpoint that would overwrite the input, or land in a missing directory.
check 1 "would overwrite an input" -- solve "$tmp/rod.h5" --pairs 2 --checkpoint "$tmp/rod.h5" --out "$tmp/new.h5"
check 1 "does not exist" -- solve "$tmp/rod.h5" --pairs 2 --checkpoint "$tmp/missing/ck.h5" --out "$tmp/new.h5"
[[ ! -e "$tmp/new.h5" ]] || fail "a refused run wrote its result"

# An output directory no file can be created in: read-only for a normal user;
# root writes anywhere, so /proc (where creating a file fails even for root) stands in.
if [[ $(id -u) == 0 ]]; then ro=/proc; else ro="$tmp/readonly"; mkdir "$ro"; chmod 555 "$ro"; fi
check 1 "$ro" -- solve "$tmp/rod.h5" --pairs 2 --out "$ro/r.h5"
printf '%%%%MatrixMarket matrix coordinate real general\n2 2 1\n1 1 1.0\n' >"$tmp/small.mtx"
check 1 "$ro" -- import "$tmp/small.mtx" "$ro/m.h5"
[[ ! -e "$ro/r.h5" && ! -e "$ro/m.h5" ]] || fail "a file appeared in the read-only directory"

# plan: malformed sizes and walltimes (plan is serial; it also runs under mpirun).
plan=(plan "$tmp/rod.h5" --pairs 2 --scheduler slurm --cores-per-node 2)
for bad in "12Q" ""; do  # more forms: tests/unit/test_plan_units.cpp
  check 2 "--node-memory '$bad'" -- "${plan[@]}" --node-memory "$bad" --max-walltime 01:00:00 --out "$tmp/job.sh"
done
for bad in "25:61:00"; do
  check 2 "--max-walltime '$bad'" -- "${plan[@]}" --node-memory 4G --max-walltime "$bad" --out "$tmp/job.sh"
done
[[ ! -e "$tmp/job.sh" ]] || fail "a refused plan wrote its script"

echo "hostile refusals: all checks passed"
