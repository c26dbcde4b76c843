#!/usr/bin/env bash
# lodestone import --group writes the matrix where asked; the summary it prints
# counts the stored entries after symmetric expansion; `inspect --check` reads it back.
set -euo pipefail
: "${LODESTONE:?}"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
run() { local p="$1"; shift; timeout 120 mpirun --allow-run-as-root --oversubscribe -n "$p" "$LODESTONE" "$@"; }

cat > "$tmp/sym.mtx" <<'MTX'
%%MatrixMarket matrix coordinate real symmetric
% 3 x 3, lower triangle: 2 diagonal entries and 2 below it
3 3 4
1 1 2.0
2 1 -1.0
3 2 -1.0
3 3 2.0
MTX
run 2 import "$tmp/sym.mtx" "$tmp/sym.h5" --group /graphs/first > "$tmp/out"
grep -qx 'kind        coordinate real symmetric' "$tmp/out" || { cat "$tmp/out"; echo "FAIL: kind line"; exit 1; }
grep -qx 'nonzeros    6 stored (4 entries in the file)' "$tmp/out" || { cat "$tmp/out"; echo "FAIL: nonzeros line"; exit 1; }
run 3 inspect --check --group /graphs/first "$tmp/sym.h5" > "$tmp/inspect"
grep -qx 'symmetric   yes' "$tmp/inspect" || { cat "$tmp/inspect"; echo "FAIL: symmetric flag"; exit 1; }
grep -qx 'nonzeros    6' "$tmp/inspect" || { cat "$tmp/inspect"; echo "FAIL: inspect nonzeros"; exit 1; }
# The default group is absent, so reading it fails with exit status 1.
rc=0
run 1 inspect --check "$tmp/sym.h5" > /dev/null 2>&1 || rc=$?
[ "$rc" -eq 1 ] || { echo "FAIL: default group should be missing (exit $rc)"; exit 1; }
# The output may not overwrite the input.
rc=0
run 2 import "$tmp/sym.mtx" "$tmp/sym.mtx" > /dev/null 2> "$tmp/err" || rc=$?
[ "$rc" -eq 1 ] && grep -q '^lodestone: error: .*overwrite an input' "$tmp/err" || { cat "$tmp/err"; echo "FAIL: overwrite"; exit 1; }
head -1 "$tmp/sym.mtx" | grep -q '^%%MatrixMarket' || { echo "FAIL: input damaged"; exit 1; }
# Group paths that one command could write and another not read ("" wrote at the root,
# /a/./b was created but not found again) are refused before the input is read, on
# every rank alike, for import and for the readers.
for g in "" "graphs" "/graphs/./first" "/graphs//first" "/graphs/"; do
  for cmd in import inspect; do
    rc=0
    if [ "$cmd" = import ]; then
      run 2 import "$tmp/sym.mtx" "$tmp/bad-group.h5" --group "$g" > /dev/null 2> "$tmp/err" || rc=$?
    else
      run 2 inspect "$tmp/sym.h5" --group "$g" > /dev/null 2> "$tmp/err" || rc=$?
    fi
    [ "$rc" -eq 2 ] && [ "$(grep -c '^lodestone: error: --group' "$tmp/err")" -eq 1 ] ||
      { cat "$tmp/err"; echo "FAIL: $cmd --group '$g': exit $rc, want 2 with one message"; exit 1; }
  done
  [ ! -e "$tmp/bad-group.h5" ] || { echo "FAIL: import --group '$g' wrote a file"; exit 1; }
done
echo "import_group_and_summary: ok"
