#!/usr/bin/python3
"""SciPy contender of the benchmark suite (scripts/bench): scipy.sparse.linalg
eigsh (symmetric) or eigs (non-symmetric) on a Lodestone HDF5 matrix read with
h5py, counting matrix-vector products through a LinearOperator wrapper.

    bench-scipy.py MATRIX.h5 --pairs K --which LA|LM --tol T --out RESULT.json

The start vector v0 is Lodestone's first start vector (the hashed values of
seed 1, stream 1 for every global row, minus 1/2), so both begin from the same
vector where the API takes only one. Prints nothing; writes one JSON object.
Run it under Debian's /usr/bin/python3 (numpy, scipy, h5py)."""
import argparse
import json
import time

import h5py
import numpy as np
import scipy
import scipy.sparse as sp
import scipy.sparse.linalg as sla

M64 = np.uint64(0xFFFFFFFFFFFFFFFF)


def mix64(x):
    # The splitmix64 finaliser, as src/io/fingerprint.cpp has it.
    with np.errstate(over="ignore"):
        x = x + np.uint64(0x9E3779B97F4A7C15)
        x = (x ^ (x >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
        x = (x ^ (x >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
        return x ^ (x >> np.uint64(31))


def hashed_uniform(seed, a, b):
    # io::hashed_uniform (src/io/generate_laplace.cpp), vectorized over a.
    with np.errstate(over="ignore"):
        s = mix64(np.uint64(seed) ^ np.uint64(0x5851F42D4C957F2D))
        h = mix64(s ^ mix64(a) * np.uint64(3) ^ mix64(np.uint64(b) + np.uint64(0x2545F4914F6CDD1D)))
    return (h >> np.uint64(11)).astype(np.float64) * 2.0**-53


def load(path):
    with h5py.File(path, "r") as f:
        g = f["matrix"]
        layout = g.attrs["layout"]
        layout = layout.decode() if isinstance(layout, bytes) else str(layout)
        n = int(g.attrs["rows"])
        sym = bool(int(g.attrs.get("symmetric", 0)))
        if layout == "dense":
            return np.asarray(g["values"][...], dtype=np.float64), n, sym
        a = sp.csr_matrix((g["values"][...], g["column_indices"][...], g["row_offsets"][...]), shape=(n, n))
        return a, n, sym


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("matrix")
    ap.add_argument("--pairs", type=int, required=True)
    ap.add_argument("--which", default="LM")
    ap.add_argument("--tol", type=float, default=1e-8)
    ap.add_argument("--out", required=True)
    o = ap.parse_args()
    a, n, sym = load(o.matrix)
    count = [0]

    def mv(x):
        count[0] += 1
        return a @ x

    op = sla.LinearOperator((n, n), matvec=mv, dtype=np.float64)
    v0 = hashed_uniform(1, np.arange(n, dtype=np.uint64), 1) - 0.5
    t0 = time.perf_counter()
    if sym:
        vals, vecs = sla.eigsh(op, k=o.pairs, which=o.which, tol=o.tol, v0=v0)
    else:
        vals, vecs = sla.eigs(op, k=o.pairs, which=o.which, tol=o.tol, v0=v0)
    seconds = time.perf_counter() - t0
    # Residuals and the same norm estimate Lodestone uses, sqrt(||A||_1 ||A||_inf).
    res = [float(np.linalg.norm(a @ vecs[:, j] - vals[j] * vecs[:, j]) / np.linalg.norm(vecs[:, j]))
           for j in range(vecs.shape[1])]
    absa = abs(a)
    norm1 = float(np.max(np.asarray(absa.sum(axis=0))))
    norminf = float(np.max(np.asarray(absa.sum(axis=1))))
    out = {"seconds": seconds, "matvecs": count[0], "eigenvalues_re": [float(v) for v in np.real(vals)],
           "eigenvalues_im": [float(v) for v in np.imag(vals)], "residuals": res,
           "norm_estimate": (norm1 * norminf) ** 0.5, "scipy": scipy.__version__,
           "routine": "eigsh" if sym else "eigs"}
    with open(o.out, "w") as f:
        json.dump(out, f)


main()
