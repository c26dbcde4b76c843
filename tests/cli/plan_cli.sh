#!/usr/bin/env bash
# `lodestone plan` from the command line: the summary's fields, the same plan on
# 1 and 3 planner ranks, malformed options (exit 2), unreadable input (exit 1),
# a request that does not fit (exit 1, no script), file names that would overwrite each
# other (exit 2), and scripts that pass bash -n and shellcheck.
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
grep -qx '#PBS -S /bin/bash' job.pbs || fail "the PBS script does not ask for bash"
# Slurm's warning can come too late for an iteration that grew: the solver also stops itself.
grep -q '^solve_args+=(--time-budget [0-9]*s)$' job.slurm || fail "the Slurm script passes no --time-budget"

# The solve's own options given to plan reach the script's solve, which runs with them.
run 2 "$LODESTONE" generate laplace2d --nx 20 --ny 15 small.h5 >/dev/null
one "$LODESTONE" plan small.h5 --pairs 3 --method block --block-size 5 --select smallest --tol 1e-9 --seed 7 \
  --scheduler local --cores-per-node 2 --node-memory 4G --lodestone "$LODESTONE" --out passed.sh > passed.txt
grep -qF "solve options         --block-size=5 --select=smallest --tol=1e-09 --seed=7" passed.txt \
  || { cat passed.txt; fail "the summary does not list the options passed on"; }
for w in --block-size=5 --select=smallest --tol=1e-09 --seed=7; do
  grep -qx "solve_args+=($w)" passed.sh || fail "passed.sh does not pass $w"
done
./passed.sh > passed.log 2>&1 || { cat passed.log; fail "passed.sh did not finish"; }
one "$LODESTONE" inspect small.result.h5 > passed-result.txt
# (The results file records the method, selection and tolerance; the solve accepted the rest.)
for w in "block, selection smallest" "tolerance   1e-09"; do
  grep -qF "$w" passed-result.txt || { cat passed-result.txt; fail "the solve did not run with '$w'"; }
done
# A negative shift is one word (--shift=-0.5), not taken for an option.
one "$LODESTONE" plan small.h5 --pairs 1 --method power --shift=-0.5 --scheduler local --cores-per-node 2 \
  --node-memory 4G --out shift.sh >/dev/null
grep -qx 'solve_args+=(--shift=-0.5)' shift.sh || fail "shift.sh does not pass --shift=-0.5"

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
# What the solve would refuse, plan refuses too.
expect_usage "no guard vector beyond --pairs 2" "${base[@]}" --node-memory 8G --block-size 2
expect_usage "--method chebyshev does not take --shift" "${base[@]}" --node-memory 8G --method chebyshev --shift 1
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

# Files that would overwrite each other: exit 2 before anything is read or written.
same="is the same file as"
expect_usage "the script (--out) 'plate.h5' $same the matrix 'plate.h5'" "${base[@]}" --node-memory 8G --out plate.h5
expect_usage "the results file (--result) './plate.h5' $same the matrix" "${base[@]}" --node-memory 8G --result ./plate.h5 --out x.sh
expect_usage "the checkpoint (--checkpoint) 'plate.h5' $same the matrix" "${base[@]}" --node-memory 8G --checkpoint plate.h5
expect_usage "the checkpoint (--checkpoint) 'r.h5' $same the results file (--result) 'r.h5'" "${base[@]}" --node-memory 8G \
  --result r.h5 --checkpoint r.h5 --out x.sh
expect_usage "the script (--out) 'plate.checkpoint.h5' $same the checkpoint" "${base[@]}" --node-memory 8G --out plate.checkpoint.h5
expect_usage "the checkpoint's previous copy 'c.h5.previous' $same the results file (--result) 'c.h5.previous'" \
  "${base[@]}" --node-memory 8G --checkpoint c.h5 --result c.h5.previous --out x.sh
ln -s plate.h5 plate-link.h5
expect_usage "the results file (--result) 'plate-link.h5' $same the matrix" "${base[@]}" --node-memory 8G --result plate-link.h5
[ ! -e x.sh ] && [ ! -e plate.checkpoint.h5 ] || fail "a plan refused for its file names wrote a script"
one "$LODESTONE" inspect plate.h5 >/dev/null || fail "the matrix was damaged"
# On 2 planner ranks: the same refusal, said once.
set +e
run 2 "$LODESTONE" plan plate.h5 "${base[@]}" --node-memory 8G --result plate.h5 > out.txt 2> err.txt
rc=$?
set -e
[ "$rc" -eq 2 ] || { cat err.txt; fail "--result over the matrix on 2 ranks: expected exit 2, got $rc"; }
[ "$(grep -c "$same" err.txt)" -eq 1 ] || { cat err.txt; fail "--result over the matrix on 2 ranks: not said exactly once"; }
echo "plan_cli: ok"
