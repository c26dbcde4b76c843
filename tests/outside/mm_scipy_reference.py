"""Matrix Market import checked against SciPy (the reference reader).

  mm_scipy_reference.py write DIR     writes the test files DIR/*.mtx
  mm_scipy_reference.py compare DIR   for each DIR/NAME.mtx, compares DIR/NAME.h5
                                      (read with h5py) to scipy.io.mmread(NAME.mtx)

Reference: scipy.io.mmread from Debian's python3-scipy reads every file and
gives the expected matrix; our HDF5 output must hold exactly its entries, in
the documented CSR layout (sorted, unique columns per row, both triangles).
"""
import os
import sys

import h5py
import numpy as np
import scipy.io
import scipy.sparse

# The example file in the Matrix Market format specification (NIST, "The
# Matrix Market Exchange Formats: Initial Design"), recalled from memory.
SPEC_EXAMPLE = """%%MatrixMarket matrix coordinate real general
%=================================================================================
%
% This ASCII file represents a sparse MxN matrix with L
% nonzeros in the following Matrix Market format:
%
% +----------------------------------------------+
% |%%MatrixMarket matrix coordinate real general | <--- header line
% |%                                             | <--+
% |% comments                                    |    |-- 0 or more comment lines
% |%                                             | <--+
% |    M  N  L                                   | <--- rows, columns, entries
% |    I1  J1  A(I1, J1)                         | <--+
% |    I2  J2  A(I2, J2)                         |    |
% |    I3  J3  A(I3, J3)                         |    |-- L lines
% |     . . .                                    |    |
% |    IL JL  A(IL, JL)                          | <--+
% +----------------------------------------------+
%
% Indices are 1-based, i.e. A(1,1) is the first element.
%
%=================================================================================
  5  5  8
    1     1   1.000e+00
    2     2   1.050e+01
    3     3   1.500e-02
    1     4   6.000e+00
    4     2   2.505e+02
    4     4  -2.800e+02
    4     5   3.332e+01
    5     5   1.200e+01
"""

HAND_WRITTEN = {
    "symmetric": "%%MatrixMarket matrix coordinate real symmetric\n4 4 6\n1 1 4\n2 1 -1\n2 2 4\n"
                 "% comment between entries\n4 2 -1.5e-1\n3 3 4\n4 4 4\n",
    "skew": "%%MatrixMarket matrix coordinate real skew-symmetric\n3 3 3\n2 1 1.5\n3 1 -2\n3 2 0.25\n",
    "pattern": "%%MatrixMarket matrix coordinate pattern general\n4 4 5\n1 2\n2 3\n3 4\n4 1\n2 2\n",
    "integer_duplicates": "%%MatrixMarket matrix coordinate integer general\n3 3 5\n1 1 2\n1 1 3\n"
                          "3 2 -7\n3 2 7\n2 3 9\n",
    "array_general": "%%MatrixMarket matrix array real general\n% column-major\n3 3\n1\n2\n3\n0\n5\n6\n7\n8\n9.5\n",
    "array_symmetric": "%%MatrixMarket matrix array real symmetric\n3 3\n1\n2\n3\n4\n5\n6\n",
    "array_skew": "%%MatrixMarket matrix array integer skew-symmetric\n3 3\n1\n2\n3\n",
}


def write(directory):
    with open(os.path.join(directory, "spec_example.mtx"), "w") as f:
        f.write(SPEC_EXAMPLE)
    for name, text in HAND_WRITTEN.items():
        with open(os.path.join(directory, name + ".mtx"), "w") as f:
            f.write(text)
    # Larger files written by SciPy itself, from a fixed seed.
    rng = np.random.default_rng(20240611)
    a = scipy.sparse.random(60, 60, density=0.08, random_state=rng, format="coo")
    scipy.io.mmwrite(os.path.join(directory, "scipy_general.mtx"), a)
    s = a + a.T
    scipy.io.mmwrite(os.path.join(directory, "scipy_symmetric.mtx"), s, symmetry="symmetric")
    d = rng.standard_normal((12, 12))
    scipy.io.mmwrite(os.path.join(directory, "scipy_array_symmetric.mtx"), d + d.T, symmetry="symmetric")


def compare(directory):
    names = sorted(f[:-4] for f in os.listdir(directory) if f.endswith(".mtx"))
    failures = 0
    for name in names:
        want = scipy.io.mmread(os.path.join(directory, name + ".mtx"))
        want = want.toarray() if scipy.sparse.issparse(want) else np.asarray(want)
        with h5py.File(os.path.join(directory, name + ".h5"), "r") as f:
            g = f["matrix"]
            n = int(g.attrs["rows"])
            off = g["row_offsets"][...]
            col = g["column_indices"][...]
            val = g["values"][...]
            declared = int(g.attrs.get("symmetric", 0))
        problems = []
        if want.shape != (n, n):
            problems.append(f"shape {want.shape} vs rows {n}")
        if off[0] != 0 or off[-1] != len(col) or np.any(np.diff(off) < 0):
            problems.append("row_offsets malformed")
        for i in range(n):
            c = col[off[i]:off[i + 1]]
            if np.any(np.diff(c) <= 0):
                problems.append(f"row {i}: columns not sorted and unique")
        got = scipy.sparse.csr_matrix((val, col, off), shape=(n, n)).toarray()
        if not problems and not np.array_equal(got, want):
            problems.append(f"entries differ; max |diff| {np.max(np.abs(got - want))}")
        header = open(os.path.join(directory, name + ".mtx")).readline().split()
        if declared != (1 if header[4].lower() == "symmetric" else 0):
            problems.append(f"symmetric attribute {declared} for symmetry {header[4]}")
        status = "ok" if not problems else "FAIL: " + "; ".join(problems)
        print(f"{name}: {status}")
        failures += bool(problems)
    if not names:
        print("no files compared")
        return 1
    return 1 if failures else 0


if __name__ == "__main__":
    if sys.argv[1] == "write":
        write(sys.argv[2])
        sys.exit(0)
    sys.exit(compare(sys.argv[2]))
