#!/usr/bin/env python3
"""Reference side of the outside-world checks: matrices built with SciPy
(scipy.sparse, Debian python3-scipy) and files written and read with h5py
(Debian python3-h5py), following only the documented matrix file layout
(README "Matrix file layout", version 1) and none of Lodestone's code.

  reference.py write-laplace2d PATH NX NY csr|dense   write the 5-point Laplacian
  reference.py write-random PATH N SEED csr|dense     write a non-symmetric random matrix
  reference.py check-laplace2d PATH NX NY             read a Lodestone-written file, compare
  reference.py row-offsets NX NY                      print SciPy's row pointer, comma-separated
"""
import sys

import h5py
import numpy as np
import scipy.sparse as sp


def laplace2d(nx, ny):
    """5-point Dirichlet Laplacian on an nx x ny grid, row = i + nx*j, built as
    kron(I_ny, T_nx) + kron(T_ny, I_nx) with T = tridiag(-1, 2, -1): the usual
    Kronecker-sum construction (common practice)."""
    def t(n):
        return sp.diags([-np.ones(n - 1), 2 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1])
    a = sp.kron(sp.identity(ny), t(nx)) + sp.kron(t(ny), sp.identity(nx))
    a = sp.csr_matrix(a)
    a.sort_indices()
    return a


def write(path, a, layout, symmetric):
    with h5py.File(path, "w") as f:
        g = f.create_group("matrix")
        g.attrs["format_version"] = 1
        g.attrs["rows"] = a.shape[0]
        g.attrs["cols"] = a.shape[1]
        g.attrs["symmetric"] = int(symmetric)
        if layout == "csr":
            g.attrs["layout"] = "csr"  # h5py: variable-length UTF-8 string
            g.create_dataset("row_offsets", data=a.indptr.astype(np.int64))
            g.create_dataset("column_indices", data=a.indices.astype(np.int32))
            g.create_dataset("values", data=a.data.astype(np.float64))
        else:
            g.attrs["layout"] = np.bytes_(b"dense")  # h5py: fixed-length ASCII string
            g.create_dataset("values", data=a.toarray().astype(np.float64))


def check_laplace2d(path, nx, ny):
    want = laplace2d(nx, ny)
    n = nx * ny
    problems = []
    with h5py.File(path, "r") as f:
        g = f["matrix"]
        attrs = {k: g.attrs[k] for k in g.attrs}
        layout = attrs.get("layout")
        layout = layout.decode() if isinstance(layout, bytes) else layout
        expect = {"layout": "csr", "rows": n, "cols": n, "format_version": 1, "symmetric": 1}
        for k, v in expect.items():
            got = layout if k == "layout" else attrs.get(k)
            if got is None or got != v:
                problems.append(f"attribute {k} is {got!r}, expected {v!r}")
        for k in ("rows", "cols", "format_version", "symmetric"):
            if k in attrs and not np.issubdtype(np.asarray(attrs[k]).dtype, np.integer):
                problems.append(f"attribute {k} is not an integer")
        off, col, val = g["row_offsets"], g["column_indices"], g["values"]
        if off.dtype != np.int64:
            problems.append(f"row_offsets has dtype {off.dtype}, expected int64")
        if col.dtype not in (np.int32, np.int64):
            problems.append(f"column_indices has dtype {col.dtype}, expected int32 or int64")
        if val.dtype not in (np.float64, np.float32):
            problems.append(f"values has dtype {val.dtype}, expected float64 or float32")
        got = sp.csr_matrix((val[...], col[...], off[...]), shape=(attrs["rows"], attrs["cols"]))
    if not got.has_sorted_indices:
        problems.append("column indices are not sorted within rows")
    if got.nnz != want.nnz:
        problems.append(f"{got.nnz} stored entries, SciPy's construction has {want.nnz}")
    elif not (np.array_equal(got.indptr, want.indptr) and np.array_equal(got.indices, want.indices)
              and np.array_equal(got.data, want.data)):
        problems.append("entries differ from SciPy's construction")
    for p in problems:
        print(f"FAIL: {path}: {p}")
    if not problems:
        print(f"ok: h5py reads {path} as SciPy's {nx} x {ny} Laplacian ({want.nnz} entries)")
    return 1 if problems else 0


def main(argv):
    cmd = argv[0] if argv else ""
    if cmd == "write-laplace2d":
        write(argv[1], laplace2d(int(argv[2]), int(argv[3])), argv[4], True)
    elif cmd == "write-random":
        n, seed = int(argv[2]), int(argv[3])
        a = sp.random(n, n, density=0.3, random_state=seed, format="csr") + sp.identity(n, format="csr")
        write(argv[1], sp.csr_matrix(a), argv[4], False)
    elif cmd == "check-laplace2d":
        return check_laplace2d(argv[1], int(argv[2]), int(argv[3]))
    elif cmd == "row-offsets":
        print(", ".join(str(x) for x in laplace2d(int(argv[1]), int(argv[2])).indptr))
    else:
        print(__doc__, file=sys.stderr)
        return 2
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
