#!/usr/bin/env bash
# The results file as h5py sees it (Debian's python3-h5py, an independent HDF5 reader):
# every name, type and shape of docs/results-file.md, values against the closed-form
# eigenpairs of the 1-D Dirichlet Laplacian (2 - 2cos(j pi/(n+1)), sqrt(2/(n+1)) sin(i j pi/(n+1));
# the standard finite-difference result), and the fingerprint against `inspect --check`.
# Then files damaged with h5py (a wrong shape, a missing group, a wrong kind) are
# refused by `lodestone inspect` with a message naming the defect.
set -euo pipefail
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
run() { local p="$1"; shift; timeout 120 mpirun --allow-run-as-root --oversubscribe -n "$p" "$@"; }
py=/usr/bin/python3
fail() { echo "FAIL: $*" >&2; exit 1; }

n=37; k=4
run 3 "$LODESTONE_BUILD/tests/write_sample_result" "$n" "$k" "$tmp/rod.h5" "$tmp/modes.h5"
fp="$(run 2 "$LODESTONE" inspect --check "$tmp/rod.h5" | awk '/^fingerprint/ {print $2}')"
[ -n "$fp" ] || fail "no fingerprint from inspect --check"

"$py" - "$tmp/modes.h5" "$n" "$k" "$fp" <<'PY'
import sys
import h5py, numpy as np
path, n, k, fp = sys.argv[1], int(sys.argv[2]), int(sys.argv[3]), sys.argv[4]
t = lambda v: v.decode() if isinstance(v, bytes) else str(v)
with h5py.File(path, "r") as f:
    a = f.attrs
    assert t(a["file_kind"]) == "result" and int(a["format_version"]) == 1
    for name in ("converged", "matvecs", "iterations", "ranks"):
        assert a[name].dtype == np.int64, (name, a[name].dtype)
    for name in ("tolerance", "norm_estimate", "elapsed_seconds"):
        assert a[name].dtype == np.float64, (name, a[name].dtype)
    assert t(a["method"]) == "block" and t(a["selection"]) == "largest"
    assert int(a["converged"]) == k and int(a["ranks"]) == 3
    assert t(a["matrix_fingerprint"]) == fp, (t(a["matrix_fingerprint"]), fp)
    assert len(fp) == 16 and int(fp, 16) >= 0

    for name in ("eigenvalues", "eigenvalues_imag", "residual_norms"):
        assert f[name].shape == (k,) and f[name].dtype == np.float64, name
    V = f["eigenvectors"]
    assert V.shape == (n, k) and V.dtype == np.float64
    j = n - np.arange(k)                                   # the k largest, largest first
    lam = 2 - 2 * np.cos(j * np.pi / (n + 1))
    np.testing.assert_allclose(f["eigenvalues"][:], lam, rtol=0, atol=1e-15)
    assert not f["eigenvalues_imag"][:].any()
    i = np.arange(1, n + 1)[:, None]
    exact = np.sqrt(2 / (n + 1)) * np.sin(i * j[None, :] * np.pi / (n + 1))
    np.testing.assert_allclose(V[:, :], exact, rtol=0, atol=1e-13)   # row-major: row i is entry i of every vector
    np.testing.assert_allclose(np.linalg.norm(V[:, :], axis=0), 1, atol=1e-14)

    h = f["history"]
    H = h["iteration"].shape[0]
    assert H > 0
    for name in ("iteration", "matvecs", "converged"):
        assert h[name].shape == (H,) and h[name].dtype == np.int64, name
    assert h["seconds"].shape == (H,) and h["seconds"].dtype == np.float64
    for name in ("estimates", "residuals"):
        assert h[name].shape == (H, k) and h[name].dtype == np.float64, name
    res, conv = h["residuals"][:, :], h["converged"][:]
    # NaN exactly where a pair was already locked: the first conv[r-1] pairs at record r.
    for r in range(1, H):
        assert np.isnan(res[r, :conv[r - 1]]).all() and np.isfinite(res[r, conv[r - 1]:]).all(), r
    assert np.all(np.diff(h["matvecs"][:]) > 0) and conv[-1] == k
print("h5py reads the documented layout")
PY

# Damaged copies, made with h5py; the reader must name the defect.
damage() {
  cp "$tmp/modes.h5" "$tmp/$1.h5"
  "$py" - "$tmp/$1.h5" "$2" <<'PY'
import sys, h5py, numpy as np
path, how = sys.argv[1], sys.argv[2]
with h5py.File(path, "r+") as f:
    if how == "short-imag":
        del f["eigenvalues_imag"]; f["eigenvalues_imag"] = np.zeros(2)
    elif how == "no-history":
        del f["history"]
    elif how == "wrong-kind":
        f.attrs["file_kind"] = "checkpoint"
    elif how == "bad-fingerprint":
        f.attrs["matrix_fingerprint"] = "12345"
    elif how == "history-shape":
        del f["history/residuals"]; f["history/residuals"] = np.zeros((3, 3))
PY
}
check() {
  local rc=0
  run 2 "$LODESTONE" inspect "$tmp/$1.h5" >"$tmp/out" 2>&1 || rc=$?
  [ "$rc" -eq 1 ] || { cat "$tmp/out" >&2; fail "$1: exit $rc, expected 1"; }
  grep -q -- "$2" "$tmp/out" || { cat "$tmp/out" >&2; fail "$1: message lacks '$2'"; }
}
damage short-imag short-imag;           check short-imag "'eigenvalues_imag' has 2"
damage no-history no-history;           check no-history "missing group '/history'"
damage history-shape history-shape;     check history-shape "must be [0-9]* x 4"
damage bad-fingerprint bad-fingerprint; check bad-fingerprint "expected 16 hexadecimal digits"
# A file of another kind is not a results file, so inspect reads it as a matrix file and says what is missing.
damage wrong-kind wrong-kind
rc=0; run 2 "$LODESTONE" inspect "$tmp/wrong-kind.h5" >"$tmp/out" 2>&1 || rc=$?
[ "$rc" -eq 1 ] || fail "wrong-kind: exit $rc"
echo "result_h5py_layout: ok"
