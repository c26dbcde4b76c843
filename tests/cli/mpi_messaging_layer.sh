#!/usr/bin/env bash
# On one machine, outside a batch job, with no choice of the user's, the command names
# Open MPI's ob1 messaging layer before MPI starts, and Open MPI then loads no other
# (src/api/mpi_transport.hpp); `--version` says so. A batch job, a layer chosen in the
# environment, or a choice in a parameter file leaves the choice to Open MPI, which then
# looks at all its layers. Solves give the same eigenvalues either way.
source "$LODESTONE_SOURCE/tests/support/script_env.bash"
# Whatever this shell was started in: no batch job, no choice of layer.
unset SLURM_JOB_ID PBS_JOBID LSB_JOBID FLUX_JOB_ID OMPI_MCA_pml OMPI_MCA_mtl OMPI_MCA_mca_base_param_files
version_line() { "$@" --version | sed -n 3p; }
# The layers Open MPI loads, from its own account of the selection (pml_base_verbose).
layers_loaded() {
  OMPI_MCA_pml_base_verbose=10 "$@" --version 2>&1 |
    sed -n 's/.*components_register: found loaded component \([a-z0-9]*\).*/\1/p' | sort -u | tr '\n' ' '
}

named="mpi: Open MPI's ob1 messaging layer, named by Lodestone for a run on one machine (OMPI_MCA_pml=ob1; set OMPI_MCA_pml yourself to choose)"
[ "$(version_line "$LODESTONE")" = "$named" ] || fail "one process: $(version_line "$LODESTONE")"
[ "$(run 2 "$LODESTONE" --version | sed -n 3p)" = "$named" ] || fail "mpirun -n 2 on one machine: not named"
[ "$(layers_loaded "$LODESTONE")" = "ob1 " ] || fail "Open MPI loaded other layers: $(layers_loaded "$LODESTONE")"

in_job="$(SLURM_JOB_ID=77 version_line "$LODESTONE")"
[ "$in_job" = "mpi: messaging layer as Open MPI chooses: a batch job, SLURM_JOB_ID is set" ] || fail "batch job: $in_job"
[ "$(SLURM_JOB_ID=77 layers_loaded "$LODESTONE")" != "ob1 " ] || fail "in a batch job Open MPI was still told ob1"
[ "$(OMPI_MCA_pml=^cm version_line "$LODESTONE")" = "mpi: messaging layer as Open MPI chooses: OMPI_MCA_pml is set" ] ||
  fail "the user's OMPI_MCA_pml was not left alone"
[ "$(PBS_JOBID=9.server run 2 -x PBS_JOBID "$LODESTONE" --version | sed -n 3p)" = \
  "mpi: messaging layer as Open MPI chooses: a batch job, PBS_JOBID is set" ] || fail "PBS job under mpirun"
printf 'pml = cm\n' > "$work/mine.conf"
[ "$(OMPI_MCA_mca_base_param_files="$work/mine.conf" version_line "$LODESTONE")" = \
  "mpi: messaging layer as Open MPI chooses: a messaging layer is chosen in $work/mine.conf" ] ||
  fail "a choice in a parameter file was not left alone"

# The same eigenvalues with Lodestone's choice and with Open MPI's.
"$LODESTONE" generate laplace2d --nx 60 --ny 50 "$work/a.h5" >/dev/null
run 2 "$LODESTONE" solve "$work/a.h5" --pairs 4 --select largest --quiet --out "$work/named.h5"
run 2 -x SLURM_JOB_ID=77 "$LODESTONE" solve "$work/a.h5" --pairs 4 --select largest --quiet --out "$work/open.h5"
"$PY" - "$work/named.h5" "$work/open.h5" <<'PY'
import sys, h5py
a, b = (h5py.File(f, "r")["eigenvalues"][...] for f in sys.argv[1:])
assert len(a) == 4 and abs(a - b).max() <= 1e-12 * abs(a).max(), (a, b)
PY
echo "ok: ob1 named on one machine and nothing else loaded; batch jobs and the user's choices left to Open MPI"
