#!/usr/bin/env bash
# Outside-world check: files written by h5py (Debian python3-h5py) in the
# documented layout, from matrices built with SciPy (scipy.sparse), are read by
# Lodestone as the same matrix that Lodestone itself generates.
#  - the 5-point Laplacian built with scipy.sparse and written by h5py (as CSR
#    and as dense) has the same fingerprint as `lodestone generate laplace2d`;
#  - a non-symmetric random matrix written by h5py as CSR and as dense gives
#    the same fingerprint both ways (catches a transposed read, which the
#    symmetric Laplacian cannot);
# each at 1 and 3 ranks.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
ref="$LODESTONE_SOURCE/tests/outside/reference.py"
fingerprint() {  # ranks file
  local out
  out="$(run "$1" "$LODESTONE" inspect --check "$2")"
  echo "$out" | awk '/^fingerprint/ {print $2}'
}
fail=0
same() {  # what a b
  if [ -n "$2" ] && [ "$2" = "$3" ]; then echo "ok: $1 ($2)"; else echo "FAIL: $1: '$2' != '$3'"; fail=1; fi
}

nx=11 ny=7
run "2" "$LODESTONE" generate laplace2d --nx $nx --ny $ny "$work/lodestone.h5" >/dev/null
"$PY" "$ref" write-laplace2d "$work/scipy-csr.h5" $nx $ny csr
"$PY" "$ref" write-laplace2d "$work/scipy-dense.h5" $nx $ny dense
"$PY" "$ref" write-random "$work/random-csr.h5" 13 5 csr
"$PY" "$ref" write-random "$work/random-dense.h5" 13 5 dense

for p in 1 3; do
  mine="$(fingerprint $p "$work/lodestone.h5")"
  same "$p ranks: h5py CSR Laplacian = lodestone generate laplace2d" "$(fingerprint $p "$work/scipy-csr.h5")" "$mine"
  same "$p ranks: h5py dense Laplacian = lodestone generate laplace2d" "$(fingerprint $p "$work/scipy-dense.h5")" "$mine"
  same "$p ranks: h5py random CSR = h5py random dense" "$(fingerprint $p "$work/random-csr.h5")" \
    "$(fingerprint $p "$work/random-dense.h5")"
done
# The summary of the h5py file agrees with SciPy's count: 5*nx*ny - 2*nx - 2*ny
# entries for the 5-point stencil (closed form, common practice).
nnz="$(run "2" "$LODESTONE" inspect "$work/scipy-csr.h5" | awk '/^nonzeros/ {print $2}')"
same "nonzeros of the h5py file" "$nnz" "$((5 * nx * ny - 2 * nx - 2 * ny))"
exit $fail
