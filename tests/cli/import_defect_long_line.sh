#!/usr/bin/env bash
# lodestone import refuses a line longer than 1 MiB instead of buffering it whole
# on one rank: a zero-filled file (no newline at all) and a file with CR-only line
# ends. Exit 1, one line saying so and no output file, at 3 ranks.
set -euo pipefail
: "${LODESTONE:?set LODESTONE to the lodestone binary}"
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
cap=1048576
why="longer than $cap bytes (a file with CR-only line ends, or not a text file?)"

# refuse P FILE WANT: on P ranks, status 1 and one message line starting with WANT and ending with $why.
refuse() {
  local p="$1" file="$2" want="$3" rc=0
  timeout 120 mpirun --allow-run-as-root --oversubscribe -n "$p" "$LODESTONE" import "$file" "$tmp/out.h5" \
    >/dev/null 2>"$tmp/stderr" || rc=$?
  [ "$rc" -eq 1 ] || { echo "FAIL at $p ranks: exit $rc, expected 1"; cat "$tmp/stderr"; exit 1; }
  [ "$(grep -c '^lodestone: ' "$tmp/stderr")" -eq 1 ] || { echo "FAIL at $p ranks: not one line"; exit 1; }
  local got
  got="$(grep '^lodestone: ' "$tmp/stderr")"
  [[ "$got" == "lodestone: error: $file: $want"* && "$got" == *"$why" ]] ||
    { echo "FAIL at $p ranks:"; echo "  got:      $got"; echo "  expected: lodestone: error: $file: $want...$why"; exit 1; }
  [ ! -e "$tmp/out.h5" ] || { echo "FAIL at $p ranks: output left behind"; exit 1; }
  echo "ok at $p ranks: $got"
}

head -c $((cap + 1)) /dev/zero >"$tmp/zeros.mtx"
refuse 3 "$tmp/zeros.mtx" "line 1: "

# A proper header, then entries ended by CR alone: one data line of about 1.2 MiB.
# With 3 ranks the share boundaries fall inside it, and the first is named by its
# byte offset (on one rank the line is named by its number: test_mm_import).
{
  printf '%%%%MatrixMarket matrix coordinate real general\n200000 200000 200000\n'
  awk 'BEGIN { for (i = 1; i <= 200000; i++) printf "%d %d 1\r", i, i }'
} >"$tmp/cr.mtx"
[ "$(stat -c %s "$tmp/cr.mtx")" -gt $((cap + 1000)) ] || { echo "FAIL: the CR-only file is too short"; exit 1; }
refuse 3 "$tmp/cr.mtx" "the line running through byte "
echo "import_defect_long_line: ok"
