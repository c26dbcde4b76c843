#!/usr/bin/env bash
# Matrices whose entries are near 1e+300 and 1e-300, end to end at 1 and 3 ranks:
# solve finds the right eigenvalues (no NaN, no silent underflow to a wrong
# "converged" pair), and verify's own recomputed residuals hold (its column norms
# must not overflow either). A diagonal matrix's eigenvalues are its diagonal
# entries (closed form); the files are written with h5py (Debian python3-h5py).
set -euo pipefail
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
MPI=(mpirun --allow-run-as-root --oversubscribe)
py=/usr/bin/python3
fail() { echo "FAIL: $*" >&2; exit 1; }

"$py" - "$tmp" <<'PY'
import sys, h5py, numpy as np
n = 10
for name, scale in (("big", 1e300), ("tiny", 1e-300)):
    with h5py.File(f"{sys.argv[1]}/{name}.h5", "w") as f:
        g = f.create_group("matrix")
        g.attrs.update(layout="csr", rows=n, cols=n, symmetric=1, format_version=1)
        g["row_offsets"] = np.arange(n + 1, dtype=np.int64)
        g["column_indices"] = np.arange(n, dtype=np.int64)
        g["values"] = scale * np.arange(1, n + 1) / n
PY

for name in big tiny; do
  for np in 1 3; do
    for method in auto; do  # every method: tests/unit/test_hostile_matrices.cpp
      out="$tmp/$name-$np-$method.r.h5"
      timeout 120 "${MPI[@]}" -n "$np" "$LODESTONE" solve "$tmp/$name.h5" --pairs 2 --method "$method" --quiet \
        --out "$out" 2>"$tmp/e" || { cat "$tmp/e"; fail "$name, $method, $np ranks: solve failed"; }
      timeout 120 "${MPI[@]}" -n "$np" "$LODESTONE" verify "$tmp/$name.h5" "$out" >"$tmp/v" 2>&1 ||
        { cat "$tmp/v"; fail "$name, $method, $np ranks: verify refused the result"; }
      "$py" - "$out" "$name" <<'PY' || fail "$name, $method, $np ranks: wrong eigenvalues"
import sys, h5py, numpy as np
scale = 1e300 if sys.argv[2] == "big" else 1e-300
got = h5py.File(sys.argv[1], "r")["eigenvalues"][:]
want = np.array([1.0, 0.9]) * scale  # the two largest diagonal entries
ok = np.all(np.isfinite(got)) and np.max(np.abs(got - want)) <= 1e-7 * scale
print(("ok" if ok else "WRONG") + f": {sys.argv[2]}: {got} (want {want})")
sys.exit(0 if ok else 1)
PY
    done
  done
done
echo "extreme scales: all checks passed"
