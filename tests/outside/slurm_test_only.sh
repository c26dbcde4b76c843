#!/usr/bin/env bash
# A plan-generated Slurm script is accepted by a real Slurm (Debian's 22.05): a
# single-node Slurm on localhost (scripts/local-slurm, installing slurm and munge
# if missing) checks it with `sbatch --test-only`, which validates the directives
# against the node without running anything; a script asking for more than the node
# has is refused, so the check can fail. The daemons are stopped on exit.
set -euo pipefail
: "${LODESTONE:?}" "${LODESTONE_SOURCE:?}"
tmp="$(mktemp -d)"
export LOCAL_SLURM_DIR="$tmp/slurm"
export LOCAL_SLURM_PORT=$((20000 + RANDOM % 20000))
cleanup() { "$LODESTONE_SOURCE/scripts/local-slurm" stop >/dev/null 2>&1 || true; rm -rf "$tmp"; }
trap cleanup EXIT
fail() { echo "FAIL: $*" >&2; exit 1; }
timeout 300 "$LODESTONE_SOURCE/scripts/local-slurm" start >/dev/null
export SLURM_CONF="$LOCAL_SLURM_DIR/slurm.conf"
cd "$tmp"
cpus="$(slurmd -C | sed -n 's/.* CPUs=\([0-9]*\).*/\1/p' | head -n 1)"
mem_mb="$(slurmd -C | sed -n 's/.* RealMemory=\([0-9]*\).*/\1/p' | head -n 1)"
if [ -z "$cpus" ] || [ -z "$mem_mb" ]; then fail "cannot read the node's CPUs and memory from slurmd -C"; fi
timeout 120 "$LODESTONE" generate laplace1d --n 20000 m.h5 >/dev/null
timeout 120 "$LODESTONE" plan m.h5 --pairs 3 --scheduler slurm --cores-per-node "$cpus" --node-memory "${mem_mb}M" \
  --max-walltime 00:03:00 --job-name test-only --out ok.slurm >/dev/null
timeout 60 sbatch --test-only ok.slurm > out.txt 2>&1 || { cat out.txt; fail "sbatch --test-only refused the plan's script"; }
grep -q "to start at" out.txt || { cat out.txt; fail "unexpected sbatch answer"; }
# Two nodes on a one-node cluster: Slurm must refuse it.
timeout 120 "$LODESTONE" plan m.h5 --pairs 3 --scheduler slurm --cores-per-node "$cpus" --node-memory "${mem_mb}M" \
  --nodes 2 --max-walltime 00:03:00 --job-name too-big --out big.slurm >/dev/null
if timeout 60 sbatch --test-only big.slurm > out.txt 2>&1; then cat out.txt; fail "sbatch accepted two nodes on a one-node cluster"; fi
echo "slurm_test_only: ok"
