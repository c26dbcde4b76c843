#!/usr/bin/env bash
# What a checkpoint keeps when a solve ends short of K pairs, and the names it
# guards:
# - a stop on the matvec budget (status 4) writes a last checkpoint; resuming it
#   without the budget ends exactly as a run straight through (same matvecs and
#   iterations on one rank, the same eigenvalues on two), whichever iteration the
#   budget cut, including the one on which power locks a pair and carries its
#   iterate over to the next;
# - a checkpoint whose FILE.previous would replace the results file, and a
#   results file naming either checkpoint generation, are refused before any work;
# - after a resume falls back to FILE.previous, the damaged FILE is set aside as
#   FILE.damaged and the good generation survives the next write;
# - a checkpoint of the same entries declared symmetric is not resumed on the
#   matrix declared general;
# - --resume without --checkpoint is a usage error even when the matrix is missing.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"

# Eigenvalues 1, 0.6, 0.36, ... (a prescribed spectrum): power locks the first
# pair at iteration 33 with seed 1 (measured), well inside the budgets below.
"$LODESTONE" generate dense-spectrum --n 50 --spectrum geometric --ratio 0.6 "$work/g.h5" >/dev/null
POWER=(--pairs 3 --method power --quiet)
"$LODESTONE" solve "$work/g.h5" "${POWER[@]}" --out "$work/straight.h5"
facts() {  # RESULT: matvecs iterations
  "$PY" - "$1" <<'PY'
import sys, h5py
with h5py.File(sys.argv[1], "r") as f:
    print(int(f.attrs["matvecs"]), int(f.attrs["iterations"]))
PY
}
same_values() {  # A B: eigenvalues within 1e-10
  "$PY" - "$1" "$2" <<'PY'
import sys, h5py, numpy as np
a, b = (h5py.File(p, "r")["eigenvalues"][()] for p in sys.argv[1:3])
sys.exit(0 if a.shape == b.shape and np.allclose(a, b, rtol=0, atol=1e-10) else 1)
PY
}
straight=$(facts "$work/straight.h5")

for budget in 20 33 34 35 60; do
  rm -f "$work"/c.h5* "$work/r.h5"
  rc=0
  "$LODESTONE" solve "$work/g.h5" "${POWER[@]}" --out "$work/r.h5" --checkpoint "$work/c.h5" --max-matvecs "$budget" || rc=$?
  [[ "$rc" == 4 ]] || fail "budget $budget: exit $rc, want 4"
  [[ -f "$work/c.h5" ]] || fail "budget $budget: no checkpoint after the budget stop"
  rm -f "$work/r.h5"
  "$LODESTONE" solve "$work/g.h5" "${POWER[@]}" --out "$work/r.h5" --checkpoint "$work/c.h5" --resume
  [[ "$(facts "$work/r.h5")" == "$straight" ]] ||
    fail "budget $budget: resumed run took '$(facts "$work/r.h5")' (matvecs iterations), straight run '$straight'"
  same_values "$work/r.h5" "$work/straight.h5" || fail "budget $budget: other eigenvalues after resume"
done
echo "ok: budget stops resume as a straight run"

# The same on two ranks, resumed on one: the eigenvalues agree.
rm -f "$work"/c.h5* "$work/r.h5"
rc=0
run 2 "$LODESTONE" solve "$work/g.h5" "${POWER[@]}" --out "$work/r.h5" --checkpoint "$work/c.h5" --max-matvecs 34 \
  2>/dev/null || rc=$?
[[ "$rc" == 4 ]] || fail "two ranks: exit $rc, want 4"
rm -f "$work/r.h5"
"$LODESTONE" solve "$work/g.h5" "${POWER[@]}" --out "$work/r.h5" --checkpoint "$work/c.h5" --resume
same_values "$work/r.h5" "$work/straight.h5" || fail "2 -> 1 ranks: other eigenvalues after resume"
echo "ok: a budget stop on 2 ranks resumes on 1"

# Names: refused before the solve, with nothing left behind.
refused() {  # PATTERN ARGS...
  local pattern="$1"; shift
  rc=0
  "$LODESTONE" solve "$work/g.h5" "${POWER[@]}" "$@" >"$work/o" 2>"$work/e" || rc=$?
  [[ "$rc" == 1 ]] || { cat "$work/e"; fail "[$*]: exit $rc, want 1"; }
  grep -q -- "$pattern" "$work/e" || { cat "$work/e"; fail "[$*]: message lacks '$pattern'"; }
  ! grep -q "pair(s) by" "$work/o" "$work/e" || fail "[$*]: the solve ran before the refusal"
}
rm -f "$work"/k.h5*
refused "the output would overwrite an input" --checkpoint "$work/k.h5" --out "$work/k.h5.previous"
refused "the output would overwrite an input" --checkpoint "$work/k.h5" --out "$work/k.h5"
# The matrix under the name the checkpoint's previous generation would take.
cp "$work/g.h5" "$work/k.h5.previous"
rc=0
"$LODESTONE" solve "$work/k.h5.previous" "${POWER[@]}" --checkpoint "$work/k.h5" --checkpoint-every 1s \
  --out "$work/r3.h5" >"$work/o" 2>"$work/e" || rc=$?
[[ "$rc" == 1 ]] || { cat "$work/e"; fail "checkpoint over the matrix as FILE.previous: exit $rc, want 1"; }
grep -q "the checkpoint would overwrite an input as $work/k.h5.previous" "$work/e" || { cat "$work/e"; fail "message"; }
! grep -q "pair(s) by" "$work/o" "$work/e" || fail "the solve ran before the refusal"
rm "$work/k.h5.previous"
[[ -z "$(ls -A "$work" | grep '^k\.h5\|partial')" ]] || fail "a refused solve left files: $(ls -A "$work")"
echo "ok: results and checkpoint names may not collide"

# A damaged FILE: the resume reads FILE.previous, sets FILE aside, and the next
# write keeps a good previous generation.
rm -f "$work"/c.h5* "$work/r.h5"
rc=0
"$LODESTONE" solve "$work/g.h5" "${POWER[@]}" --out "$work/r.h5" --checkpoint "$work/c.h5" --max-matvecs 40 || rc=$?
cp "$work/c.h5" "$work/c.h5.previous"
head -c 2000 "$work/c.h5.previous" >"$work/c.h5"   # cut short: not a readable file
rm -f "$work/r.h5"
rc=0
"$LODESTONE" solve "$work/g.h5" "${POWER[@]}" --out "$work/r.h5" --checkpoint "$work/c.h5" --resume \
  --max-matvecs 50 2>"$work/e" || rc=$?
[[ "$rc" == 4 ]] || { cat "$work/e"; fail "resume from the previous generation: exit $rc, want 4"; }
grep -q "^warning: .*using the previous checkpoint" "$work/e" || { cat "$work/e"; fail "no warning about the fallback (--quiet keeps warnings)"; }
grep -q "kept as $work/c.h5.damaged" "$work/e" || { cat "$work/e"; fail "the warning does not say where FILE went"; }
[[ $(stat -c %s "$work/c.h5.damaged") == 2000 ]] || fail "FILE.damaged is not the damaged file"
"$LODESTONE" inspect "$work/c.h5" >/dev/null || fail "the new checkpoint does not read"
"$LODESTONE" inspect "$work/c.h5.previous" >"$work/o" || fail "the previous generation was replaced by the damaged file"
echo "ok: a damaged checkpoint is set aside, not rotated over the good one"

# Declared symmetric, then general: the same entries, another run.
"$PY" - "$work/sym.mtx" "$work/gen.mtx" <<'PY'
import sys
# A 200-point chain (2 on the diagonal, -1 beside it), as a symmetric file (lower
# triangle) and as a general one (both triangles).
n = 200
low = [(i, i, 2.0) for i in range(1, n + 1)] + [(i + 1, i, -1.0) for i in range(1, n)]
full = low + [(j, i, v) for i, j, v in low if i != j]
for path, kind, entries in ((sys.argv[1], "symmetric", low), (sys.argv[2], "general", full)):
    with open(path, "w") as f:
        f.write(f"%%MatrixMarket matrix coordinate real {kind}\n{n} {n} {len(entries)}\n")
        f.writelines(f"{i} {j} {v}\n" for i, j, v in entries)
PY
"$LODESTONE" import "$work/sym.mtx" "$work/sym.h5" >/dev/null
"$LODESTONE" import "$work/gen.mtx" "$work/gen.h5" >/dev/null
rm -f "$work"/s.h5* "$work/r.h5"
rc=0
"$LODESTONE" solve "$work/sym.h5" --pairs 2 --method block --quiet --out "$work/r.h5" --checkpoint "$work/s.h5" \
  --max-matvecs 20 2>/dev/null || rc=$?
[[ -f "$work/s.h5" ]] || fail "no checkpoint of the symmetric import (exit $rc)"
rm -f "$work/r.h5"
rc=0
"$LODESTONE" solve "$work/gen.h5" --pairs 2 --method block --quiet --out "$work/r.h5" --checkpoint "$work/s.h5" \
  --resume 2>"$work/e" || rc=$?
[[ "$rc" == 1 ]] || { cat "$work/e"; fail "resume on the general import: exit $rc, want 1"; }
grep -q "option 'symmetric' was yes in the checkpoint but is no now" "$work/e" || { cat "$work/e"; fail "message"; }
echo "ok: a checkpoint of a symmetric matrix is not resumed on the general one"

# Usage before input: the missing matrix is never looked at.
rc=0
"$LODESTONE" solve "$work/missing.h5" --pairs 1 --out "$work/r2.h5" --resume 2>"$work/e" || rc=$?
[[ "$rc" == 2 ]] || { cat "$work/e"; fail "--resume without --checkpoint: exit $rc, want 2"; }
grep -q "need --checkpoint FILE" "$work/e" || { cat "$work/e"; fail "message"; }
echo "ok: --resume without --checkpoint is a usage error first"
