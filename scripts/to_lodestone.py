"""Python side of Lodestone's files: matrices in, results out.

Writes a SciPy sparse matrix or a NumPy 2-D array in the Lodestone matrix file
layout (README "Matrix file layout", version 1) with h5py, reads a Lodestone
matrix file back into SciPy or NumPy, and reads a results file
(docs/results-file.md) into NumPy arrays. Also computes the matrix fingerprint
that `lodestone inspect --check` prints and results files record, so a result
can be matched to the matrix it came from without Lodestone.

Needs Debian's python3-numpy, python3-scipy and python3-h5py. Used by the
`scripts/to-lodestone` command, and importable:

    import sys; sys.path.insert(0, "/path/to/lodestone/scripts")
    import to_lodestone as tl
    tl.write_matrix("m.h5", a)            # a: any scipy.sparse matrix or 2-D numpy array
    r = tl.read_result("m-modes.h5")      # r.eigenvalues, r.vectors, r.residual_norms, ...

Every file is written under a temporary name in the target's directory, synced
and renamed into place, so a file under the final name is always complete; an
output that is one of the inputs is refused.
"""
import os
import tempfile
from dataclasses import dataclass, field

import numpy as np

FORMAT_VERSION = 1
DEFAULT_GROUP = "/matrix"
# Lodestone's own symmetry test on load: |a_ij - a_ji| <= tol * max|a| (README).
SYMMETRY_TOLERANCE = 1e-12


class LodestoneFileError(Exception):
    """A file that cannot be written or read as asked; the message says why."""


# ---------------------------------------------------------------- atomic writes


def _same_file(a, b):
    try:
        return os.path.samefile(a, b)
    except OSError:
        return False


def refuse_clobbering(output, inputs):
    """Raise if `output` is one of `inputs` (the same file, under any name)."""
    for i in inputs:
        if i is not None and os.path.exists(output) and _same_file(output, i):
            raise LodestoneFileError(f"{output}: refusing to overwrite the input {i}")


def atomic_write(path, write, inputs=()):
    """Call write(temp_path), then fsync and rename the temporary file to `path`.

    The temporary file lives in the same directory (so the rename is atomic)
    and is removed if `write` fails. `inputs` are files `path` must not be."""
    refuse_clobbering(path, inputs)
    directory = os.path.dirname(os.path.abspath(path))
    fd, temp = tempfile.mkstemp(dir=directory, prefix="." + os.path.basename(path) + ".", suffix=".tmp")
    os.close(fd)
    umask = os.umask(0)
    os.umask(umask)
    os.chmod(temp, 0o666 & ~umask)  # mkstemp makes it private; give it a normal file's mode
    try:
        write(temp)
        fd = os.open(temp, os.O_RDONLY)
        try:
            os.fsync(fd)
        finally:
            os.close(fd)
        os.replace(temp, path)
    except BaseException:
        try:
            os.unlink(temp)
        except OSError:
            pass
        raise
    try:  # make the rename itself durable
        dfd = os.open(directory, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)
    except OSError:
        pass


# ---------------------------------------------------------------- matrices


def _text(value):
    return value.decode() if isinstance(value, (bytes, np.bytes_)) else str(value)


def _check_values(values, what):
    if np.iscomplexobj(values):
        raise LodestoneFileError(f"{what}: complex entries; Lodestone works in real arithmetic")
    if not np.issubdtype(values.dtype, np.number) and values.dtype != np.bool_:
        raise LodestoneFileError(f"{what}: entries of type {values.dtype} are not numbers")
    if values.size and not np.all(np.isfinite(values)):
        raise LodestoneFileError(f"{what}: NaN or infinite entries; Lodestone refuses them")


def as_csr(a):
    """Any scipy.sparse matrix or array, or a 2-D numpy array, as float CSR with
    sorted column indices and duplicate entries summed."""
    import scipy.sparse as sp

    if sp.issparse(a):
        csr = sp.csr_matrix(a, copy=True)
    else:
        csr = sp.csr_matrix(np.asarray(a))
    csr.sum_duplicates()  # also sorts the column indices of every row
    csr.sort_indices()
    return csr


def is_symmetric(a, tolerance=0.0):
    """True when |a_ij - a_ji| <= tolerance * max|a| for all i, j (tolerance 0: exactly)."""
    import scipy.sparse as sp

    if a.shape[0] != a.shape[1]:
        return False
    if sp.issparse(a):
        a = as_csr(a)
        d = abs(a - a.T)
        worst = d.max() if d.nnz else 0.0
        scale = abs(a).max() if a.nnz else 0.0
    else:
        a = np.asarray(a)
        worst = np.max(np.abs(a - a.T)) if a.size else 0.0
        scale = np.max(np.abs(a)) if a.size else 0.0
    return bool(worst <= tolerance * scale)


def write_matrix(path, a, group=DEFAULT_GROUP, symmetric=None, layout=None, dtype=np.float64, inputs=()):
    """Write `a` to `path` (a new HDF5 file) in the Lodestone matrix layout.

    a          a scipy.sparse matrix/array of any format (written as CSR: sorted
               indices, duplicates summed), or a 2-D numpy array (written dense
               unless layout="csr").
    symmetric  None: work it out (1 only if a equals its transpose exactly);
               True: promise it, checked here with Lodestone's own tolerance;
               False: write 0 (Lodestone then treats the matrix as general).
    layout     None (from the input), "csr" or "dense".
    dtype      float64 (default) or float32 for the stored values.
    inputs     files `path` must not overwrite.
    Returns a dict describing what was written, with the matrix fingerprint.
    """
    import scipy.sparse as sp

    dtype = np.dtype(dtype)
    if dtype not in (np.dtype(np.float64), np.dtype(np.float32)):
        raise LodestoneFileError(f"{path}: values must be stored as float64 or float32, not {dtype}")
    sparse_input = sp.issparse(a)
    if not sparse_input:
        a = np.asarray(a)
        if a.ndim != 2:
            raise LodestoneFileError(f"{path}: a NumPy array of {a.ndim} dimension(s); a matrix needs 2")
    if layout is None:
        layout = "csr" if sparse_input else "dense"
    if layout not in ("csr", "dense"):
        raise LodestoneFileError(f"{path}: layout '{layout}'; expected 'csr' or 'dense'")
    rows, cols = a.shape
    if rows != cols:
        raise LodestoneFileError(f"{path}: the matrix is {rows} x {cols}; eigenpairs need a square matrix")
    if rows == 0:
        raise LodestoneFileError(f"{path}: the matrix is empty")

    if layout == "csr":
        m = as_csr(a)
        _check_values(m.data, path)
        values = m.data.astype(dtype)
    else:
        m = a.toarray() if sparse_input else a
        _check_values(m, path)
        values = np.ascontiguousarray(m, dtype=dtype)

    # Symmetry and the fingerprint are judged on the values as stored.
    stored = sp.csr_matrix((values.astype(np.float64), m.indices, m.indptr), shape=m.shape) if layout == "csr" \
        else values.astype(np.float64)
    if symmetric is None:
        symmetric = is_symmetric(stored)
    elif symmetric and not is_symmetric(stored, SYMMETRY_TOLERANCE):
        raise LodestoneFileError(f"{path}: the matrix was declared symmetric but is not "
                                 f"(|a_ij - a_ji| > {SYMMETRY_TOLERANCE:g} * max|a| somewhere)")
    symmetric = bool(symmetric)

    def write(temp):
        import h5py

        with h5py.File(temp, "w") as f:
            g = f.require_group(group)
            g.attrs["layout"] = layout
            g.attrs["rows"] = np.int64(rows)
            g.attrs["cols"] = np.int64(cols)
            g.attrs["symmetric"] = np.int64(1 if symmetric else 0)
            g.attrs["format_version"] = np.int64(FORMAT_VERSION)
            if layout == "csr":
                index = np.int32 if cols <= np.iinfo(np.int32).max else np.int64
                g.create_dataset("row_offsets", data=m.indptr.astype(np.int64))
                g.create_dataset("column_indices", data=m.indices.astype(index))
                g.create_dataset("values", data=values)
            else:
                g.create_dataset("values", data=values)

    atomic_write(path, write, inputs)
    nnz = int(m.nnz) if layout == "csr" else int(np.count_nonzero(values))
    return {"path": path, "group": group, "layout": layout, "rows": rows, "cols": cols, "nonzeros": nnz,
            "symmetric": symmetric, "fingerprint": fingerprint(stored)}


def read_matrix(path, group=DEFAULT_GROUP):
    """A Lodestone matrix file as scipy.sparse.csr_matrix (CSR layout) or a
    numpy array (dense layout). Checks the attributes and array lengths."""
    import h5py
    import scipy.sparse as sp

    with h5py.File(path, "r") as f:
        if group not in f:
            raise LodestoneFileError(f"{path}: no group '{group}'")
        g = f[group]
        for k in ("layout", "rows", "cols", "format_version"):
            if k not in g.attrs:
                raise LodestoneFileError(f"{path}: group '{group}' has no attribute '{k}'")
        if int(g.attrs["format_version"]) != FORMAT_VERSION:
            raise LodestoneFileError(f"{path}: format_version {int(g.attrs['format_version'])}; "
                                     f"this helper reads {FORMAT_VERSION}")
        layout = _text(g.attrs["layout"])
        rows, cols = int(g.attrs["rows"]), int(g.attrs["cols"])
        if layout == "csr":
            offsets = g["row_offsets"][...]
            columns = g["column_indices"][...]
            values = g["values"][...]
            if len(offsets) != rows + 1 or offsets[0] != 0 or offsets[-1] != len(columns) \
                    or len(columns) != len(values):
                raise LodestoneFileError(f"{path}: group '{group}': CSR arrays of inconsistent lengths")
            return sp.csr_matrix((values, columns, offsets), shape=(rows, cols))
        if layout == "dense":
            values = g["values"][...]
            if values.shape != (rows, cols):
                raise LodestoneFileError(f"{path}: group '{group}': values has shape {values.shape}, "
                                         f"expected ({rows}, {cols})")
            return values
        raise LodestoneFileError(f"{path}: group '{group}': layout '{layout}'; expected 'csr' or 'dense'")


def matrix_is_declared_symmetric(path, group=DEFAULT_GROUP):
    import h5py

    with h5py.File(path, "r") as f:
        return int(f[group].attrs.get("symmetric", 0)) == 1


def load_input(path, key=None):
    """A matrix from a file Python users have: .npz (scipy.sparse.save_npz, or
    numpy.savez holding one 2-D array, or the one named `key`), .npy (a 2-D
    array), or Matrix Market (.mtx, .mtx.gz)."""
    import scipy.io
    import scipy.sparse as sp

    lower = path.lower()
    if lower.endswith(".npz"):
        with np.load(path, allow_pickle=False) as z:
            names = list(z.files)
            if key is None and "format" in names and "shape" in names:
                return sp.load_npz(path)
            if key is None:
                if len(names) != 1:
                    raise LodestoneFileError(f"{path}: holds arrays {', '.join(names)}; name one with --key")
                key = names[0]
            if key not in names:
                raise LodestoneFileError(f"{path}: no array '{key}' (it holds {', '.join(names)})")
            return z[key]
    if lower.endswith(".npy"):
        return np.load(path, allow_pickle=False)
    if lower.endswith(".mtx") or lower.endswith(".mtx.gz"):
        return scipy.io.mmread(path)
    raise LodestoneFileError(f"{path}: unknown kind of file; expected .npz, .npy, .mtx or .mtx.gz")


# ---------------------------------------------------------------- fingerprint

_M64 = (1 << 64) - 1


def _mix64(x):
    """The splitmix64 finaliser on uint64 arrays (wrapping arithmetic), as in
    src/io/fingerprint.cpp."""
    x = x + np.uint64(0x9E3779B97F4A7C15)
    x = (x ^ (x >> np.uint64(30))) * np.uint64(0xBF58476D1CE4E5B9)
    x = (x ^ (x >> np.uint64(27))) * np.uint64(0x94D049BB133111EB)
    return x ^ (x >> np.uint64(31))


def fingerprint(a):
    """Lodestone's 64-bit matrix fingerprint (README "The fingerprint") of a
    scipy.sparse matrix or 2-D numpy array, as the 16 hexadecimal digits that
    `lodestone inspect --check` prints and results files store: the sum modulo
    2^64 of a hash of every nonzero (row, column, value), mixed with the size.
    Independent of storage order and of dense or CSR storage."""
    return f"{fingerprint_value(a):016x}"


def fingerprint_value(a):
    """The fingerprint as an unsigned 64-bit integer."""
    import scipy.sparse as sp

    rows, cols = a.shape
    coo = sp.coo_matrix(a)
    keep = coo.data != 0
    r = coo.row[keep].astype(np.uint64)
    c = coo.col[keep].astype(np.uint64)
    bits = np.ascontiguousarray(coo.data[keep], dtype=np.float64).view(np.uint64)
    with np.errstate(over="ignore"):
        h = _mix64((r * np.uint64(0x100000001B3)) ^ _mix64(c))
        terms = _mix64(h ^ _mix64(bits + np.uint64(0x632BE59BD9B4E019)))
        total = int(terms.sum(dtype=np.uint64)) & _M64 if terms.size else 0
        size = np.array([(rows * 31 + cols) & _M64], dtype=np.uint64)
        final = _mix64(np.array([total], dtype=np.uint64) ^ _mix64(size))
    return int(final[0])


# ---------------------------------------------------------------- results


@dataclass
class Result:
    """A Lodestone results file in NumPy arrays (docs/results-file.md).

    eigenvalues, eigenvalues_imag, residual_norms: [K]; vectors: [n, K] (None
    if not read); converged: the first `converged` pairs met the tolerance;
    facts: every root attribute (method, tolerance, norm_estimate, matvecs, ...);
    history: the /history datasets by name."""
    eigenvalues: np.ndarray
    eigenvalues_imag: np.ndarray
    residual_norms: np.ndarray
    vectors: object
    converged: int
    matrix_fingerprint: str
    facts: dict = field(default_factory=dict)
    history: dict = field(default_factory=dict)

    @property
    def limit(self):
        """The residual a converged pair meets: tolerance x norm_estimate."""
        return float(self.facts["tolerance"]) * float(self.facts["norm_estimate"])

    def complex_pairs(self):
        """(lambda, V): complex eigenvalues [K] and unit-norm complex vectors [n, K].
        A conjugate pair a +- ib in places j, j+1 stores x and y in columns j and
        j+1; its vectors are x + iy and x - iy."""
        lam = self.eigenvalues + 1j * self.eigenvalues_imag
        if self.vectors is None:
            return lam, None
        v = self.vectors.astype(np.complex128)
        j = 0
        k = len(lam)
        while j < k:
            if self.eigenvalues_imag[j] != 0 and j + 1 < k:
                x, y = self.vectors[:, j], self.vectors[:, j + 1]
                v[:, j] = x + 1j * y
                v[:, j + 1] = x - 1j * y
                j += 2
            else:
                j += 1
        return lam, v

    def arrays(self):
        """Everything as a flat dict of numpy arrays (for numpy.savez)."""
        out = {"eigenvalues": self.eigenvalues, "eigenvalues_imag": self.eigenvalues_imag,
               "residual_norms": self.residual_norms, "converged": np.int64(self.converged),
               "matrix_fingerprint": np.str_(self.matrix_fingerprint)}
        if self.vectors is not None:
            out["eigenvectors"] = self.vectors
        for k, v in self.facts.items():
            if k not in out:
                out[k] = np.asarray(v)
        for k, v in self.history.items():
            out["history_" + k] = v
        return out


def read_result(path, vectors=True):
    """A results file as a Result; vectors=False skips the [n, K] eigenvectors."""
    import h5py

    with h5py.File(path, "r") as f:
        if _text(f.attrs.get("file_kind", "")) != "result":
            raise LodestoneFileError(f"{path}: not a Lodestone results file (no file_kind = 'result' at the root)")
        if int(f.attrs["format_version"]) != 1:
            raise LodestoneFileError(f"{path}: results format_version {int(f.attrs['format_version'])}; "
                                     "this helper reads 1")
        facts = {}
        for k, v in f.attrs.items():
            facts[k] = _text(v) if isinstance(v, (bytes, str, np.bytes_)) else v.item() if hasattr(v, "item") else v
        history = {k: f["history"][k][...] for k in f["history"]} if "history" in f else {}
        return Result(eigenvalues=f["eigenvalues"][...], eigenvalues_imag=f["eigenvalues_imag"][...],
                      residual_norms=f["residual_norms"][...],
                      vectors=f["eigenvectors"][...] if vectors else None,
                      converged=int(f.attrs["converged"]), matrix_fingerprint=_text(f.attrs["matrix_fingerprint"]),
                      facts=facts, history=history)


def save_npz(path, arrays, inputs=()):
    """numpy.savez of `arrays` to `path`, atomically, never over an input."""
    if not path.endswith(".npz"):
        raise LodestoneFileError(f"{path}: the output name must end in .npz")

    def write(temp):
        with open(temp, "wb") as out:
            np.savez(out, **arrays)

    atomic_write(path, write, inputs)
