# Shared by tests/cli/import_defect_*.sh (sourced, not run on its own): imports a
# Matrix Market text with one defect, read from standard input, at 1 and 3
# ranks, and expects exit status 1, exactly one message line
# "lodestone: error: FILE: line L: DEFECT...", and no output file left behind.
#   expect_defect LINE "DEFECT TEXT" <<'EOF' ... EOF
set -euo pipefail
: "${LODESTONE:?set LODESTONE to the lodestone binary}"
defect_tmp="$(mktemp -d)"
trap 'rm -rf "$defect_tmp"' EXIT

expect_defect() {
  local line="$1" want="$2" in="$defect_tmp/input.mtx" out="$defect_tmp/output.h5"
  cat > "$in"
  local prefix="lodestone: error: $in: line $line: $want"
  for p in 1 3; do
    local rc=0
    timeout 120 mpirun --allow-run-as-root --oversubscribe -n "$p" "$LODESTONE" import "$in" "$out" \
      >"$defect_tmp/stdout" 2>"$defect_tmp/stderr" || rc=$?
    if [ "$rc" -ne 1 ]; then
      echo "FAIL at $p ranks: exit status $rc, expected 1 (124 means it hung)"; cat "$defect_tmp/stderr"; exit 1
    fi
    local ours
    ours="$(grep -c '^lodestone: ' "$defect_tmp/stderr" || true)"
    if [ "$ours" -ne 1 ]; then
      echo "FAIL at $p ranks: $ours message lines, expected exactly one"; cat "$defect_tmp/stderr"; exit 1
    fi
    local got
    got="$(grep '^lodestone: ' "$defect_tmp/stderr")"
    if [[ "$got" != "$prefix"* ]]; then
      echo "FAIL at $p ranks:"; echo "  got:      $got"; echo "  expected: $prefix..."; exit 1
    fi
    if [ -s "$defect_tmp/stdout" ]; then echo "FAIL at $p ranks: unexpected output"; cat "$defect_tmp/stdout"; exit 1; fi
    if ls -A "$defect_tmp" | grep -q 'output\.h5'; then
      echo "FAIL at $p ranks: an output file was left behind"; ls -A "$defect_tmp"; exit 1
    fi
    echo "ok at $p ranks: $got"
  done
}
