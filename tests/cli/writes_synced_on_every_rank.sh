#!/usr/bin/env bash
# Every file Lodestone writes in parallel is synced to storage by every rank before
# it is renamed into place: an imported or generated matrix, a checkpoint and a
# results file. Each rank writes its own rows; on a cluster file system an fsync
# by rank 0 alone does not make the other nodes' rows durable, so a crash right
# after the rename could leave a complete-looking file with missing rows. Watched
# with strace: before each rename of a temporary file, as many distinct processes
# must have called fsync as there are ranks.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
command -v strace >/dev/null || fail "strace is missing (scripts/install-deps installs it)"
ranks=3
cd "$work"

# traced NAME CMD...: runs CMD on $ranks ranks under strace; the trace goes to NAME.trace.
traced() {
  local name="$1"; shift
  local rc=0
  strace -f -qq -e trace=fsync,rename -e signal=none -o "$name.trace" \
    timeout "$RUN_TIMEOUT" "${MPI[@]}" -n "$ranks" "$@" >"$name.out" 2>&1 || rc=$?
  echo "$rc"
}

# synced NAME FINAL: the rename of a temporary file onto FINAL was preceded (since the
# rename before it) by fsync calls from $ranks distinct processes.
synced() {
  local name="$1" final="$2" found
  found=$(awk -v final="\"$final\")" '
    /^[0-9]+ +fsync\(/ { seen[$1] = 1 }
    /^[0-9]+ +rename\(".*partial/ {
      n = 0; for (p in seen) n++
      if (index($0, final) > 0) print n
      delete seen
    }' "$name.trace")
  [[ -n "$found" ]] || { cat "$name.trace"; fail "$name: no rename onto $final was traced"; }
  [[ "$found" -ge "$ranks" ]] ||
    { cat "$name.trace"; fail "$name: $final was renamed into place after fsync by $found of $ranks ranks"; }
}

# A generated matrix.
rc=$(traced generate "$LODESTONE" generate laplace2d plate.h5 --nx 30 --ny 20)
[[ "$rc" -eq 0 ]] || { cat generate.out; fail "generate exited $rc"; }
synced generate plate.h5

# An imported matrix.
{
  echo "%%MatrixMarket matrix coordinate real symmetric"
  echo "12 12 12"
  for i in $(seq 1 12); do echo "$i $i $i"; done
} >diag.mtx
rc=$(traced import "$LODESTONE" import diag.mtx diag.h5)
[[ "$rc" -eq 0 ]] || { cat import.out; fail "import exited $rc"; }
synced import diag.h5

# A checkpoint and a results file: the matvec budget stops the solve (status 4)
# with a last checkpoint, then the results are written.
rc=$(traced solve "$LODESTONE" solve plate.h5 --pairs 2 --checkpoint state.h5 --max-matvecs 30 --out modes.h5 -q)
[[ "$rc" -eq 4 ]] || { cat solve.out; fail "solve exited $rc, expected 4 (matvec budget)"; }
synced solve state.h5
synced solve modes.h5
echo "every rank synced each file before its rename"
