#!/usr/bin/env bash
# Matrices written by `lodestone generate` (3 ranks) are read back by the Python
# helper (scripts/to_lodestone.py, h5py underneath) as the matrices they should be:
# the 2-D Laplacian equal to SciPy's Kronecker-sum construction, the hypercube
# equal to its bit-flip definition, the dense prescribed spectrum with LAPACK's
# eigenvalues (numpy.linalg.eigvalsh) n..1, the walk matrix column-stochastic.
# The helper's fingerprint of each equals `lodestone inspect --check`'s, and
# `to-lodestone back` writes files SciPy and NumPy load as the same matrices.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
export LODESTONE_SOURCE
check="$LODESTONE_SOURCE/tests/outside/to_lodestone_check.py"
helper="$LODESTONE_SOURCE/scripts/to-lodestone"
cd "$work"

run 3 "$LODESTONE" generate laplace2d --nx 13 --ny 7 plate.h5 >/dev/null
run 3 "$LODESTONE" generate hypercube --dim 5 cube.h5 >/dev/null
run 3 "$LODESTONE" generate dense-spectrum --n 40 --spectrum linear --seed 4 dense.h5 >/dev/null
run 3 "$LODESTONE" generate walk --n 300 --degree 5 --damping 0.85 --seed 9 walk.h5 >/dev/null
"$PY" "$check" read-back laplace2d plate.h5 13 7
"$PY" "$check" read-back hypercube cube.h5 5
"$PY" "$check" read-back dense-spectrum dense.h5 40
"$PY" "$check" read-back walk walk.h5 0.85
for f in plate cube dense walk; do
  mine=$("$PY" "$check" fingerprint $f.h5)
  theirs=$(run 2 "$LODESTONE" inspect --check $f.h5 | awk '/^fingerprint/ {print $2}')
  [ -n "$mine" ] && [ "$mine" = "$theirs" ] || fail "$f.h5: helper fingerprint $mine, lodestone $theirs"
  echo "ok: $f.h5 fingerprint $mine"
done

timeout 60 "$helper" back plate.h5 plate.npz >/dev/null
timeout 60 "$helper" back dense.h5 dense.npy >/dev/null
"$PY" - <<'PY'
import h5py, numpy as np, scipy.sparse as sp
# Plain SciPy/NumPy loaders against plain h5py reads of the same files.
with h5py.File("plate.h5") as f:
    g = f["matrix"]
    want = sp.csr_matrix((g["values"][:], g["column_indices"][:], g["row_offsets"][:]), shape=(91, 91))
got = sp.load_npz("plate.npz")
assert got.shape == want.shape and (got != want).nnz == 0, "plate.npz differs"
with h5py.File("dense.h5") as f:
    assert np.array_equal(np.load("dense.npy"), f["matrix/values"][:]), "dense.npy differs"
print("ok: to-lodestone back: scipy.sparse.load_npz and numpy.load read the same matrices")
PY
rc=0; timeout 60 "$helper" back plate.h5 plate.npy >/dev/null 2>&1 || rc=$?
[ "$rc" = 1 ] || fail "a CSR matrix to .npy: exit $rc, expected 1"
echo "to_lodestone_read: all checks passed"
