#!/usr/bin/env bash
# The Slurm and PBS scripts that `lodestone plan` writes tell a cancel from a time limit.
# scancel and qdel send TERM; so does the limit. A TERM with no USR1 warning before it
# (under PBS, which never warns: one earlier than the margin before the walltime) is a
# cancel: the solver still checkpoints, but the script must not requeue (Slurm) or submit
# the next job (PBS), or a cancelled chain would go on using the allocation. A stop after
# the warning, a late TERM under PBS, or the solver's own --time-budget, goes on.
# The solver, qsub and scontrol are stand-ins; the script's clock ($SECONDS) is set from
# the environment to stand for a TERM late in the job.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
cd "$work"
mkdir bin
printf '#!/bin/sh\necho "qsub $*" >> "%s/calls"\necho 2.fake\n' "$work" > bin/qsub
printf '#!/bin/sh\necho "scontrol $*" >> "%s/calls"\n' "$work" > bin/scontrol
chmod +x bin/qsub bin/scontrol
export PATH="$work/bin:$PATH" FAKE_PIDS="$work/pids" PBS_JOBID=1.fake SLURM_JOB_ID=7
fake="$LODESTONE_SOURCE/tests/support/fake_solver.bash"

"$LODESTONE" generate laplace2d --nx 20 --ny 20 deck.h5 >/dev/null
for s in slurm pbs; do
  "$LODESTONE" plan deck.h5 --pairs 2 --scheduler "$s" --cores-per-node 2 --nodes 1 --node-memory 1G \
    --max-walltime 2h --lodestone "$fake" --out "deck.$s" >/dev/null
done

# start SCRIPT [ENV...]: runs SCRIPT in the background (log in log.txt) and waits until the
# stand-in solver runs.
start() {
  local script=$1
  shift
  rm -f calls log.txt pids deck.checkpoint.h5
  env "$@" "./$script" > log.txt 2>&1 &
  bg=$!
  await_line log.txt "fake solver: iterating" "$bg" "$script: the stand-in solver did not start"
}
# finish [no-checkpoint]: waits for the script (a hang guard, not a timing check); sets rc;
# checks that a checkpoint was written unless told there is none.
finish() {
  await_exit "$bg" log.txt "the batch script"
  rc=0
  wait "$bg" || rc=$?
  bg=""
  [ -n "${1:-}" ] || [ -f deck.checkpoint.h5 ] || { cat log.txt; fail "no checkpoint was written"; }
}
submitted() { [ -f calls ] && grep -q "$1" calls; }

# PBS, qdel: an early TERM. Checkpoint, status 3, no next job, a word on resuming.
start deck.pbs
kill -TERM "$bg"
finish
[ "$rc" -eq 3 ] || { cat log.txt; fail "pbs cancel: status $rc, expected 3"; }
if submitted qsub; then cat log.txt calls; fail "pbs cancel: the script submitted the next job"; fi
grep -q "cancelled (TERM before the time limit).*Submit this script again to resume" log.txt \
  || { cat log.txt; fail "pbs cancel: the script did not say it was cancelled and how to resume"; }

# PBS, qdel reaching mpirun too, before the solver (here one that ignores stop requests)
# writes a checkpoint: mpirun ends the ranks. A cancel still, not a failure; no next job.
start deck.pbs FAKE_IGNORE=1
launcher=$(ps -o pid= --ppid "$bg" | head -n 1)
[ -n "$launcher" ] || fail "pbs cancel without checkpoint: no mpirun under the script"
kill -TERM "$bg" "$launcher"
finish no-checkpoint
[ "$rc" -ne 0 ] && [ "$rc" -ne 3 ] || { cat log.txt; fail "pbs cancel without checkpoint: status $rc"; }
if submitted qsub; then cat log.txt calls; fail "pbs cancel without checkpoint: the script submitted the next job"; fi
grep -q "cancelled (TERM before the time limit) before the solver wrote a checkpoint" log.txt \
  || { cat log.txt; fail "pbs cancel without checkpoint: the script did not say it was cancelled"; }

# PBS, a TERM near the walltime: the next job of the chain is submitted.
start deck.pbs SECONDS=100000
kill -TERM "$bg"
finish
[ "$rc" -eq 0 ] || { cat log.txt; fail "pbs late TERM: status $rc, expected 0"; }
submitted "qsub -W depend=afterany:1.fake" || { cat log.txt; fail "pbs late TERM: no next job submitted"; }

# PBS, the solver's own time budget (status 3, no signal): the chain goes on.
rm -f calls pids deck.checkpoint.h5
rc=0
FAKE_EXIT=3 ./deck.pbs > log.txt 2>&1 || rc=$?
[ "$rc" -eq 0 ] || { cat log.txt; fail "pbs time budget: status $rc, expected 0"; }
submitted "qsub -W depend=afterany:1.fake" || { cat log.txt; fail "pbs time budget: no next job submitted"; }

# Slurm, scancel: a TERM with no USR1 warning before it, even late in the job. No requeue.
start deck.slurm SECONDS=100000
kill -TERM "$bg"
finish
[ "$rc" -eq 3 ] || { cat log.txt; fail "slurm cancel: status $rc, expected 3"; }
if submitted requeue; then cat log.txt calls; fail "slurm cancel: the script requeued itself"; fi
grep -q "cancelled (TERM before the time limit)" log.txt || { cat log.txt; fail "slurm cancel: no word of the cancel"; }

# Slurm, the warning (USR1) and then TERM, as at the limit: the job requeues itself.
start deck.slurm
kill -USR1 "$bg"
for _ in $(seq 600); do
  if grep -q "USR1 received" log.txt; then break; fi
  sleep 0.1
done
kill -TERM "$bg" 2>/dev/null || true
finish
[ "$rc" -eq 0 ] || { cat log.txt; fail "slurm warning: status $rc, expected 0"; }
submitted "scontrol requeue 7" || { cat log.txt; fail "slurm warning: the script did not requeue itself"; }
echo "plan_batch_cancel: ok (an early TERM stops the chain; a warning, a late TERM or the time budget continue it)"
