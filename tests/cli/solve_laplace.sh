#!/usr/bin/env bash
# `lodestone solve` end to end: the 2-D Dirichlet Laplacian's largest and smallest
# eigenvalues against the closed form 4 - 2cos(i pi/(nx+1)) - 2cos(j pi/(ny+1))
# (Kronecker sum of the 1-D finite-difference result 2 - 2cos(j pi/(n+1))), the
# same values at 1-3 ranks, `lodestone verify` passing on every result written,
# exit 4 with the converged pairs kept when the matvec budget runs out (or the residuals
# checked at the end miss the tolerance), and the
# refusals for non-symmetric input, and the phases of a run as stages of PETSc's profile.
set -euo pipefail
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
run() { local p="$1"; shift; timeout 120 mpirun --allow-run-as-root --oversubscribe -n "$p" "$@"; }
py=/usr/bin/python3   # Debian's python3 carries numpy and h5py
fail() { echo "FAIL: $*" >&2; exit 1; }
expect() {
  local code="$1" pattern="$2"; shift 2
  local rc=0
  "$@" >"$tmp/out" 2>&1 || rc=$?
  [ "$rc" -eq "$code" ] || { cat "$tmp/out" >&2; fail "exit $rc, expected $code: $*"; }
  grep -q -- "$pattern" "$tmp/out" || { cat "$tmp/out" >&2; fail "output lacks '$pattern': $*"; }
}

nx=14 ny=9
run 2 "$LODESTONE" generate laplace2d --nx $nx --ny $ny "$tmp/plate.h5"

check_values() {  # FILE SELECT K
  "$py" - "$1" "$2" "$3" $nx $ny <<'PY'
import sys, h5py, numpy as np
path, select, k, nx, ny = sys.argv[1], sys.argv[2], int(sys.argv[3]), int(sys.argv[4]), int(sys.argv[5])
i = np.arange(1, nx + 1)[:, None]; j = np.arange(1, ny + 1)[None, :]
# Closed form, standard finite-difference result (see the header of this script).
lam = np.sort((4 - 2*np.cos(i*np.pi/(nx+1)) - 2*np.cos(j*np.pi/(ny+1))).ravel())
want = lam[::-1][:k] if select == "largest" else lam[:k]
with h5py.File(path, "r") as f:
    got = f["eigenvalues"][:]
    assert f.attrs["converged"] == k, f.attrs["converged"]
assert np.allclose(got, want, atol=1e-7), (got, want)
PY
}

for p in 1 2 3; do
  for select in largest smallest; do
    expect 0 "converged" run $p "$LODESTONE" solve "$tmp/plate.h5" --pairs 5 --select $select --out "$tmp/r-$p-$select.h5"
    check_values "$tmp/r-$p-$select.h5" $select 5 || fail "eigenvalues at $p ranks ($select)"
    expect 0 "verified" run $p "$LODESTONE" verify "$tmp/plate.h5" "$tmp/r-$p-$select.h5"
  done
done
# auto says what it picked.
expect 0 "method auto: using chebyshev" run 1 "$LODESTONE" solve "$tmp/plate.h5" --pairs 2 --out "$tmp/auto.h5"
for m in block power; do
  expect 0 "converged" run 2 "$LODESTONE" solve "$tmp/plate.h5" --pairs 2 --select largest --method $m --out "$tmp/$m.h5" --tol 1e-6
  expect 0 "verified" run 2 "$LODESTONE" verify "$tmp/plate.h5" "$tmp/$m.h5"
done

# Budget: exit 4, and the file holds what converged.
expect 4 "matvec budget (60) ran out" run 2 "$LODESTONE" solve "$tmp/plate.h5" --pairs 6 --method block --max-matvecs 60 --out "$tmp/budget.h5"
cp "$tmp/out" "$tmp/solve.out"
[ -f "$tmp/budget.h5" ] || fail "no results file after the budget ran out"
expect 0 "" run 1 "$LODESTONE" verify "$tmp/plate.h5" "$tmp/budget.h5"
# The single-vector method stopped by its budget writes what it has too.
expect 4 "matvec budget (30) ran out" run 2 "$LODESTONE" solve "$tmp/plate.h5" --pairs 3 --method power --max-matvecs 30 --out "$tmp/budget-power.h5"
[ -f "$tmp/budget-power.h5" ] || fail "no results file after the power method's budget ran out"
# Eigenvalues +10 and -10 (closed form: a 2x2 block [[0, 10], [10, 0]] beside 1 and 2): one
# vector cannot separate them. Power stops by itself with status 4, names both, keeps the file.
printf '%s\n' '%%MatrixMarket matrix coordinate real symmetric' '4 4 3' '2 1 10' '3 3 1' '4 4 2' >"$tmp/tie.mtx"
expect 0 "" run 1 "$LODESTONE" import "$tmp/tie.mtx" "$tmp/tie.h5"
expect 4 "10 and -10 have (nearly) the same modulus" run 2 "$LODESTONE" solve "$tmp/tie.h5" --pairs 2 --method power \
  --quiet --out "$tmp/tie.r.h5"
[ -f "$tmp/tie.r.h5" ] || fail "no results file after power stopped on the +-10 tie"
run 2 "$LODESTONE" solve "$tmp/tie.h5" --pairs 2 --method block --quiet --out "$tmp/tie.b.h5" || fail "block on the tie"
expect 0 "verified" run 1 "$LODESTONE" verify "$tmp/tie.h5" "$tmp/tie.b.h5"
# No budget, but block's own test accepts pairs whose residuals, computed afresh at the end,
# are just above a tight tolerance (a 4000-node walk at 1e-9): exit 4, and the message says
# so instead of blaming a budget that was never set.
run 1 "$LODESTONE" generate walk --n 4000 --communities 4 --mixing 0.1 "$tmp/walk.h5" >/dev/null
expect 4 "residuals checked at the end are above the tolerance" run 2 "$LODESTONE" solve "$tmp/walk.h5" --pairs 4 \
  --method block --tol 1e-9 --quiet --out "$tmp/walk-tight.h5"
grep -q "budget" "$tmp/out" && fail "the message blames a matvec budget that was not set: $(cat "$tmp/out")"
[ -f "$tmp/walk-tight.h5" ] || fail "no results file after the certified residuals missed the tolerance"

# Every listing numbers pairs from 1 (solve's closing table, inspect, verify), on the
# budget run's file, which also has pairs that did not converge.
listed() { awk '/^ +[0-9]+  / {print $1}' "$1" | paste -sd' '; }
run 1 "$LODESTONE" inspect "$tmp/budget.h5" >"$tmp/inspect.out"
run 2 "$LODESTONE" verify "$tmp/plate.h5" "$tmp/budget.h5" >"$tmp/verify.out"
for f in solve inspect verify; do
  [ "$(listed "$tmp/$f.out")" = "1 2 3 4 5 6" ] || { cat "$tmp/$f.out" >&2; fail "$f does not number the pairs 1 to 6"; }
done
c="$(awk '/^pairs/ {print $4}' "$tmp/inspect.out")"
[ "$c" -lt 6 ] || fail "the budget run converged all 6 pairs; the not-checked line is not exercised"
grep -q "^the run converged $c of 6 pairs; pairs $((c + 1)) to 6 are shown but not checked$" "$tmp/verify.out" \
  || { cat "$tmp/verify.out" >&2; fail "verify's not-checked line"; }

# --quiet prints nothing on success.
run 1 "$LODESTONE" solve "$tmp/plate.h5" --pairs 2 --quiet --out "$tmp/q.h5" >"$tmp/q.out" 2>&1
[ ! -s "$tmp/q.out" ] || { cat "$tmp/q.out"; fail "--quiet printed something"; }

# PETSc's profile (-log_view) is split into the run's phases, each a stage of its own (a time
# budget makes the first iteration write a checkpoint, to time the write).
run 2 "$LODESTONE" solve "$tmp/plate.h5" --pairs 2 --checkpoint "$tmp/ckpt.h5" --time-budget 10m --quiet \
  --out "$tmp/staged.h5" --petsc -log_view >"$tmp/profile.out" 2>&1 || { cat "$tmp/profile.out" >&2; fail "solve with -log_view"; }
for stage in "Load matrix" "Set up" "Iterate" "Write checkpoint" "Extract pairs" "Write result"; do
  sed -n '/^Summary of Stages/,/^$/p' "$tmp/profile.out" | grep -q "^ *[0-9]*: *$stage:" \
    || { cat "$tmp/profile.out" >&2; fail "-log_view has no stage '$stage'"; }
done

# Non-symmetric input: chebyshev and --select smallest are refused (exit 2, clear message).
"$py" - "$tmp/ns.h5" <<'PY'
import sys, h5py, numpy as np
n = 6
a = np.diag(np.arange(1.0, n + 1)); a[0, n - 1] = 0.5
with h5py.File(sys.argv[1], "w") as f:
    g = f.create_group("matrix")
    g.attrs["layout"] = "dense"; g.attrs["rows"] = np.int64(n); g.attrs["cols"] = np.int64(n)
    g.attrs["symmetric"] = np.int8(0); g.attrs["format_version"] = np.int64(1)
    g.create_dataset("values", data=a)
PY
expect 2 "needs a symmetric matrix" run 2 "$LODESTONE" solve "$tmp/ns.h5" --pairs 1 --method chebyshev --out "$tmp/x.h5"
expect 2 "needs a symmetric matrix" run 2 "$LODESTONE" solve "$tmp/ns.h5" --pairs 1 --select smallest --out "$tmp/x.h5"
[ ! -e "$tmp/x.h5" ] || fail "a refused solve wrote a results file"
expect 0 "method auto: using krylov" run 2 "$LODESTONE" solve "$tmp/ns.h5" --pairs 2 --out "$tmp/ns-r.h5"
expect 0 "verified" run 2 "$LODESTONE" verify "$tmp/ns.h5" "$tmp/ns-r.h5"
echo "solve_laplace: all checks passed"
