#!/usr/bin/env bash
# NOT part of the suite (tests/manual is not globbed): a plan-generated Slurm script on a
# real single-node Slurm, with a stand-in for `lodestone solve --checkpoint --resume` that
# waits for USR1, "checkpoints" and exits 3, and on the next run finds its checkpoint and
# exits 0. It shows the script's signal forwarding through mpirun, the requeue, and the
# resumed run, in about 2 minutes (3-minute limit, 60 s margin; the plan allows for a
# warning up to 60 s early, so 2-minute Slurm jobs do not fit). The real end-to-end test will
# replace the stand-in by `lodestone solve` once --checkpoint/--resume exist.
#   LODESTONE=build/src/lodestone LODESTONE_SOURCE=. bash tests/manual/slurm_requeue_standin.sh
set -euo pipefail
: "${LODESTONE:?}" "${LODESTONE_SOURCE:?}"
tmp="$(mktemp -d)"
export LOCAL_SLURM_DIR="$tmp/slurm"
export LOCAL_SLURM_PORT=$((20000 + RANDOM % 20000))
cleanup() { "$LODESTONE_SOURCE/scripts/local-slurm" stop >/dev/null 2>&1 || true; rm -rf "$tmp"; }
trap cleanup EXIT
fail() { echo "FAIL: $*" >&2; cat "$tmp"/rq-*.out >&2 2>/dev/null || true; exit 1; }
timeout 300 "$LODESTONE_SOURCE/scripts/local-slurm" start >/dev/null
export SLURM_CONF="$LOCAL_SLURM_DIR/slurm.conf"
cd "$tmp"
cat > standin <<'STUB'
#!/usr/bin/env bash
ck=""; prev=""
for a in "$@"; do [ "$prev" = "--checkpoint" ] && ck="$a"; prev="$a"; done
rank="${OMPI_COMM_WORLD_RANK:-0}"
if [ -e "$ck" ]; then echo "rank $rank: resumed (restart ${SLURM_RESTART_COUNT:-0})"; exit 0; fi
trap 'echo "rank $rank: USR1, checkpointing"; touch "$ck"; exit 3' USR1
for _ in $(seq 1 1800); do sleep 0.1; done
exit 9
STUB
chmod +x standin
cpus="$(slurmd -C | sed -n 's/.* CPUs=\([0-9]*\).*/\1/p' | head -n 1)"
mem_mb="$(slurmd -C | sed -n 's/.* RealMemory=\([0-9]*\).*/\1/p' | head -n 1)"
timeout 120 "$LODESTONE" generate laplace1d --n 20000 m.h5 >/dev/null
timeout 120 "$LODESTONE" plan m.h5 --pairs 2 --scheduler slurm --cores-per-node "$cpus" --node-memory "${mem_mb}M" \
  --max-walltime 00:03:00 --job-name rq --lodestone "$tmp/standin" --out rq.slurm >/dev/null
job="$(sbatch --parsable rq.slurm)"
# Poll (sbatch --wait polls ever more slowly): at most 5 minutes.
for _ in $(seq 1 150); do
  state="$(scontrol show job "$job" 2>/dev/null | sed -n 's/.*JobState=\([A-Z_]*\).*/\1/p')"
  restarts="$(scontrol show job "$job" 2>/dev/null | sed -n 's/.*Restarts=\([0-9]*\).*/\1/p')"
  [ "$state" = COMPLETED ] && break
  case "$state" in FAILED|CANCELLED|TIMEOUT|NODE_FAIL|OUT_OF_MEMORY) fail "job ended $state" ;; esac
  sleep 2
done
[ "$state" = COMPLETED ] || fail "job did not complete (state $state)"
[ "$restarts" = 1 ] || fail "expected 1 requeue, saw $restarts"
grep -q "USR1 received" rq-*.out || fail "no USR1 in the log"
grep -q "requeueing (requeue 1" rq-*.out || fail "no requeue in the log"
grep -q "resumed (restart 1)" rq-*.out || fail "no resumed run"
grep -q "finished; all 2 pairs converged" rq-*.out || fail "no finish line"
echo "slurm_requeue_standin: ok"
