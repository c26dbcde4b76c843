#!/usr/bin/env bash
# scripts/to-lodestone writes matrices Lodestone reads: SciPy COO with duplicate
# and shuffled entries (.npz), SciPy's Matrix Market writer (.mtx) and a NumPy
# array (.npy), through the command and through the module API. Each file passes
# `lodestone inspect --check` (2 and 3 ranks) with the fingerprint the helper
# printed; the plain h5py view has every attribute of the layout; solving gives
# the closed-form eigenvalues (1-D Laplacian; a similarity transform of a known
# diagonal, also checked against LAPACK through numpy.linalg). Refusals: output =
# input, a promised symmetry that is not there, not a square 2-D matrix, NaN.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
export LODESTONE_SOURCE
check="$LODESTONE_SOURCE/tests/outside/to_lodestone_check.py"
helper="$LODESTONE_SOURCE/scripts/to-lodestone"
cd "$work"
printed_fp() { awk '/^fingerprint/ {print $2}' "$1"; }
inspected_fp() {  # ranks file [group]
  local out
  out="$(run "$1" "$LODESTONE" inspect --check "$2" ${3:+--group "$3"})" || { echo "$out" >&2; return 1; }
  awk '/^fingerprint/ {print $2}' <<<"$out"
}

timeout 120 "$PY" "$check" inputs "$work"

timeout 60 "$helper" matrix rod.npz rod.h5 >rod.out
timeout 60 "$helper" matrix rod.mtx rod-mm.h5 >rod-mm.out
timeout 60 "$helper" matrix shear.npy shear.h5 >shear.out
grep -q "^symmetric   yes" rod.out || { cat rod.out; fail "rod.npz not found symmetric"; }
grep -q "^nonzeros    178$" rod.out || { cat rod.out; fail "rod.npz: duplicates not summed (3n-2 = 178 entries)"; }
grep -q "^symmetric   no" shear.out || { cat shear.out; fail "shear.npy found symmetric"; }
"$PY" "$check" attrs rod.h5 csr 1
"$PY" "$check" attrs rod-mm.h5 csr 1
"$PY" "$check" attrs shear.h5 dense 0
"$PY" "$check" attrs api-shear-csr.h5 csr 0

# The same matrix, written by Lodestone itself, for the fingerprint.
run 2 "$LODESTONE" generate laplace1d --n 60 ref.h5 >/dev/null
run 2 "$LODESTONE" import rod.mtx rod-import.h5 >/dev/null
# The helper's files at 2 ranks, and the first ones also at 3 (another row split).
ref=$(inspected_fp 2 ref.h5)
for f in rod rod-mm; do
  got=$(inspected_fp 2 $f.h5)
  [ "$got" = "$ref" ] || fail "$f.h5 fingerprint $got, lodestone generate laplace1d gives $ref"
  [ "$got" = "$(printed_fp $f.out)" ] || fail "$f.h5: helper printed $(printed_fp $f.out), inspect says $got"
done
[ "$(inspected_fp 3 rod.h5)" = "$ref" ] || fail "3 ranks: rod.h5 differs"
[ "$(inspected_fp 2 rod-import.h5)" = "$ref" ] || fail "lodestone import of SciPy's .mtx differs"
got=$(inspected_fp 2 shear.h5)
[ "$got" = "$(printed_fp shear.out)" ] || fail "shear.h5: helper printed $(printed_fp shear.out), inspect says $got"
[ "$(inspected_fp 3 shear.h5)" = "$got" ] || fail "3 ranks: shear.h5 differs"
[ "$(inspected_fp 2 api-shear-dense.h5)" = "$got" ] || fail "module API dense file differs from the command's"
[ "$(inspected_fp 2 api-shear-csr.h5)" = "$got" ] || fail "dense and CSR files of one array differ"
# float32 values of small integers are exact: the same matrix, in another group.
[ "$(inspected_fp 2 api-rod32.h5 /stiffness)" = "$ref" ] || fail "float32 file in /stiffness differs"
echo "ok: fingerprints agree ($ref, $got)"

# Solving what the helper wrote gives the closed forms.
run 2 "$LODESTONE" solve rod.h5 --pairs 4 --select largest --quiet --out rod-modes.h5
"$PY" "$check" rod-eigenvalues rod-modes.h5 60 4
run 2 "$LODESTONE" solve shear.h5 --pairs 3 --method block --quiet --out shear-modes.h5
"$PY" "$check" shear-eigenvalues shear-modes.h5 "$work"

# Refusals: exit 1, one line naming the problem, nothing written.
refuse() {  # what-to-grep args...
  local want="$1" rc=0; shift
  timeout 60 "$helper" "$@" >out.txt 2>err.txt || rc=$?
  [ "$rc" = 1 ] || { cat out.txt err.txt; fail "to-lodestone $*: exit $rc, expected 1"; }
  grep -qF -- "$want" err.txt || { cat err.txt; fail "to-lodestone $*: message lacks '$want'"; }
}
cp rod.npz rod-copy.npz
refuse "refusing to overwrite the input" matrix rod.npz rod.npz
cmp -s rod.npz rod-copy.npz || fail "the input was changed"
ln -s rod.npz rod-link.npz
refuse "refusing to overwrite the input" matrix rod-link.npz rod.npz
refuse "declared symmetric but is not" matrix shear.npy nope.h5 --symmetric yes
refuse "needs 2" matrix cube.npy nope.h5
refuse "square matrix" matrix wide.npy nope.h5
refuse "NaN" matrix nan.npy nope.h5
refuse "name one with --key" matrix two.npz nope.h5
refuse "unknown kind of file" matrix rod.out nope.h5
[ ! -e nope.h5 ] || fail "a refused conversion wrote its output"
leftovers=$(compgen -G '.*.tmp' || true)
[ -z "$leftovers" ] || fail "temporary files left behind: $leftovers"
rc=0; timeout 60 "$helper" matrix --bogus rod.npz x.h5 >/dev/null 2>&1 || rc=$?
[ "$rc" = 2 ] || fail "usage error: exit $rc, expected 2"
echo "to_lodestone_write: all checks passed"
