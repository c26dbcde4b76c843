"""Checks of `lodestone generate` output read with h5py (Debian python3-h5py).

  mm_generators_lapack.py DIR   checks DIR/{laplace2d,walk,walk_communities,dense_linear,dense_geometric,hypercube}.h5

References named beside each check: closed forms, and LAPACK through numpy
(numpy.linalg.eigvalsh -> LAPACK syevd, numpy.linalg.eigvals -> LAPACK geev).
The generator parameters must match mm_generators_lapack.sh.
"""
import os
import sys
from math import comb

import h5py
import numpy as np
import scipy.sparse


def read(directory, name):
    with h5py.File(os.path.join(directory, name + ".h5"), "r") as f:
        g = f["matrix"]
        n = int(g.attrs["rows"])
        sym = int(g.attrs.get("symmetric", 0))
        if g.attrs["layout"] == "dense" or (isinstance(g.attrs["layout"], bytes) and g.attrs["layout"] == b"dense"):
            return g["values"][...], sym, n * n
        off, col, val = g["row_offsets"][...], g["column_indices"][...], g["values"][...]
        return scipy.sparse.csr_matrix((val, col, off), shape=(n, n)).toarray(), sym, len(col)


failures = []


def check(ok, what):
    print(("ok   " if ok else "FAIL ") + what)
    if not ok:
        failures.append(what)


def main(directory):
    # laplace2d --nx 7 --ny 5: nnz = 5*nx*ny - 2*nx - 2*ny (closed form, common practice).
    a, sym, nnz = read(directory, "laplace2d")
    nx, ny = 7, 5
    check(nnz == 5 * nx * ny - 2 * nx - 2 * ny, f"laplace2d nnz {nnz} = 5*nx*ny - 2*nx - 2*ny")
    check(sym == 1 and np.array_equal(a, a.T), "laplace2d symmetric")

    # walk --n 300 --degree 6 --damping 0.85: column-stochastic; eigenvalue 1 is
    # the unique eigenvalue of largest modulus (numpy.linalg.eigvals, LAPACK geev).
    a, sym, _ = read(directory, "walk")
    check(np.allclose(a.sum(axis=0), 1.0, rtol=0, atol=1e-13), "walk columns sum to 1")
    check(np.all(a >= 0), "walk entries are non-negative")
    check(np.all(np.diag(a) >= 0.15 - 1e-15), "walk keeps the damped mass (1-d) on the diagonal")
    ev = np.linalg.eigvals(a)
    mods = np.sort(np.abs(ev))[::-1]
    top = ev[np.argmax(np.abs(ev))]
    check(abs(top - 1.0) < 1e-10, f"walk dominant eigenvalue {top:.15g} = 1 (LAPACK geev)")
    check(mods[1] < 1 - 1e-6, f"walk second modulus {mods[1]:.6g} < 1: the dominant eigenvalue is unique")

    # walk --n 600 --degree 6 --communities 3 --mixing 0.1: still column-stochastic, and
    # three eigenvalues near 1 (one per community, each different) stand apart from the
    # rest (numpy.linalg.eigvals, LAPACK geev).
    a, sym, _ = read(directory, "walk_communities")
    check(np.allclose(a.sum(axis=0), 1.0, rtol=0, atol=1e-13), "walk_communities columns sum to 1")
    mods = np.sort(np.abs(np.linalg.eigvals(a)))[::-1]
    check(abs(mods[0] - 1.0) < 1e-10 and mods[1] < 1 - 1e-3 and mods[2] < mods[1] - 1e-3,
          f"walk_communities leading moduli {mods[:3]} distinct, the first 1 (LAPACK geev)")
    check(mods[2] > 0.9 and mods[3] < 0.75 * mods[2],
          f"walk_communities: third modulus {mods[2]:.4g} near 1, fourth {mods[3]:.4g} well below (LAPACK geev)")

    # dense-spectrum: eigenvalues per LAPACK (numpy.linalg.eigvalsh, LAPACK syevd).
    for name, want in (("dense_linear", np.arange(40, 0, -1, dtype=float)),
                       ("dense_geometric", 0.8 ** np.arange(40, dtype=float))):
        a, sym, _ = read(directory, name)
        check(sym == 1 and np.allclose(a, a.T, rtol=0, atol=1e-13), f"{name} symmetric")
        got = np.sort(np.linalg.eigvalsh(a))[::-1]
        err = np.max(np.abs(got - want)) / np.max(np.abs(want))
        check(err < 1e-12, f"{name} eigenvalues match the prescribed spectrum (LAPACK syevd), rel. error {err:.2e}")

    # hypercube --dim 6: degree 6 everywhere, symmetric, eigenvalues d - 2k with
    # multiplicity C(d, k) (closed form for the hypercube graph Q_d).
    a, sym, _ = read(directory, "hypercube")
    d = 6
    check(a.shape == (2 ** d, 2 ** d), "hypercube has 2^d nodes")
    check(np.all(a.sum(axis=1) == d), "hypercube every node has degree d")
    check(sym == 1 and np.array_equal(a, a.T), "hypercube symmetric")
    want = np.sort(np.concatenate([np.full(comb(d, k), d - 2.0 * k) for k in range(d + 1)]))
    got = np.sort(np.linalg.eigvalsh(a))
    check(np.max(np.abs(got - want)) < 1e-10, "hypercube eigenvalues d - 2k with multiplicity C(d, k) (LAPACK syevd)")
    return 1 if failures else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1]))
