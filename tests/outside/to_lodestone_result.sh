#!/usr/bin/env bash
# Results files read back with `to-lodestone result --npz` give eigenpairs whose
# residuals ||A x - lambda x||, recomputed in NumPy from matrices SciPy/NumPy
# built on their own, meet the result's tolerance: the 1-D Laplacian (real
# pairs, closed-form eigenvalues 2 - 2cos(k pi/(n+1))) and a dense non-symmetric
# matrix whose dominant pair is complex, 2 e^{+-i pi/5} by construction (the
# conjugate-pair columns of docs/results-file.md). The result's fingerprint is the
# helper's fingerprint of the matrix. Also the module's read_result.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
export LODESTONE_SOURCE
check="$LODESTONE_SOURCE/tests/outside/to_lodestone_check.py"
helper="$LODESTONE_SOURCE/scripts/to-lodestone"
cd "$work"

timeout 120 "$PY" "$check" inputs "$work"
timeout 60 "$helper" matrix rod.npz rod.h5 >/dev/null
run 3 "$LODESTONE" solve rod.h5 --pairs 5 --select smallest --quiet --out rod-modes.h5
timeout 60 "$helper" result rod-modes.h5 --npz rod-modes.npz >rod.txt
grep -q "5 pair(s), 5 converged, n = 60" rod.txt || { cat rod.txt; fail "summary line"; }
"$PY" "$check" residuals rod:60 rod-modes.npz
"$PY" - <<'PY'
import numpy as np
z = np.load("rod-modes.npz")
# Smallest eigenvalues of tridiag(-1, 2, -1), n = 60: 2 - 2cos(k pi / 61), k = 1..5 (closed form).
want = 2 - 2 * np.cos(np.arange(1, 6) * np.pi / 61)
assert np.allclose(z["eigenvalues"], want, atol=1e-6), (z["eigenvalues"], want)
assert z["eigenvectors"].shape == (60, 5) and "history_matvecs" in z.files and str(z["method"]) in ("chebyshev", "block")
print("ok: rod eigenvalues match the closed form")
PY

run 2 "$LODESTONE" solve api-spiral.h5 --pairs 2 --method block --quiet --out spiral-modes.h5
timeout 60 "$helper" result spiral-modes.h5 --npz spiral-modes.npz >/dev/null
"$PY" "$check" residuals spiral spiral-modes.npz

# The module API: complex_pairs() turns the stored columns into complex vectors.
"$PY" - <<'PY'
import os, sys
import numpy as np
sys.path.insert(0, os.path.join(os.environ["LODESTONE_SOURCE"], "scripts"))
import to_lodestone as tl
r = tl.read_result("spiral-modes.h5")
a = tl.read_matrix("api-spiral.h5")
lam, v = r.complex_pairs()
for j in range(r.converged):
    res = np.linalg.norm(a @ v[:, j] - lam[j] * v[:, j]) / np.linalg.norm(v[:, j])
    assert res <= 1.01 * r.limit + 1e-12, (j, res, r.limit)
assert abs(lam[0].imag) > 0.5 and np.isclose(lam[0], np.conj(lam[1])), lam
assert tl.read_result("spiral-modes.h5", vectors=False).vectors is None
print(f"ok: read_result + complex_pairs: residuals within {r.limit:.2e}")
PY

rc=0; timeout 60 "$helper" result rod.h5 >err.txt 2>&1 || rc=$?
[ "$rc" = 1 ] && grep -q "not a Lodestone results file" err.txt || { cat err.txt; fail "a matrix file as a result: exit $rc"; }
echo "to_lodestone_result: all checks passed"
