#!/usr/bin/env bash
# Outside-world check: a file written by Lodestone (in parallel, 3 ranks) is read
# correctly by h5py (Debian python3-h5py) — entries equal to the 5-point
# Laplacian built with SciPy (scipy.sparse) — and by h5dump (Debian hdf5-tools),
# whose text output we parse for the group attributes and the row offsets.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
ref="$LODESTONE_SOURCE/tests/outside/reference.py"
fail=0
same() {  # what got want
  if [ -n "$2" ] && [ "$2" = "$3" ]; then echo "ok: $1 ($2)"; else echo "FAIL: $1: '$2', expected '$3'"; fail=1; fi
}

nx=9 ny=6 n=54
f="$work/plate.h5"
run "3" "$LODESTONE" generate laplace2d --nx $nx --ny $ny "$f" >/dev/null

# h5py + SciPy.
"$PY" "$ref" check-laplace2d "$f" $nx $ny || fail=1

# h5dump: one attribute at a time; the value is the line after "DATA {".
attr() {
  timeout 60 h5dump -a "/matrix/$1" "$f" | awk '/DATA \{/ {getline; sub(/^ *\(0\): */, ""); gsub(/"/, ""); print; exit}'
}
same "h5dump: layout" "$(attr layout)" "csr"
same "h5dump: rows" "$(attr rows)" "$n"
same "h5dump: cols" "$(attr cols)" "$n"
same "h5dump: format_version" "$(attr format_version)" "1"
same "h5dump: symmetric" "$(attr symmetric)" "1"
same "h5dump: rows is a 64-bit integer" \
  "$(timeout 60 h5dump -a /matrix/rows "$f" | awk '/DATATYPE/ {print $2; exit}')" "H5T_STD_I64LE"
# Row offsets, printed without indices (-y) on one line (-w 0), against SciPy's row pointer.
offsets="$(timeout 60 h5dump -y -w 0 -d /matrix/row_offsets "$f" | awk '/DATA \{/ {getline; gsub(/^ +| +$/, ""); print; exit}')"
same "h5dump: row_offsets equal SciPy's row pointer" "$offsets" "$("$PY" "$ref" row-offsets $nx $ny)"
exit $fail
