#!/usr/bin/env bash
# `lodestone plan` from the command line: the summary's fields, the same plan on
# 1 and 3 planner ranks, malformed options (exit 2), unreadable input (exit 1),
# a request that does not fit (exit 1, no script), and scripts that pass bash -n
# and shellcheck.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
# One planner rank needs no mpirun (MPI starts as a singleton): faster.
one() { timeout 120 "$@"; }
cd "$work"

run 2 "$LODESTONE" generate laplace2d --nx 300 --ny 200 plate.h5 >/dev/null

common=(--pairs 6 --cores-per-node 4 --node-memory 16G --max-walltime 01:00:00)
one "$LODESTONE" plan plate.h5 "${common[@]}" --scheduler slurm > one.txt
run 3 "$LODESTONE" plan plate.h5 "${common[@]}" --scheduler slurm > three.txt
# The planner's own rank count must not change the plan.
diff one.txt three.txt || fail "plan differs between 1 and 3 planner ranks"
for field in "60000 x 60000, 299000 nonzeros" "chebyshev (auto: the matrix is symmetric)" "block of 10 vectors" \
             "1 node x 4 ranks = 4 ranks" "sized by" "heaviest rank" "matrix rows" "block vectors" "locked vectors" \
             "halo (ghost values)" "symmetry check" "library overhead" "peak" "safety margin" "per node" "matvecs" "per iteration" \
             "chained jobs" "stop margin" "checkpoint"; do
  grep -qF -- "$field" one.txt || { cat one.txt; fail "summary lacks '$field'"; }
done

# Scripts for every scheduler pass bash -n and shellcheck, and carry the same summary.
for s in slurm pbs local; do
  one "$LODESTONE" plan plate.h5 "${common[@]}" --scheduler "$s" --out "job.$s" --job-name plate-modes >/dev/null
  [ -x "job.$s" ] || fail "job.$s is not executable"
  bash -n "job.$s" || fail "bash -n job.$s"
  shellcheck -s bash "job.$s" || fail "shellcheck job.$s"
  grep -qF "# Plan for plate.h5 (group /matrix)" "job.$s" || fail "job.$s lacks the summary block"
  grep -qF -- "--checkpoint \"\$checkpoint\" --resume" "job.$s" || fail "job.$s does not resume from a checkpoint"
done
grep -q '^#SBATCH --signal=B:USR1@[0-9]*$' job.slurm || fail "no --signal directive"
grep -q '^#PBS -l select=1:ncpus=4:mpiprocs=4:mem=[0-9]*mb$' job.pbs || fail "no select directive"

# Malformed options: exit 2 and a message naming the option.
expect_usage() {
  local want="$1"; shift
  set +e
  one "$LODESTONE" plan plate.h5 "$@" > out.txt 2> err.txt
  local rc=$?
  set -e
  [ "$rc" -eq 2 ] || { cat out.txt err.txt; fail "expected exit 2 for $*, got $rc"; }
  grep -qF -- "$want" err.txt || { cat err.txt; fail "message for $* lacks '$want'"; }
}
base=(--pairs 2 --scheduler slurm --cores-per-node 4)
expect_usage "--node-memory '64X'" "${base[@]}" --node-memory 64X
expect_usage "--node-memory '0'" "${base[@]}" --node-memory 0
expect_usage "--max-walltime '90'" "${base[@]}" --node-memory 8G --max-walltime 90
expect_usage "--max-walltime '1:99:00'" "${base[@]}" --node-memory 8G --max-walltime 1:99:00
expect_usage "at least one minute" "${base[@]}" --node-memory 8G --max-walltime 30s
expect_usage "--scheduler" --pairs 2 --scheduler lsf --cores-per-node 4 --node-memory 8G
expect_usage "--method 'fast'" "${base[@]}" --node-memory 8G --method fast
expect_usage "--job-name 'a b'" "${base[@]}" --node-memory 8G --job-name 'a b' --out x.sh
expect_usage "--pairs" --scheduler slurm --cores-per-node 4 --node-memory 8G
[ ! -e x.sh ] || fail "a refused plan wrote a script"

# A file that is not there, and one that is not a matrix: exit 1.
set +e
one "$LODESTONE" plan missing.h5 "${base[@]}" --node-memory 8G > out.txt 2> err.txt
rc=$?
set -e
[ "$rc" -eq 1 ] || fail "missing matrix: expected exit 1, got $rc"
grep -qF "missing.h5" err.txt || fail "missing matrix: message lacks the name"

# Does not fit: summary with the warning, exit 1, no script.
set +e
one "$LODESTONE" plan plate.h5 "${base[@]}" --node-memory 64M --max-nodes 2 --out nofit.sh > out.txt 2> err.txt
rc=$?
set -e
[ "$rc" -eq 1 ] || { cat out.txt err.txt; fail "no fit: expected exit 1, got $rc"; }
grep -qF "does not fit" out.txt || fail "no fit: summary lacks the warning"
[ ! -e nofit.sh ] || fail "no fit: a script was written"

# The script never overwrites the matrix.
set +e
one "$LODESTONE" plan plate.h5 "${base[@]}" --node-memory 8G --out plate.h5 > out.txt 2> err.txt
rc=$?
set -e
[ "$rc" -eq 1 ] || fail "--out over the matrix: expected exit 1, got $rc"
one "$LODESTONE" inspect plate.h5 >/dev/null || fail "the matrix was damaged"
echo "plan_cli: ok"
