#!/usr/bin/env bash
# Runs README's "A cluster job, from plan to finish" walkthrough exactly as written.
# `sbatch` is a stand-in that starts no Slurm: it checks the script with bash -n and
# records the submission. The plain-mpirun script (`--scheduler local`) runs for
# real. Then checks: the Slurm script was submitted and carries the requeue and
# signal directives, the local script finished, and verify passed.
set -euo pipefail
source "$LODESTONE_SOURCE/tests/cli/readme_walkthrough.bash"
walkthrough_run "A cluster job, from plan to finish"
cd "$WT_WORK"
grep -qx "bridge.slurm" "$WT_SUBMITTED" || wt_fail "bridge.slurm was not submitted"
grep -q '^#SBATCH --requeue$' bridge.slurm && grep -q '^#SBATCH --signal=B:USR1@' bridge.slurm \
  && grep -q '^#SBATCH --account=structures$' bridge.slurm || wt_fail "bridge.slurm lacks its directives"
grep -q "lodestone job: finished; all 6 pairs converged; results in bridge.result.h5" "$WT_LOG" \
  || wt_fail "the local script did not finish"
grep -q "^verified: all 6 converged pairs meet the tolerance" "$WT_LOG" || wt_fail "verify did not pass"
echo "readme_walkthrough_cluster: the walkthrough ran"
