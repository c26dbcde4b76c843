#!/usr/bin/env bash
# Option and output defects of `lodestone solve`, at 1 and 3 ranks: each exits
# with its documented status (2 usage, 1 input), prints one line once, creates no
# file under the output's name and leaves an earlier result there untouched.
set -euo pipefail
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
MPI=(mpirun --allow-run-as-root --oversubscribe)
"$LODESTONE" generate laplace1d --n 10 "$tmp/rod.h5" >/dev/null
"$LODESTONE" generate laplace1d --n 12 "$tmp/other.h5" >/dev/null
"$LODESTONE" solve "$tmp/other.h5" --pairs 1 --quiet --out "$tmp/earlier.h5"
earlier=$(sha256sum <"$tmp/earlier.h5")
input=$(sha256sum <"$tmp/rod.h5")

expect() {  # STATUS PATTERN OUTPUT ARGS...
  local want="$1" pattern="$2" out="$3"; shift 3
  for np in 1 3; do
    rc=0
    timeout 120 "${MPI[@]}" -n "$np" "$LODESTONE" solve "$tmp/rod.h5" "$@" --out "$out" >"$tmp/o" 2>"$tmp/e" || rc=$?
    [[ "$rc" == "$want" ]] || { cat "$tmp/o" "$tmp/e"; echo "FAIL [$*] at $np ranks: exit $rc, want $want"; exit 1; }
    [[ $(grep -c "^lodestone: error: " "$tmp/e") == 1 ]] || { cat "$tmp/e"; echo "FAIL [$*]: not one error line"; exit 1; }
    grep -q -- "$pattern" "$tmp/e" || { cat "$tmp/e"; echo "FAIL [$*]: message lacks '$pattern'"; exit 1; }
    ls -A "$tmp" | grep -q "partial" && { echo "FAIL [$*]: temporary file left"; exit 1; } || true
  done
  echo "ok: [$*] -> $want"
}

expect 2 "exceeds the matrix order 10" "$tmp/earlier.h5" --pairs 11
expect 2 "\-\-pairs" "$tmp/earlier.h5" --pairs 0
expect 2 "\-\-pairs" "$tmp/earlier.h5" --pairs -3
expect 2 "\-\-tol" "$tmp/earlier.h5" --pairs 2 --tol 0
expect 2 "\-\-tol" "$tmp/earlier.h5" --pairs 2 --tol 1
expect 2 "\-\-method" "$tmp/earlier.h5" --pairs 2 --method fastest
expect 2 "\-\-select" "$tmp/earlier.h5" --pairs 2 --select smal
expect 2 "\-\-checkpoint-every '10x'" "$tmp/earlier.h5" --pairs 2 --checkpoint "$tmp/c.h5" --checkpoint-every 10x
expect 2 "\-\-time-budget" "$tmp/earlier.h5" --pairs 2 --checkpoint "$tmp/c.h5" --time-budget 5
expect 1 "directory '$tmp/missing' does not exist" "$tmp/missing/r.h5" --pairs 2
expect 1 "would overwrite an input" "$tmp/rod.h5" --pairs 2
expect 1 "is a directory" "$tmp" --pairs 2
[[ "$(sha256sum <"$tmp/earlier.h5")" == "$earlier" ]] || { echo "FAIL: the earlier result changed"; exit 1; }
[[ "$(sha256sum <"$tmp/rod.h5")" == "$input" ]] || { echo "FAIL: the input changed"; exit 1; }
[[ ! -e "$tmp/c.h5" ]] || { echo "FAIL: a refused run wrote a checkpoint"; exit 1; }

echo "solve refusals: all checks passed"
