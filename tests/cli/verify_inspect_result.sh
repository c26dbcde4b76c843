#!/usr/bin/env bash
# `lodestone inspect RESULT.h5`: the run facts and the pairs table, printed once at any
# rank count, with values that match the file (closed-form 1-D Laplacian pairs,
# 2 - 2cos(j pi/(n+1)), the standard finite-difference result) and the matrix fingerprint.
set -euo pipefail
tmp="$(mktemp -d)"
trap 'rm -rf "$tmp"' EXIT
run() { local p="$1"; shift; timeout 120 mpirun --allow-run-as-root --oversubscribe -n "$p" "$@"; }
fail() { echo "FAIL: $*" >&2; cat "$tmp/out" >&2 || true; exit 1; }

n=45; k=3
run 2 "$LODESTONE_BUILD/tests/write_sample_result" "$n" "$k" "$tmp/rod.h5" "$tmp/modes.h5"
fp="$(run 1 "$LODESTONE" inspect --check "$tmp/rod.h5" | awk '/^fingerprint/ {print $2}')"

run 3 "$LODESTONE" inspect "$tmp/modes.h5" >"$tmp/out"
grep -q "^pairs *3 returned, 3 converged$" "$tmp/out" || fail "pairs line"
grep -q "^method *block, selection largest$" "$tmp/out" || fail "method line"
grep -q "^matrix *45 rows, fingerprint $fp$" "$tmp/out" || fail "fingerprint line (expected $fp)"
grep -q "ranks" "$tmp/out" || fail "no ranks"
[ "$(grep -cE '^ +[0-9]+ .*  converged$' "$tmp/out")" -eq "$k" ] || fail "expected $k converged rows"
[ "$(grep -c '^result' "$tmp/out")" -eq 1 ] || fail "printed more than once"
# Pairs are numbered from 1: pair 1 is the largest eigenvalue (j = n), pair 2 the
# second largest (j = n - 1), and there is no pair 0.
for pair in 1 2; do
  want="$(awk -v n="$n" -v j=$((n + 1 - pair)) 'BEGIN { printf "%.12f", 2 - 2 * cos(j * atan2(0, -1) / (n + 1)) }')"
  got="$(awk -v p="$pair" '$1 == p && $NF == "converged" { printf "%.12f", $2 }' "$tmp/out")"
  [ "$want" = "$got" ] || fail "pair $pair eigenvalue $got, expected $want"
done
! grep -qE '^ +0  ' "$tmp/out" || fail "a pair numbered 0"

# The matrix branch is unchanged.
run 1 "$LODESTONE" inspect "$tmp/rod.h5" >"$tmp/out"
grep -q "^layout *csr" "$tmp/out" || fail "matrix summary"
echo "verify_inspect_result: ok"
