#!/usr/bin/env bash
# Runs README's "Bringing a matrix" walkthrough exactly as written: SciPy writes a
# spring chain as Matrix Market and .npz, `lodestone import` and scripts/to-lodestone
# bring it in, solve, and the results come back to NumPy. Then checks what it left:
# both files hold the same matrix (fingerprints by `lodestone inspect --check`, also
# the one the helper printed), and the eigenvalues in the .npz are the closed form
# 2 - 2cos(k pi/(n+1)) of tridiag(-1, 2, -1) (common practice).
set -euo pipefail
source "$LODESTONE_SOURCE/tests/cli/readme_walkthrough.bash"
walkthrough_run "Bringing a matrix"
cd "$WT_WORK"
fp() { timeout 120 mpirun -n 2 "$LODESTONE" inspect --check "$1" | awk '/^fingerprint/ {print $2}'; }
a=$(fp chain.h5)
[ -n "$a" ] && [ "$a" = "$(fp chain-scipy.h5)" ] && [ "$a" = "$(fp chain-again.h5)" ] \
  || wt_fail "imported and helper-written files differ"
grep -q "^fingerprint $a$" "$WT_LOG" || wt_fail "the helper did not print the fingerprint $a"
grep -q "computed from this matrix: True" "$WT_LOG" || wt_fail "the Python snippet did not match the fingerprint"
/usr/bin/python3 - <<'PY'
import numpy as np
z = np.load("chain-modes.npz")
n = 400
want = 2 - 2 * np.cos(np.arange(1, 5) * np.pi / (n + 1))   # closed form (common practice)
assert z["eigenvectors"].shape == (n, 4), z["eigenvectors"].shape
assert np.allclose(z["eigenvalues"], want, rtol=0, atol=1e-8), (z["eigenvalues"], want)
print("ok: chain-modes.npz eigenvalues are 2 - 2cos(k pi/401), k = 1..4")
PY
echo "readme_walkthrough_matrix: the walkthrough ran and its results check"
