#!/usr/bin/env python3
"""Validation catalogue for `lodestone inspect --check`.

Each case writes one small matrix file at test time (with h5py, Debian
python3-h5py; no binary files are committed) and states what `lodestone inspect
--check` must do with it: refuse it with exit status 1 and exactly one
`lodestone: error:` line on stderr that names the file and the defect, or
accept it and print the fingerprint of the entries the file holds.

  catalogue.py list [--index-bits 32|64]   case names and their rank counts, for CMake
  catalogue.py run CASE RANKS              write the file, run lodestone, check (needs $LODESTONE)
  catalogue.py write CASE PATH             only write the file (for looking at it by hand)
"""
import os
import re
import shutil
import struct
import subprocess
import sys
import tempfile

import h5py
import numpy as np
import scipy.sparse as sp

DROP = object()  # an attribute or dataset value meaning "leave it out"
CASES = {}


class Case:
    def __init__(self, name, write, expect=(), args=(), ok=False, ranks=(1, 3), bits=None, matrix=None):
        self.name, self.write, self.expect, self.args = name, write, list(expect), list(args)
        self.ok, self.ranks, self.bits, self.matrix = ok, ranks, bits, matrix


def case(name, *expect, args=(), ranks=(1, 3), bits=None):
    """A file lodestone must refuse; `expect` are regexes the error line must match."""
    def register(fn):
        CASES[name] = Case(name, fn, expect, args, ranks=ranks, bits=bits)
        return fn
    return register


def valid(name, matrix, args=(), ranks=(1, 3)):
    """A file lodestone must accept; `matrix` is the scipy matrix it holds."""
    def register(fn):
        CASES[name] = Case(name, fn, args=args, ok=True, ranks=ranks, matrix=matrix)
        return fn
    return register


# ----------------------------------------------------------------------------
# Writers of the documented layout (README "Matrix file layout", version 1).

def tridiagonal(n=9):
    """The (-1, 2, -1) matrix: symmetric, 3n-2 entries; defects go into row 6."""
    return sp.diags([-np.ones(n - 1), 2 * np.ones(n), -np.ones(n - 1)], [-1, 0, 1], format="csr")


def put_attrs(g, attrs):
    for key, value in attrs.items():
        if value is not DROP:
            g.attrs[key] = value


def csr_file(path, a=None, attrs=None, data=None, group="matrix"):
    a = sp.csr_matrix(tridiagonal() if a is None else a)
    a.sort_indices()
    base_attrs = {"format_version": 1, "layout": "csr", "rows": a.shape[0], "cols": a.shape[1], "symmetric": 0}
    base_attrs.update(attrs or {})
    base_data = {"row_offsets": a.indptr.astype(np.int64), "column_indices": a.indices.astype(np.int64),
                 "values": a.data.astype(np.float64)}
    base_data.update(data or {})
    with h5py.File(path, "w") as f:
        g = f.create_group(group)
        put_attrs(g, base_attrs)
        for key, value in base_data.items():
            if value is not DROP:
                g.create_dataset(key, data=value)


def dense_file(path, a, attrs=None, values=None):
    a = np.asarray(a.todense() if sp.issparse(a) else a, dtype=np.float64)
    base_attrs = {"format_version": 1, "layout": "dense", "rows": a.shape[0], "cols": a.shape[1], "symmetric": 0}
    base_attrs.update(attrs or {})
    with h5py.File(path, "w") as f:
        g = f.create_group("matrix")
        put_attrs(g, base_attrs)
        v = a if values is None else values
        if v is not DROP:
            g.create_dataset("values", data=v)


def row6(a, k):
    """Index into a.data / a.indices of the k-th stored entry of row 6."""
    return a.indptr[6] + k


# ----------------------------------------------------------------------------
# The path itself.

@case("not_a_file", r"no such file")
def _(path):
    pass  # nothing is written


@case("directory", r"not a regular file")
def _(path):
    os.mkdir(path)


@case("not_hdf5", r"not an HDF5 file")
def _(path):
    with open(path, "w") as f:
        f.write("%%MatrixMarket matrix coordinate real general\n2 2 1\n1 1 1.0\n")


@case("empty_file", r"not an HDF5 file")
def _(path):
    open(path, "w").close()


@case("truncated_hdf5", r"(truncated|damaged)")
def _(path):
    csr_file(path, sp.random(40, 40, density=0.5, random_state=1, format="csr"))
    size = os.path.getsize(path)
    with open(path, "r+b") as f:
        f.truncate(size // 2)


# ----------------------------------------------------------------------------
# The group and its attributes.

@case("missing_group", r"no group '/matrix'")
def _(path):
    csr_file(path, group="elsewhere")


@case("wrong_group_option", r"no group '/nowhere'", args=["--group", "/nowhere"])
def _(path):
    csr_file(path)


@case("group_is_a_dataset", r"'/matrix/values' is not a group", args=["--group", "/matrix/values"])
def _(path):
    csr_file(path)


for _attr in ("layout", "rows", "cols", "format_version"):
    case(f"missing_{_attr}", rf"missing attribute '{_attr}'")(
        lambda path, _attr=_attr: csr_file(path, attrs={_attr: DROP}))

case("layout_not_a_string", r"attribute 'layout' must be a string")(lambda path: csr_file(path, attrs={"layout": 1}))
case("rows_not_an_integer", r"attribute 'rows' must be an integer")(lambda path: csr_file(path, attrs={"rows": 9.0}))
case("cols_not_an_integer", r"attribute 'cols' must be an integer")(lambda path: csr_file(path, attrs={"cols": "9"}))
case("format_version_not_an_integer", r"attribute 'format_version' must be an integer")(
    lambda path: csr_file(path, attrs={"format_version": "1"}))
case("rows_not_a_single_value", r"attribute 'rows' must be a single value")(
    lambda path: csr_file(path, attrs={"rows": np.array([9, 9])}))
case("symmetric_not_an_integer", r"attribute 'symmetric' must be an integer")(
    lambda path: csr_file(path, attrs={"symmetric": 1.0}))
case("symmetric_is_2", r"symmetric is 2; expected 0 or 1")(lambda path: csr_file(path, attrs={"symmetric": 2}))
case("symmetric_bool", r"attribute 'symmetric' must be an integer")(  # h5py stores numpy bools as an HDF5 enum
    lambda path: csr_file(path, attrs={"symmetric": np.bool_(True)}))
case("unknown_layout", r"layout is 'coo'")(lambda path: csr_file(path, attrs={"layout": "coo"}))
case("format_version_2", r"format_version is 2")(lambda path: csr_file(path, attrs={"format_version": 2}))
case("zero_rows", r"must be positive.*rows=0")(lambda path: csr_file(path, attrs={"rows": 0, "cols": 0}))
case("negative_rows", r"must be positive.*rows=-9")(lambda path: csr_file(path, attrs={"rows": -9, "cols": -9}))
case("non_square", r"9 x 10.*square")(lambda path: csr_file(path, attrs={"cols": 10}))


@case("rows_beyond_index_width", r"2147483648 rows exceed this build's index range", bits=32)
def _(path):
    # 2^31 rows: one more than a 32-bit PetscInt holds. The datasets are tiny;
    # the header alone must be refused, before anything is allocated.
    csr_file(path, attrs={"rows": 2**31, "cols": 2**31})


@case("absurd_nonzero_count", r"column_indices.*1000000000000000000 entries.*4 x 4")
def _(path):
    # A 4 x 4 matrix whose arrays claim 10^18 entries. Chunked datasets that were
    # never written take no space in the file; a reader that believed the header
    # would try to allocate or read 8 EB.
    huge = 10**18
    with h5py.File(path, "w") as f:
        g = f.create_group("matrix")
        put_attrs(g, {"format_version": 1, "layout": "csr", "rows": 4, "cols": 4})
        g.create_dataset("row_offsets", data=np.array([0, 1, 2, 3, huge], dtype=np.int64))
        g.create_dataset("column_indices", shape=(huge,), dtype=np.int64, chunks=(1024,))
        g.create_dataset("values", shape=(huge,), dtype=np.float64, chunks=(1024,))


# ----------------------------------------------------------------------------
# CSR datasets.

for _ds in ("row_offsets", "column_indices", "values"):
    case(f"missing_{_ds}", rf"missing dataset '{_ds}'")(lambda path, _ds=_ds: csr_file(path, data={_ds: DROP}))

_A = tridiagonal()


def _offsets(change):
    o = _A.indptr.astype(np.int64).copy()
    change(o)
    return o


case("row_offsets_wrong_length", r"row_offsets.*has length 9, expected rows\+1 = 10")(
    lambda path: csr_file(path, data={"row_offsets": _A.indptr[:-1].astype(np.int64)}))
case("row_offsets_not_starting_at_0", r"row_offsets.*starts at 1")(
    lambda path: csr_file(path, data={"row_offsets": _offsets(lambda o: o.__setitem__(0, 1))}))
case("row_offsets_decreasing", r"row_offsets.*decreases at row 6")(
    lambda path: csr_file(path, data={"row_offsets": _offsets(lambda o: o.__setitem__(7, o[6] - 1))}))
case("row_offsets_wrong_end", r"row_offsets.*ends at 24.*25 entries")(
    lambda path: csr_file(path, data={"row_offsets": _offsets(lambda o: o.__setitem__(9, 24))}))
case("row_offsets_beyond_nnz", r"row_offsets.*entry 6 is 99, outside \[0, nnz = 25\]")(
    lambda path: csr_file(path, data={"row_offsets": _offsets(lambda o: o.__setitem__(6, 99))}))
case("row_offsets_float", r"row_offsets.*must hold integers")(
    lambda path: csr_file(path, data={"row_offsets": _A.indptr.astype(np.float64)}))
case("row_offsets_two_dimensional", r"row_offsets.*one-dimensional")(
    lambda path: csr_file(path, data={"row_offsets": np.zeros((10, 2), dtype=np.int64)}))


def _columns(k, value):
    c = _A.indices.astype(np.int64).copy()
    c[row6(_A, k)] = value
    return c


case("column_indices_float", r"column_indices.*must hold integers")(
    lambda path: csr_file(path, data={"column_indices": _A.indices.astype(np.float64)}))
case("column_negative", r"column_indices.*column -1 out of range \[0, 9\) in row 6")(
    lambda path: csr_file(path, data={"column_indices": _columns(0, -1)}))
case("column_too_large", r"column_indices.*column 9 out of range \[0, 9\) in row 6")(
    lambda path: csr_file(path, data={"column_indices": _columns(2, 9)}))
case("column_duplicate", r"column_indices.*duplicate column 6 in row 6")(
    lambda path: csr_file(path, data={"column_indices": _columns(2, 6)}))
case("column_unsorted", r"column_indices.*not sorted in row 6")(
    lambda path: csr_file(path, data={"column_indices": _columns(1, 4)}))


def _values(k, value):
    v = _A.data.astype(np.float64).copy()
    v[row6(_A, k)] = value
    return v


case("values_nan", r"values.*NaN in row 6, column 6")(lambda path: csr_file(path, data={"values": _values(1, np.nan)}))
case("values_inf", r"values.*infinity in row 6, column 7")(
    lambda path: csr_file(path, data={"values": _values(2, -np.inf)}))
case("values_wrong_length", r"values.*has length 24, but column_indices has length 25")(
    lambda path: csr_file(path, data={"values": _A.data[:-1].astype(np.float64)}))
case("values_integer", r"values.*must hold floating-point")(
    lambda path: csr_file(path, data={"values": _A.data.astype(np.int64)}))
case("values_complex", r"values.*must hold floating-point")(
    lambda path: csr_file(path, data={"values": _A.data.astype(np.complex128)}))


@case("values_damaged_chunk", r"dataset '/matrix/values'.*could not read")
def _(path):
    # gzip-compressed values whose stored chunk is overwritten with junk: the
    # file opens, the shapes are right, and only reading the data fails.
    csr_file(path, _random(30, 0.5, 3), data={"values": DROP})
    a = _random(30, 0.5, 3)
    a.sort_indices()
    with h5py.File(path, "a") as f:
        d = f["matrix"].create_dataset("values", data=a.data, chunks=(a.nnz,), compression="gzip")
        info = d.id.get_chunk_info(0)
    with open(path, "r+b") as f:
        f.seek(info.byte_offset)
        f.write(b"\xff" * info.size)


@case("absurd_dense_size", r"loading needs about .* per rank")
def _(path):
    # A 2^30 x 2^30 dense matrix (8 EiB) whose values were never written: a
    # chunked dataset takes no space in the file until written.
    with h5py.File(path, "w") as f:
        g = f.create_group("matrix")
        put_attrs(g, {"format_version": 1, "layout": "dense", "rows": 2**30, "cols": 2**30})
        g.create_dataset("values", shape=(2**30, 2**30), dtype=np.float64, chunks=(64, 64))


# ----------------------------------------------------------------------------
# Dense datasets.

case("dense_missing_values", r"missing dataset 'values'")(lambda path: dense_file(path, _A, values=DROP))
case("dense_wrong_shape", r"values.*has shape \[9 x 8\], expected \[9 x 9\]")(
    lambda path: dense_file(path, _A, values=np.zeros((9, 8))))
case("dense_one_dimensional", r"values.*has shape \[81\], expected \[9 x 9\]")(
    lambda path: dense_file(path, _A, values=np.zeros(81)))
case("dense_integer", r"values.*must hold floating-point")(
    lambda path: dense_file(path, _A, values=np.zeros((9, 9), dtype=np.int32)))


@case("dense_nan", r"values.*NaN in row 6, column 3")
def _(path):
    v = _A.toarray()
    v[6, 3] = np.nan
    dense_file(path, _A, values=v)


# ----------------------------------------------------------------------------
# Declared symmetric, but not. The same files load with a looser tolerance:
# one entry pair differs by 0.5 and max|a| = 2, so 0.3 x 2 = 0.6 accepts it.

def _unsymmetric():
    a = tridiagonal().tolil()
    a[6, 7] = -1.5
    return a.tocsr()


case("csr_not_symmetric", r"declared symmetric but is not.*row 6")(
    lambda path: csr_file(path, _unsymmetric(), attrs={"symmetric": 1}))
case("dense_not_symmetric", r"declared symmetric but is not.*row 6")(
    lambda path: dense_file(path, _unsymmetric(), attrs={"symmetric": 1}))
valid("csr_not_symmetric_loose_tolerance", _unsymmetric(), args=["--symmetry-tolerance", "0.3"])(
    lambda path: csr_file(path, _unsymmetric(), attrs={"symmetric": 1}))
valid("dense_not_symmetric_loose_tolerance", _unsymmetric(), args=["--symmetry-tolerance", "0.3"])(
    lambda path: dense_file(path, _unsymmetric(), attrs={"symmetric": 1}))


# ----------------------------------------------------------------------------
# Valid edge cases.

def _random(n, density, seed, dtype=np.float64):
    return sp.random(n, n, density=density, random_state=seed, format="csr", dtype=dtype)


_ONE = sp.csr_matrix(np.array([[3.5]]))
_EMPTY_ROWS = sp.csr_matrix(np.array([[0, 0, 0, 0, 0, 0], [1, 0, 2, 0, 0, 0], [0, 0, 0, 0, 0, 0],
                                      [0, 0, 0, 3, 0, -4], [0, 5, 0, 0, 0, 0], [0, 0, 0, 0, 0, 0]], dtype=float))
_ZERO = sp.csr_matrix((5, 5))
_R = _random(12, 0.3, 7)
_R32 = _random(12, 0.3, 8, np.float32)
_TWO = sp.csr_matrix(np.array([[2.0, -1.0], [-1.0, 2.0]]))
_DENSE = _random(7, 0.8, 9)

valid("ok_1x1", _ONE)(lambda path: csr_file(path, _ONE, attrs={"symmetric": 1}))
valid("ok_1x1_dense", _ONE)(lambda path: dense_file(path, _ONE, attrs={"symmetric": 1}))
valid("ok_empty_rows", _EMPTY_ROWS)(lambda path: csr_file(path, _EMPTY_ROWS))
valid("ok_all_zero", _ZERO)(lambda path: csr_file(path, _ZERO, attrs={"symmetric": 1}))
valid("ok_int32_columns", _R)(lambda path: csr_file(path, _R, data={"column_indices": _R.indices.astype(np.int32)}))
valid("ok_int64_columns", _R)(lambda path: csr_file(path, _R, data={"column_indices": _R.indices.astype(np.int64)}))
valid("ok_float32_values", _R32)(lambda path: csr_file(path, _R32, data={"values": _R32.data}))
valid("ok_dense", _DENSE)(lambda path: dense_file(path, _DENSE))
valid("ok_dense_float32", _R32)(lambda path: dense_file(path, _R32, values=_R32.toarray()))
valid("ok_no_symmetric_attribute", _R)(lambda path: csr_file(path, _R, attrs={"symmetric": DROP}))
valid("ok_more_ranks_than_rows", _TWO, ranks=(3, 4))(lambda path: csr_file(path, _TWO, attrs={"symmetric": 1}))


@valid("ok_compressed", _R)
def _(path):
    # gzip-compressed chunked datasets, as h5py users often write them.
    csr_file(path, _R, data={"row_offsets": DROP, "column_indices": DROP, "values": DROP})
    with h5py.File(path, "a") as f:
        g = f["matrix"]
        for key, value in (("row_offsets", _R.indptr.astype(np.int64)), ("column_indices", _R.indices.astype(np.int32)),
                           ("values", _R.data)):
            g.create_dataset(key, data=value, chunks=(8,), compression="gzip")


@valid("ok_variable_length_strings", _R)
def _(path):
    csr_file(path, _R, attrs={"layout": "csr"})  # h5py stores a Python str as a variable-length UTF-8 string
    with h5py.File(path, "r") as f:
        assert h5py.check_string_dtype(f["matrix"].attrs.get_id("layout").dtype).length is None


@valid("ok_fixed_length_strings", _R)
def _(path):
    csr_file(path, _R, attrs={"layout": np.bytes_(b"csr")})  # numpy bytes: a fixed-length ASCII string
    with h5py.File(path, "r") as f:
        assert h5py.check_string_dtype(f["matrix"].attrs.get_id("layout").dtype).length == 3


# ----------------------------------------------------------------------------
# The fingerprint, recomputed here from the entries scipy holds, so a valid file
# is checked entry by entry (src/io/fingerprint.hpp: splitmix64 of each
# nonzero (row, column, value), summed mod 2^64, size mixed in at the end).

M64 = (1 << 64) - 1


def mix64(x):
    x = (x + 0x9E3779B97F4A7C15) & M64
    x = ((x ^ (x >> 30)) * 0xBF58476D1CE4E5B9) & M64
    x = ((x ^ (x >> 27)) * 0x94D049BB133111EB) & M64
    return x ^ (x >> 31)


def fingerprint(a):
    a = sp.coo_matrix(a)
    total = 0
    for r, c, v in zip(a.row.tolist(), a.col.tolist(), a.data.astype(np.float64).tolist()):
        if v == 0.0:
            continue
        bits = struct.unpack("<Q", struct.pack("<d", v))[0]
        h = mix64(((r * 0x100000001B3) & M64) ^ mix64(c))
        total = (total + mix64(h ^ mix64((bits + 0x632BE59BD9B4E019) & M64))) & M64
    rows, cols = a.shape
    return mix64(total ^ mix64((rows * 31 + cols) & M64))


# ----------------------------------------------------------------------------

STACK_DUMP = re.compile(r"PETSC ERROR|HDF5-DIAG|Traceback|terminate called|[Bb]acktrace|MPI_ABORT|Signal:|"
                        r"Segmentation|core dumped|what\(\):")


def run(name, ranks):
    c = CASES[name]
    lodestone = os.environ["LODESTONE"]
    base = os.environ.get("LODESTONE_TEST_TMP")
    if base:
        os.makedirs(base, exist_ok=True)
    tmp = tempfile.mkdtemp(prefix=f"validation-{name}-", dir=base)
    failures = []
    try:
        path = os.path.join(tmp, f"{name}.h5")
        c.write(path)
        cmd = ["timeout", "60", "mpirun", "--allow-run-as-root", "--oversubscribe", "-n", str(ranks), lodestone,
               "inspect", "--check", *c.args, path]
        p = subprocess.run(cmd, capture_output=True, text=True, timeout=120, stdin=subprocess.DEVNULL)
        errors = [line for line in p.stderr.splitlines() if line.startswith("lodestone: error:")]

        def check(cond, what):
            if not cond:
                failures.append(what)

        if p.returncode == 124:
            failures.append("timed out after 60 s (a hang)")
        check(not STACK_DUMP.search(p.stderr + p.stdout), "a stack dump or abort message was printed")
        if c.ok:
            check(p.returncode == 0, f"exit status {p.returncode}, expected 0")
            check(not errors, "an error line was printed for a valid file")
            m = re.search(r"^fingerprint\s+([0-9a-f]{16})$", p.stdout, re.M)
            want = f"{fingerprint(c.matrix):016x}"
            check(m is not None and m.group(1) == want,
                  f"fingerprint {m.group(1) if m else '(none)'}, expected {want} from the entries scipy holds")
            n = c.matrix.shape[0]
            check(re.search(rf"^size\s+{n} x {n}$", p.stdout, re.M) is not None, f"size line is not {n} x {n}")
        else:
            check(p.returncode == 1, f"exit status {p.returncode}, expected 1")
            check(len(errors) == 1, f"{len(errors)} 'lodestone: error:' lines on stderr, expected exactly 1")
            if errors:
                line = errors[0]
                check(path in line, "the error line does not name the file")
                for pattern in c.expect:
                    check(re.search(pattern, line) is not None, f"the error line does not match /{pattern}/")
            check(not p.stdout.strip(), "something was printed on stdout for a refused file")
        status = "FAIL" if failures else "ok"
        print(f"{status}: {name} at {ranks} rank(s): {' '.join(cmd[6:])}")
        print("--- stdout\n" + p.stdout + "--- stderr\n" + p.stderr + "---")
        for f in failures:
            print(f"  failed: {f}")
        return 1 if failures else 0
    finally:
        shutil.rmtree(tmp, ignore_errors=True)


def main(argv):
    if len(argv) >= 1 and argv[0] == "list":
        bits = int(argv[2]) if len(argv) >= 3 and argv[1] == "--index-bits" else 32
        for c in CASES.values():
            if c.bits is None or c.bits == bits:
                print(c.name + ":" + ",".join(str(r) for r in c.ranks))
        return 0
    if len(argv) == 3 and argv[0] == "run":
        return run(argv[1], int(argv[2]))
    if len(argv) == 3 and argv[0] == "write":
        CASES[argv[1]].write(argv[2])
        return 0
    print(__doc__, file=sys.stderr)
    return 2


if __name__ == "__main__":
    sys.exit(main(sys.argv[1:]))
