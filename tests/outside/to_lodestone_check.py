#!/usr/bin/python3
"""Reference side of the scripts/to-lodestone tests (tests/outside/to_lodestone_*.sh).

Builds matrices with SciPy and NumPy (Debian python3-scipy, python3-numpy),
checks files with h5py (Debian python3-h5py) and compares Lodestone's answers
with closed forms and with LAPACK through numpy.linalg. The helper under test
is imported from scripts/to_lodestone.py.

  to_lodestone_check.py inputs DIR              write the test inputs into DIR
  to_lodestone_check.py attrs FILE.h5 LAYOUT SYMMETRIC   the written file, read with plain h5py
  to_lodestone_check.py rod-eigenvalues RESULT.h5 N K    K largest of the 1-D Laplacian
  to_lodestone_check.py shear-eigenvalues RESULT.h5 DIR  the dense non-symmetric matrix
  to_lodestone_check.py read-back KIND FILE.h5 [params]  a `lodestone generate` file via the helper
  to_lodestone_check.py fingerprint FILE.h5     the helper's fingerprint of a Lodestone file
  to_lodestone_check.py residuals MATRIX_SOURCE RESULT.npz   ||Ax - lambda x|| in NumPy
"""
import os
import sys

import h5py
import numpy as np
import scipy.io
import scipy.sparse as sp

sys.path.insert(0, os.path.join(os.environ["LODESTONE_SOURCE"], "scripts"))
import to_lodestone as tl  # noqa: E402

ROD_N = 60


def rod_laplacian_coo(n):
    """tridiag(-1, 2, -1) as COO with every diagonal entry split into two
    duplicates (1 + 1) and the entries shuffled: the helper must sum and sort."""
    rng = np.random.default_rng(11)
    i = np.arange(n)
    rows = np.concatenate([i, i, i[:-1], i[1:]])
    cols = np.concatenate([i, i, i[1:], i[:-1]])
    vals = np.concatenate([np.ones(n), np.ones(n), -np.ones(n - 1), -np.ones(n - 1)])
    p = rng.permutation(len(rows))
    return sp.coo_matrix((vals[p], (rows[p], cols[p])), shape=(n, n))


def rod_eigenvalues(n):
    """Eigenvalues of tridiag(-1, 2, -1) of order n: 2 - 2 cos(k pi / (n + 1)),
    k = 1..n (closed form, common practice), largest first."""
    k = np.arange(n, 0, -1)
    return 2 - 2 * np.cos(k * np.pi / (n + 1))


def shear_matrix():
    """A dense non-symmetric matrix S D S^-1 with D = diag(3, 2.5, 2, 1, 0.9, ...):
    its eigenvalues are D's (similarity leaves them unchanged)."""
    n = 24
    rng = np.random.default_rng(3)
    d = np.concatenate([[3.0, 2.5, 2.0], np.linspace(1.0, 0.1, n - 3)])
    s = np.eye(n) + 0.2 * rng.standard_normal((n, n))
    return s @ np.diag(d) @ np.linalg.inv(s), d


def spiral_matrix():
    """A dense non-symmetric matrix whose dominant eigenvalues are the complex
    pair 2 e^{+-i pi/5}: S blockdiag(2 R(pi/5), diag(1, 0.95, ...)) S^-1, R a rotation."""
    n = 20
    rng = np.random.default_rng(8)
    t = np.pi / 5
    b = np.zeros((n, n))
    b[:2, :2] = 2 * np.array([[np.cos(t), -np.sin(t)], [np.sin(t), np.cos(t)]])
    b[2:, 2:] = np.diag(np.linspace(1.0, 0.1, n - 2))
    s = np.eye(n) + 0.15 * rng.standard_normal((n, n))
    return s @ b @ np.linalg.inv(s)


def inputs(d):
    a = rod_laplacian_coo(ROD_N)
    sp.save_npz(os.path.join(d, "rod.npz"), a, compressed=False)          # COO, duplicates kept
    scipy.io.mmwrite(os.path.join(d, "rod.mtx"), a.tocsr())                # Matrix Market (SciPy's writer)
    shear, _ = shear_matrix()
    np.save(os.path.join(d, "shear.npy"), shear)
    np.save(os.path.join(d, "cube.npy"), np.zeros((2, 2, 2)))
    np.save(os.path.join(d, "wide.npy"), np.ones((3, 4)))
    bad = np.eye(4)
    bad[1, 2] = np.nan
    np.save(os.path.join(d, "nan.npy"), bad)
    np.savez(os.path.join(d, "two.npz"), a=np.eye(3), b=np.eye(3))
    # The module API, not the command: a NumPy array as dense and as CSR, and a
    # SciPy matrix in another group with float32 values.
    tl.write_matrix(os.path.join(d, "api-shear-dense.h5"), shear)
    tl.write_matrix(os.path.join(d, "api-shear-csr.h5"), shear, layout="csr")
    tl.write_matrix(os.path.join(d, "api-rod32.h5"), a, group="/stiffness", dtype=np.float32)
    tl.write_matrix(os.path.join(d, "api-spiral.h5"), spiral_matrix())
    return 0


def attrs(path, layout, symmetric):
    """The file as plain h5py sees it: every attribute of the layout, the dataset
    types the README names, and for CSR sorted, duplicate-free rows."""
    problems = []
    with h5py.File(path, "r") as f:
        g = f["matrix"]
        got = g.attrs["layout"]
        got = got.decode() if isinstance(got, bytes) else got
        if got != layout:
            problems.append(f"layout {got!r}, expected {layout!r}")
        for k in ("rows", "cols", "format_version", "symmetric"):
            if k not in g.attrs or not np.issubdtype(np.asarray(g.attrs[k]).dtype, np.integer):
                problems.append(f"attribute {k} missing or not an integer")
        if int(g.attrs["format_version"]) != 1:
            problems.append("format_version is not 1")
        if int(g.attrs["symmetric"]) != int(symmetric):
            problems.append(f"symmetric is {int(g.attrs['symmetric'])}, expected {symmetric}")
        if layout == "csr":
            off, col = g["row_offsets"][...], g["column_indices"][...]
            if off.dtype != np.int64 or col.dtype not in (np.int32, np.int64):
                problems.append(f"index types {off.dtype}, {col.dtype}")
            for r in range(len(off) - 1):
                c = col[off[r]:off[r + 1]]
                if np.any(np.diff(c) <= 0):
                    problems.append(f"row {r}: column indices not strictly increasing")
                    break
    for p in problems:
        print(f"FAIL: {path}: {p}")
    return 1 if problems else 0


def read_eigenvalues(path):
    with h5py.File(path, "r") as f:
        return f["eigenvalues"][...], f["eigenvalues_imag"][...], float(f.attrs["tolerance"]) * float(
            f.attrs["norm_estimate"])


def rod_check(path, n, k):
    got, imag, limit = read_eigenvalues(path)
    want = rod_eigenvalues(n)[:k]
    # A residual r bounds the eigenvalue error of a symmetric matrix by r (and by
    # r^2 / gap); 10 x the limit is ample.
    ok = np.allclose(got, want, rtol=0, atol=10 * limit) and np.all(imag == 0)
    print(f"{'ok' if ok else 'FAIL'}: {path}: {got} vs closed form 2 - 2cos(k pi/(n+1)) {want}")
    return 0 if ok else 1


def shear_check(path, d):
    a = np.load(os.path.join(d, "shear.npy"))
    got, imag, limit = read_eigenvalues(path)
    _, closed = shear_matrix()
    lapack = np.sort(np.linalg.eigvals(a).real)[::-1][:len(got)]  # LAPACK dgeev through numpy.linalg
    want = closed[:len(got)]
    # Non-symmetric: the error is about residual x condition number; S is well conditioned.
    ok = np.allclose(got, want, atol=1e-5) and np.allclose(lapack, want, atol=1e-9) and np.all(imag == 0)
    print(f"{'ok' if ok else 'FAIL'}: {path}: {got} vs closed form {want} and numpy.linalg.eigvals {lapack}")
    return 0 if ok else 1


def laplace2d(nx, ny):
    """5-point Dirichlet Laplacian, row = i + nx*j, as the Kronecker sum
    kron(I_ny, T_nx) + kron(T_ny, I_nx) (common practice)."""
    def t(n):
        return sp.diags([-np.ones(n - 1), 2 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1])
    return sp.csr_matrix(sp.kron(sp.identity(ny), t(nx)) + sp.kron(t(ny), sp.identity(nx)))


def read_back(kind, path, params):
    m = tl.read_matrix(path)
    problems = []
    if kind == "laplace2d":
        nx, ny = int(params[0]), int(params[1])
        want = laplace2d(nx, ny)
        if not sp.issparse(m) or (m != want).nnz != 0 or m.nnz != want.nnz:
            problems.append("differs from SciPy's Kronecker-sum Laplacian")
    elif kind == "hypercube":
        dim = int(params[0])
        n = 1 << dim
        # Q_d: i ~ j when they differ in exactly one bit (the definition).
        rows = np.repeat(np.arange(n), dim)
        cols = (np.arange(n)[:, None] ^ (1 << np.arange(dim))[None, :]).ravel()
        want = sp.csr_matrix((np.ones(n * dim), (rows, cols)), shape=(n, n))
        if (m != want).nnz != 0:
            problems.append("differs from the hypercube adjacency built from bit flips")
    elif kind == "dense-spectrum":
        n = int(params[0])
        if not isinstance(m, np.ndarray) or m.shape != (n, n):
            problems.append("not read as a dense n x n array")
        else:
            # Linear spectrum n, n-1, ..., 1 by construction; LAPACK dsyevd via numpy.linalg.eigvalsh.
            ev = np.sort(np.linalg.eigvalsh(m))[::-1]
            if not np.allclose(ev, np.arange(n, 0, -1), atol=1e-10 * n):
                problems.append(f"eigenvalues {ev[:4]}... are not n..1")
    elif kind == "walk":
        damping = float(params[0])
        # Column-stochastic with (1 - d) + d * P_jj on the diagonal, P_jj >= 0.
        cols = np.asarray(m.sum(axis=0)).ravel()
        if not np.allclose(cols, 1.0, atol=1e-12):
            problems.append("columns do not sum to 1")
        if np.any(m.diagonal() < 1 - damping - 1e-12) or np.any(m.data < 0):
            problems.append("negative entries or a diagonal below 1 - d")
    else:
        problems.append(f"unknown kind {kind}")
    for p in problems:
        print(f"FAIL: {kind} {path}: {p}")
    if not problems:
        print(f"ok: {kind} {path} read back by to_lodestone.read_matrix")
    return 1 if problems else 0


def matrix_from(source):
    """A matrix to check results against, built independently of Lodestone's reader."""
    if source.startswith("rod:"):
        return rod_laplacian_coo(int(source[4:])).tocsr()
    if source == "spiral":
        return spiral_matrix()
    raise SystemExit(f"unknown matrix source {source}")


def residuals(source, npz):
    a = matrix_from(source)
    z = np.load(npz)
    lam = z["eigenvalues"] + 1j * z["eigenvalues_imag"]
    x = z["eigenvectors"].astype(np.complex128)
    k = len(lam)
    j = 0
    while j < k:  # conjugate pairs: columns j, j+1 hold x and y of x + iy (docs/results-file.md)
        if z["eigenvalues_imag"][j] != 0 and j + 1 < k:
            re, im = z["eigenvectors"][:, j], z["eigenvectors"][:, j + 1]
            x[:, j], x[:, j + 1] = re + 1j * im, re - 1j * im
            j += 2
        else:
            j += 1
    limit = float(z["tolerance"]) * float(z["norm_estimate"])
    n = a.shape[0]
    slack = 100 * np.sqrt(n) * np.finfo(float).eps * float(z["norm_estimate"])  # roundoff (common practice)
    fail = 0
    for j in range(int(z["converged"])):
        r = np.linalg.norm(a @ x[:, j] - lam[j] * x[:, j]) / np.linalg.norm(x[:, j])
        ok = r <= 1.01 * limit + slack
        fail |= not ok
        print(f"{'ok' if ok else 'FAIL'}: pair {j + 1}: lambda {lam[j]:.12g}, NumPy residual {r:.3e} "
              f"(stored {z['residual_norms'][j]:.3e}, limit {limit:.3e})")
    fp = tl.fingerprint(a)
    if str(z["matrix_fingerprint"]) != fp:
        print(f"FAIL: the result's fingerprint {z['matrix_fingerprint']} is not the matrix's {fp}")
        fail = 1
    if source == "spiral":
        # The dominant pair is 2 e^{+-i pi/5} by construction.
        want = 2 * np.exp(1j * np.pi / 5)
        if not (np.isclose(lam[0], want, atol=1e-6) and np.isclose(lam[1], np.conj(want), atol=1e-6)):
            print(f"FAIL: dominant pair {lam[:2]}, expected 2 e^(+-i pi/5) = {want:.12g} and its conjugate")
            fail = 1
    return 1 if fail else 0


def main(argv):
    cmd = argv[0] if argv else ""
    if cmd == "inputs":
        return inputs(argv[1])
    if cmd == "attrs":
        return attrs(argv[1], argv[2], int(argv[3]))
    if cmd == "rod-eigenvalues":
        return rod_check(argv[1], int(argv[2]), int(argv[3]))
    if cmd == "shear-eigenvalues":
        return shear_check(argv[1], argv[2])
    if cmd == "read-back":
        return read_back(argv[1], argv[2], argv[3:])
    if cmd == "fingerprint":
        print(tl.fingerprint(tl.read_matrix(argv[1], argv[2] if len(argv) > 2 else "/matrix")))
        return 0
    if cmd == "residuals":
        return residuals(argv[1], argv[2])
    print(__doc__, file=sys.stderr)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
