#!/usr/bin/env bash
# A plan-generated Slurm script on a real Slurm (Debian's 22.05), end to end: a
# single-node Slurm on localhost (scripts/local-slurm; installs slurm and munge if
# missing, state under a temporary directory), a matrix whose solve needs longer than
# one 3-minute job, `lodestone plan --scheduler slurm --max-walltime 00:03:00`, sbatch,
# then polling `scontrol show job` until the job has ended. The job must be signalled
# before its limit (--signal=B:USR1@margin, margin >= 30 s), checkpoint, requeue
# itself, resume from the checkpoint and finish with status 0; `lodestone verify` then
# checks the result. No timing is asserted: a slower machine only means more requeues.
#
# The solve: block iteration for the 2 largest eigenvalues of a dense symmetric matrix
# with eigenvalues 1, r, r^2, ... (r = 0.999). Its number of matrix products (about
# 17000) does not depend on the matrix order, so the order sets the time (as n^2), while
# Slurm signals a job 30-60 s after it starts. Order 3000 took 51 s once dense block
# products became one BLAS-3 product per rank's piece, and finished before the signal;
# order 5000 then needed about 2.5 minutes beside the rest of the suite, but only 60 s
# on a quiet machine on 2026-12-05, and finished unsignalled too. Order 7000 needs about
# twice that. The plan allows for a Slurm warning up to 60 s early, so a 2-minute job
# leaves no time to work: 3-minute jobs (signalled from about 60 s in), and order 8000
# (about 2.5 times order 5000), so that even a quiet machine needs more than one job.
# `lodestone calibrate` on an order-300 matrix of the same spectrum gives the plan the
# real convergence (its matvecs per pair), so the script's requeue limit covers the chain. The daemons are
# stopped on exit.
set -euo pipefail
: "${LODESTONE:?}" "${LODESTONE_SOURCE:?}"
tmp="$(mktemp -d)"
export LOCAL_SLURM_DIR="$tmp/slurm"
export LOCAL_SLURM_PORT=$((20000 + RANDOM % 20000))
cleanup() {
  if [ -n "${job:-}" ]; then scancel "$job" >/dev/null 2>&1 || true; fi
  "$LODESTONE_SOURCE/scripts/local-slurm" stop >/dev/null 2>&1 || true
  rm -rf "$tmp"
}
trap cleanup EXIT
# A TERM (ctest's timeout) or INT still runs the cleanup: exit, and the EXIT trap stops the daemons.
trap 'exit 143' TERM INT
job=""
log() { cat "$tmp"/e2e-*.out 2>/dev/null || true; }
fail() { echo "FAIL: $*" >&2; echo "--- job log ---" >&2; log >&2; exit 1; }
n="${SLURM_E2E_ORDER:-8000}"

timeout 300 "$LODESTONE_SOURCE/scripts/local-slurm" start >/dev/null
export SLURM_CONF="$LOCAL_SLURM_DIR/slurm.conf"
cd "$tmp"
cpus="$(slurmd -C | sed -n 's/.* CPUs=\([0-9]*\).*/\1/p' | head -n 1)"
mem_mb="$(slurmd -C | sed -n 's/.* RealMemory=\([0-9]*\).*/\1/p' | head -n 1)"
if [ -z "$cpus" ] || [ -z "$mem_mb" ]; then fail "cannot read the node's CPUs and memory from slurmd -C"; fi
ranks=$(( cpus < 2 ? cpus : 2 ))

timeout 120 mpirun --allow-run-as-root --oversubscribe -n 2 "$LODESTONE" generate dense-spectrum --n "$n" \
  --spectrum geometric --ratio 0.999 m.h5 >/dev/null
timeout 60 "$LODESTONE" generate dense-spectrum --n 300 --spectrum geometric --ratio 0.999 small.h5 >/dev/null
timeout 300 mpirun --allow-run-as-root --oversubscribe -n "$ranks" "$LODESTONE" calibrate small.h5 --pairs 2 \
  --method block --matvecs 4000 --out measured.json > cal.txt
# The convergence and the compute speeds are carried over (a machine slowed by other work
# gives a longer estimate, hence more chained jobs and a higher requeue limit); the load and
# checkpoint bandwidths of an order-300 matrix measure latency more than bandwidth, so the
# plan keeps its defaults for those.
python3 -c 'import json, sys; c = json.load(open(sys.argv[1])); json.dump({k: c[k] for k in ("format", "version", "matvecs_per_pair", "method", "seconds_per_nonzero", "dense_flops_per_second", "reduction_latency_seconds")}, open(sys.argv[2], "w"))' measured.json cal.json
timeout 120 "$LODESTONE" plan m.h5 --pairs 2 --method block --scheduler slurm --cores-per-node "$ranks" \
  --nodes 1 --node-memory "${mem_mb}M" --max-walltime 00:03:00 --calibration cal.json --job-name e2e \
  --lodestone "$LODESTONE" --out job.slurm > plan.txt
grep -qx '#SBATCH --time=00:03:00' job.slurm || fail "the script does not ask for 3 minutes"
grep -qx '#SBATCH --nodes=1' job.slurm || fail "the script does not ask for the one node there is"
margin="$(sed -n 's/^#SBATCH --signal=B:USR1@\([0-9]*\)$/\1/p' job.slurm)"
if [ -z "$margin" ] || [ "$margin" -lt 30 ]; then fail "signal margin '$margin' is not at least 30 s"; fi
grep -q '^#SBATCH --requeue$' job.slurm || fail "the script does not ask to be requeueable"

start=$SECONDS
job="$(sbatch --parsable job.slurm)"
# Poll scontrol (sbatch --wait polls ever more slowly). At most 20 minutes.
state="" restarts=0 exit_code=""
while [ $((SECONDS - start)) -lt 1200 ]; do
  info="$(scontrol show job "$job" 2>/dev/null || true)"
  state="$(sed -n 's/.*JobState=\([A-Z_]*\).*/\1/p' <<<"$info" | head -n 1)"
  restarts="$(sed -n 's/.*Restarts=\([0-9]*\).*/\1/p' <<<"$info" | head -n 1)"
  exit_code="$(sed -n 's/.* ExitCode=\([0-9:]*\).*/\1/p' <<<"$info" | head -n 1)"
  case "$state" in
    COMPLETED) break ;;
    FAILED|CANCELLED|TIMEOUT|NODE_FAIL|OUT_OF_MEMORY|BOOT_FAIL|DEADLINE|PREEMPTED) fail "job ended $state" ;;
  esac
  sleep 3
done
took=$((SECONDS - start))
[ "$state" = COMPLETED ] || { scontrol show job "$job" >&2 || true; fail "job not completed after ${took} s (state '$state')"; }
[ "$exit_code" = "0:0" ] || fail "job exit code $exit_code, expected 0:0"
if [ "${restarts:-0}" -lt 1 ]; then
  fail "the job finished in ${took} s without being requeued: the solve was shorter than one job on this machine (raise SLURM_E2E_ORDER above $n)"
fi
out="$(log)"
grep -q "lodestone job: USR1 received" <<<"$out" || fail "no USR1 from Slurm in the log"
grep -q "stopped early with a checkpoint in m.checkpoint.h5; requeueing (requeue 1" <<<"$out" || fail "no checkpoint and requeue in the log"
grep -q "^resuming from m.checkpoint.h5" <<<"$out" || fail "the requeued job did not resume from the checkpoint"
grep -q "lodestone job: finished; all 2 pairs converged" <<<"$out" || fail "no finish line in the log"
[ -f m.result.h5 ] || fail "no results file"
timeout 120 mpirun --allow-run-as-root --oversubscribe -n 2 "$LODESTONE" verify m.h5 m.result.h5 > verify.txt 2>&1 ||
  { cat verify.txt >&2; fail "lodestone verify rejected the result"; }
echo "--- job log (abridged) ---"
grep -E "^lodestone job:|^resuming from|^method|converged" <<<"$out" || true
echo "slurm_end_to_end: ok: $restarts requeue(s), finished in ${took} s, verified (order $n, signal margin ${margin} s)"
