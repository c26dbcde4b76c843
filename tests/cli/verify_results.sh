#!/usr/bin/env bash
# `lodestone verify`: passes on a closed-form results file at several rank counts,
# fails with exit 1 and one clear line on perturbed vectors (perturbed with h5py),
# on a wrong matrix, on a truncated or missing file, and on a matrix file given as a result.
set -euo pipefail
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
run() { local p="$1"; shift; timeout 120 mpirun --allow-run-as-root --oversubscribe -n "$p" "$@"; }
sample="$LODESTONE_BUILD/tests/write_sample_result"
# Debian's python3 carries python3-h5py (a python3 earlier in PATH may not).
py=/usr/bin/python3
fail() { echo "FAIL: $*" >&2; exit 1; }

# expect CODE PATTERN CMD...: runs CMD, checks its exit status and that its output matches PATTERN.
expect() {
  local code="$1" pattern="$2"; shift 2
  local rc=0
  "$@" >"$tmp/out" 2>&1 || rc=$?
  [ "$rc" -eq "$code" ] || { cat "$tmp/out" >&2; fail "exit $rc, expected $code: $*"; }
  grep -q -- "$pattern" "$tmp/out" || { cat "$tmp/out" >&2; fail "output lacks '$pattern': $*"; }
}

run 2 "$sample" 60 5 "$tmp/rod.h5" "$tmp/modes.h5"

for p in 1 3; do
  expect 0 "verified: all 5 converged pairs meet the tolerance" run "$p" "$LODESTONE" verify "$tmp/rod.h5" "$tmp/modes.h5"
done
# The table is printed once, not once per rank.
[ "$(grep -c '^ *pair ' "$tmp/out")" -eq 1 ] || fail "table header printed more than once"

# Perturbed vectors: column 3 of the file (pair 4; listings number pairs from 1) gets a bump.
cp "$tmp/modes.h5" "$tmp/bumped.h5"
"$py" - "$tmp/bumped.h5" <<'PY'
import sys, h5py
with h5py.File(sys.argv[1], "r+") as f:
    v = f["eigenvectors"]
    col = v[:, 3]
    col[10:14] += 1e-3
    v[:, 3] = col
PY
expect 1 "verify failed: 1 of 5 converged pairs fail; first, pair 4: recomputed residual" \
  run 2 "$LODESTONE" verify "$tmp/rod.h5" "$tmp/bumped.h5"
grep -qE "^ +4  .*residual too large$" "$tmp/out" || fail "table does not mark the perturbed pair as pair 4"
[ "$(grep -c 'lodestone: error' "$tmp/out")" -eq 1 ] || fail "error printed more than once"

# A wrong matrix with the same number of rows (a 6 x 10 grid has 60 points).
run 2 "$LODESTONE" generate laplace2d --nx 6 --ny 10 "$tmp/plate.h5"
expect 1 "was not computed from" run 2 "$LODESTONE" verify "$tmp/plate.h5" "$tmp/modes.h5"
# ... and one of another size.
run 1 "$LODESTONE" generate laplace1d --n 61 "$tmp/rod61.h5"
expect 1 "(60 rows), the matrix has .* (61 rows)" run 2 "$LODESTONE" verify "$tmp/rod61.h5" "$tmp/modes.h5"

# Truncated, missing, not a results file.
head -c 3000 "$tmp/modes.h5" >"$tmp/truncated.h5"
expect 1 "truncated" run 2 "$LODESTONE" verify "$tmp/rod.h5" "$tmp/truncated.h5"
expect 1 "no such file" run 2 "$LODESTONE" verify "$tmp/rod.h5" "$tmp/absent.h5"
expect 1 "not a Lodestone results file" run 2 "$LODESTONE" verify "$tmp/rod.h5" "$tmp/rod.h5"

# Usage error: the result is missing.
expect 2 "result is required" run 1 "$LODESTONE" verify "$tmp/rod.h5"
echo "verify_results: ok"
