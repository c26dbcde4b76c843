#!/usr/bin/env bash
# `lodestone inspect` and `verify` on a tiny results file whose datasets declare
# 2^40 pairs or history records and store nothing: a refusal (status 1, one
# message line naming the defect), never an allocation that aborts, on 1 and 3 ranks.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"

# The results layout, every attribute in order, each dataset chunked and never
# written (so the files stay small): three files, PAIRS ROWS RECORDS each.
write_hostile() {
  "$PY" - "$@" <<'PYEOF'
import sys, h5py, numpy as np
args = sys.argv[1:]
for i in range(0, len(args), 4):
    path, pairs, rows, records = args[i], int(args[i + 1]), int(args[i + 2]), int(args[i + 3])
    with h5py.File(path, "w") as f:
        for name, value in [("file_kind", "result"), ("method", "krylov"), ("selection", "largest"),
                            ("matrix_fingerprint", "0123456789abcdef")]:
            f.attrs.create(name, np.bytes_(value))
        for name in ("format_version", "converged", "matvecs", "iterations", "ranks"):
            f.attrs.create(name, 1 if name != "converged" else 0, dtype="<i8")
        for name in ("tolerance", "norm_estimate", "elapsed_seconds"):
            f.attrs.create(name, 1e-8 if name == "tolerance" else 1.0, dtype="<f8")
        def empty(group, name, shape, dtype):
            chunks = None if 0 in shape else tuple(1 for _ in shape)
            group.create_dataset(name, shape=shape, dtype=dtype, chunks=chunks)
        for name in ("eigenvalues", "eigenvalues_imag", "residual_norms"):
            empty(f, name, (pairs,), "<f8")
        empty(f, "eigenvectors", (rows, pairs), "<f8")
        h = f.create_group("history")
        for name, dtype in (("iteration", "<i8"), ("matvecs", "<i8"), ("seconds", "<f8"), ("converged", "<i8")):
            empty(h, name, (records,), dtype)
        for name in ("estimates", "residuals"):
            empty(h, name, (records, pairs), "<f8")
PYEOF
}

# expect_refusal P PATTERN -- COMMAND...: status 1 and one message line matching
# PATTERN, no abort, on P ranks (1: without mpirun, which is quicker).
expect_refusal() {
  local p="$1" want="$2"; shift 3
  local rc=0
  if [[ "$p" == 1 ]]; then "$@" >"$work/out" 2>"$work/err" || rc=$?
  else run "$p" "$@" >"$work/out" 2>"$work/err" || rc=$?; fi
  [[ "$rc" == 1 ]] || { cat "$work/err" >&2; fail "$* at $p ranks: exit $rc, expected 1"; }
  [[ "$(grep -c '^lodestone: error: ' "$work/err" || true)" == 1 ]] || { cat "$work/err" >&2; fail "$* at $p ranks: not one message"; }
  grep -q "^lodestone: error: .*$want" "$work/err" || { cat "$work/err" >&2; fail "$* at $p ranks: expected '$want'"; }
  ! grep -q "bad_alloc\|terminate called" "$work/err" || { cat "$work/err" >&2; fail "$* at $p ranks: aborted"; }
}

huge=$((1 << 40))
"$LODESTONE" generate laplace1d --n 3 "$work/rod.h5" >/dev/null
write_hostile "$work/pairs.h5" "$huge" 3 0 "$work/both.h5" "$huge" "$huge" 0 "$work/history.h5" 2 3 "$huge"
[[ "$(stat -c %s "$work/pairs.h5")" -lt 65536 ]] || fail "the hostile file is not small"

msg="'eigenvalues' has $huge entries but 'eigenvectors' has 3 rows; a result has at most one pair per row"
expect_refusal 1 "$msg" -- "$LODESTONE" inspect "$work/pairs.h5"
expect_refusal 3 "$msg" -- "$LODESTONE" verify "$work/rod.h5" "$work/pairs.h5"

expect_refusal 1 "'eigenvectors' is $huge x $huge, too large for any matrix" -- "$LODESTONE" inspect "$work/both.h5"

msg="'/history' has $huge records; a results file holds at most 4096"
expect_refusal 1 "$msg" -- "$LODESTONE" inspect "$work/history.h5"
expect_refusal 3 "$msg" -- "$LODESTONE" verify "$work/rod.h5" "$work/history.h5"
echo "hostile_result_sizes: ok"
