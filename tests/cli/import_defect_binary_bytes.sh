#!/usr/bin/env bash
# lodestone import quotes file bytes safely: a NUL or control byte in a value is
# shown as \xHH (the message is not cut, nothing raw reaches the terminal), and
# a gzip-compressed file is named as such. Exit 1 and one line, at 1 and 3 ranks
# (the compressed file at 3).
set -euo pipefail
source "$(dirname "${BASH_SOURCE[0]}")/import_defect.bash"
expect_defect 3 "value '1\\x00\\x1b[2J' is not a number" < <(
  printf '%%%%MatrixMarket matrix coordinate real general\n1 1 1\n1 1 1\0\033[2J\n')
# Nothing but printable text on stderr (of the last run, at 3 ranks).
LC_ALL=C tr -d '[:print:]\n' <"$defect_tmp/stderr" >"$defect_tmp/raw"
[ ! -s "$defect_tmp/raw" ] || { echo "FAIL: raw bytes on stderr:"; od -c "$defect_tmp/raw" | head; exit 1; }

# A gzip file, by its first bytes (rank 0 reads them; 3 ranks agree on the refusal).
gz="$defect_tmp/packed.mtx.gz"
printf '\037\213\010\000\000\000\000\000\000\003binary' >"$gz"
for p in 3; do
  rc=0
  timeout 120 mpirun --allow-run-as-root --oversubscribe -n "$p" "$LODESTONE" import "$gz" "$defect_tmp/out.h5" \
    >/dev/null 2>"$defect_tmp/stderr" || rc=$?
  [ "$rc" -eq 1 ] || { echo "FAIL at $p ranks: exit $rc, expected 1"; cat "$defect_tmp/stderr"; exit 1; }
  [ "$(grep -c '^lodestone: ' "$defect_tmp/stderr")" -eq 1 ] || { echo "FAIL at $p ranks: not one line"; exit 1; }
  grep -q "^lodestone: error: $gz: the file is compressed (gzip); decompress it first" "$defect_tmp/stderr" ||
    { echo "FAIL at $p ranks:"; cat "$defect_tmp/stderr"; exit 1; }
  [ ! -e "$defect_tmp/out.h5" ] || { echo "FAIL: output left behind"; exit 1; }
done
echo "import_defect_binary_bytes: ok"
