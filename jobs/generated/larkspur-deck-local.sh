#!/bin/bash
# Workstation script written by `lodestone plan`; regenerate it rather than edit it.
# Ctrl-C (or closing the terminal) stops the solver at its next iteration with a
# checkpoint; run the script again to resume. A second Ctrl-C ends it at once.
# Plan for larkspur-deck.h5 (group /matrix)
#   matrix                360000 x 360000, 1797000 nonzeros (CSR), symmetric
#   method                chebyshev (auto: the matrix is symmetric), 8 pairs, block of 12 vectors, filter degree 10
#   solve options         --select=smallest (passed to the script's solve)
#   scheduler             local
#   allocation            1 node x 8 ranks = 8 ranks (8 cores, 32.0 GiB per node)
#   sized by              memory: one node holds the matrix with 8 ranks, one per core
#   heaviest rank         44951 rows, 224679 nonzeros (most rows on any rank: 45150)
# Memory per rank (the heaviest rank)
#   matrix rows           3.1 MiB
#   block vectors         24.8 MiB
#   locked vectors        2.8 MiB (8 vectors)
#   halo (ghost values)   52.3 MiB (at most 224679 ghost rows; an upper bound, column indices are not read)
#   read buffers          5.0 MiB (while loading)
#   symmetry check        6.2 MiB (while loading: transpose and difference)
#   library overhead      64.0 MiB (MPI, PETSc, HDF5)
#   peak                  146.9 MiB (matrix + library + the larger of solving 79.8 MiB and loading 6.2 MiB)
#   safety margin         29.4 MiB
#   total                 176.3 MiB
#   per node              1.4 GiB for 8 ranks, of 30.4 GiB usable
# Time
#   speeds from           defaults (common practice, not measured here)
#   convergence from      defaults (common practice, not measured here)
#   matvecs               504 to 4824 (120 per iteration)
#   iterations            4 to 40
#   per iteration         145.7 ms (matrix passes 82.7 ms, halo 43.4 ms, reductions 0.1 ms, dense work 19.5 ms)
#   loading the matrix    34.5 ms per job
#   solve                 608.0 ms to 5.9 s
#   walltime, all jobs    642.5 ms to 5.9 s
# Jobs
#   walltime per job      none (runs to the end)
#   chained jobs          1
#   stop margin           60 s before the limit
#   checkpoint            every 1800 s, 55.9 MiB each, ~58.6 ms to write

set -u

# What to run. Every value is single-quoted: nothing in it reaches the shell as code.
lodestone='lodestone'
matrix='larkspur-deck.h5'
group='/matrix'
result='larkspur-deck.result.h5'
checkpoint='larkspur-deck.checkpoint.h5'
pairs=8
method='chebyshev'
ranks=8
checkpoint_every=1800s

launcher=(mpirun -n "$ranks")
if [ "$(id -u)" -eq 0 ]; then launcher+=(--allow-run-as-root); fi
# OpenMPI starts at most one rank per core (cores, not hardware threads) unless told
# to oversubscribe. With fewer cores here than planned ranks, oversubscribe and say so:
# the run starts, slower than planned. Cores: the fewer of the CPUs this shell may
# use (nproc) and the physical cores (lscpu); if neither answers, nothing is added.
cores=$(nproc 2>/dev/null || echo 0)
physical=$(lscpu -p=core,socket 2>/dev/null | grep -v '^#' | sort -u | wc -l)
if [ "$physical" -gt 0 ] && { [ "$cores" -eq 0 ] || [ "$physical" -lt "$cores" ]; }; then cores=$physical; fi
if [ "$cores" -gt 0 ] && [ "$ranks" -gt "$cores" ]; then
  echo "lodestone job: the plan has $ranks ranks and this machine $cores cores; starting them with" \
    "mpirun --oversubscribe (slower than planned; plan again with --cores-per-node $cores here)" >&2
  launcher+=(--oversubscribe)
fi
solve_args=(solve "$matrix" --group "$group" --pairs "$pairs" --method "$method"
  --out "$result" --checkpoint "$checkpoint" --resume --checkpoint-every "$checkpoint_every")
solve_args+=(--select=smallest)

# Stop requests reach this shell. Each is passed to the solver as USR1 (mpirun forwards
# USR1 to every rank), and the solver checkpoints at its next iteration boundary and
# exits with status 3.
solver_pid=''
stop_requested=''
# ask_stop and end_solver run from traps, which shellcheck does not follow.
# shellcheck disable=SC2317
ask_stop() {
  echo "lodestone job: $1 received; asking the solver to checkpoint and stop" >&2
  stop_requested=1
  if [ -n "$solver_pid" ]; then kill -USR1 "$solver_pid" 2>/dev/null || true; fi
}
# Ends mpirun (it ends the ranks, then exits) if it still runs; KILL if it lingers.
# shellcheck disable=SC2317
end_solver() {
  if [ -z "$solver_pid" ] || ! kill -0 "$solver_pid" 2>/dev/null; then return 0; fi
  kill -TERM "$solver_pid" 2>/dev/null || true
  for _ in $(seq 100); do
    kill -0 "$solver_pid" 2>/dev/null || return 0
    sleep 0.1
  done
  kill -KILL "$solver_pid" 2>/dev/null || true
}
# However this shell ends, no solver is left running behind it.
trap end_solver EXIT
# Closing the terminal (HUP) or Ctrl-\ (QUIT) stops with a checkpoint like TERM. The first
# Ctrl-C does too; a second one ends mpirun at once, without a checkpoint.
interrupts=0
stopped_at_once=''
trap 'ask_stop USR1' USR1
trap 'ask_stop TERM' TERM
trap 'ask_stop HUP' HUP
trap 'ask_stop QUIT' QUIT
trap 'interrupts=$((interrupts + 1))
  if [ "$interrupts" -lt 2 ]; then ask_stop INT; else
    echo "lodestone job: second INT received; ending the solver now, without a checkpoint" >&2
    if [ -n "$solver_pid" ] && kill -0 "$solver_pid" 2>/dev/null; then stopped_at_once=1; fi
    end_solver
  fi' INT
# Ctrl-C signals every process in the terminal's foreground group. mpirun would take it
# as a reason to end the ranks; in a session of its own it does not see it, and this
# shell passes the stop request on as above.
if command -v setsid >/dev/null 2>&1; then launcher=(setsid "${launcher[@]}"); fi

# Run in the background and wait, so a trap runs as soon as a signal arrives.
"${launcher[@]}" "$lodestone" "${solve_args[@]}" &
solver_pid=$!
while :; do
  wait "$solver_pid"
  status=$?
  # Above 128 while the solver still runs: a trap interrupted the wait; wait again.
  if [ "$status" -gt 128 ] && kill -0 "$solver_pid" 2>/dev/null; then continue; fi
  break
done
# The solver may have ended just after a trap interrupted the wait: its own status
# (bash keeps it) replaces the interruption's.
if [ "$status" -gt 128 ]; then wait "$solver_pid"; status=$?; fi
# Ended at once by a second Ctrl-C: say so, whatever mpirun returned.
if [ -n "$stopped_at_once" ]; then
  echo "lodestone job: ended at once by a second interrupt (status $status); work since the last checkpoint is lost. Run this script again to resume (from $checkpoint if it exists)." >&2
  exit 130
fi
# Asked to stop, but ended otherwise: mpirun got a signal too and ended the ranks (it then
# says 1, or a signal's status). A checkpoint on disk is whole (written under a temporary
# name, then renamed), so go on as after a stop; work since it was written is lost.
if [ -n "$stop_requested" ] && { [ "$status" -eq 1 ] || [ "$status" -gt 128 ]; } &&
   { [ -f "$checkpoint" ] || [ -f "$checkpoint.previous" ]; }; then
  echo "lodestone job: the solver ended with status $status after the stop request; resuming will start from the checkpoint in $checkpoint" >&2
  status=3
fi

case "$status" in
  3)
    echo "lodestone job: stopped early with a checkpoint in $checkpoint; run this script again to resume" >&2
    exit 3 ;;
  0)
    echo "lodestone job: finished; all $pairs pairs converged; results in $result" >&2
    exit 0 ;;
  4)
    echo "lodestone job: fewer pairs converged than asked (the matvec budget ran out, power met eigenvalues one vector cannot separate, or residuals checked at the end missed the tolerance); $result holds every pair with its residual. Not resubmitting." >&2
    exit 4 ;;
  1)
    echo "lodestone job: the solver failed (status 1: bad input or a runtime error; see the messages above). Not resubmitting." >&2
    exit 1 ;;
  2)
    echo "lodestone job: the solver refused its options (status 2); regenerate this script with 'lodestone plan'. Not resubmitting." >&2
    exit 2 ;;
  *)
    echo "lodestone job: the solver ended with status $status (killed by a signal, or mpirun failed). Not resubmitting." >&2
    exit "$status" ;;
esac
