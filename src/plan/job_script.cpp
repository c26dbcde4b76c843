// job_script: Slurm, PBS and plain mpirun scripts that run, stop, checkpoint and
// resume `lodestone solve` until it finishes. Every value from the user is
// validated here and reaches the shell only inside single quotes.
#include <fmt/format.h>

#include <cmath>
#include <sstream>

#include "lodestone/plan.hpp"
#include "plan/solve_choices.hpp"
#include "plan/units.hpp"

namespace lodestone {
namespace {

bool has_control(const std::string& v) {
  for (unsigned char c : v)
    if (c < 0x20 || c == 0x7f) return true;
  return false;
}

// A value as it can be shown in a message: control characters made visible.
std::string visible(const std::string& v) {
  std::string out;
  for (unsigned char c : v) {
    if (c == '\n') out += "\\n";
    else if (c == '\t') out += "\\t";
    else if (c < 0x20 || c == 0x7f) out += fmt::format("\\x{:02x}", c);
    else out += static_cast<char>(c);
  }
  return out;
}

bool name_char(char c) {
  return (c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z') || (c >= '0' && c <= '9') || c == '.' || c == '_' ||
         c == '-';
}

Status check_plain_name(const std::string& what, const std::string& value, bool allow_at) {
  if (value.empty()) return Status::usage(fmt::format("{} must not be empty", what));
  if (value.size() > 128) return Status::usage(fmt::format("{} '{}' is too long (at most 128 characters)", what, visible(value)));
  for (char c : value)
    if (!name_char(c) && !(allow_at && c == '@'))
      return Status::usage(fmt::format("{} '{}': use only letters, digits, '.', '_' and '-'{}", what, visible(value),
                                       allow_at ? " (and '@' for queue@server)" : ""));
  return Status::ok();
}

std::string comment_block(const Plan& p) {
  std::string out;
  std::istringstream in(describe_plan(p));
  for (std::string l; std::getline(in, l);) out += l.empty() ? "#\n" : "# " + l + "\n";
  return out;
}

std::int64_t mebibytes(double bytes) { return static_cast<std::int64_t>(std::ceil(bytes / (1024.0 * 1024.0))); }

// name='value'. A value holding $ or ` is meant literally; shellcheck is told so.
std::string assign(const std::string& name, const std::string& value) {
  std::string s;
  if (value.find_first_of("$`") != std::string::npos)
    s += "# The value below holds a literal $ or `, kept literal by the single quotes.\n"
         "# shellcheck disable=SC2016\n";
  return s + name + "=" + shell_quote(value) + "\n";
}

// Variables and the solver launch, shared by every scheduler.
std::string launch_block(const Plan& p, const JobOptions& o, std::int64_t time_budget, bool local) {
  std::string s;
  s += "set -u\n\n";
  s += "# What to run. Every value is single-quoted: nothing in it reaches the shell as code.\n";
  s += assign("lodestone", o.lodestone);
  s += assign("matrix", p.matrix_path);
  s += assign("group", p.group);
  s += assign("result", o.result_path);
  s += assign("checkpoint", o.checkpoint_path);
  s += fmt::format("pairs={}\n", p.pairs);
  s += fmt::format("method={}\n", shell_quote(p.method));
  s += fmt::format("ranks={}\n", p.ranks);
  s += fmt::format("checkpoint_every={}s\n", p.checkpoint_interval);
  s += "\n";
  s += "launcher=(mpirun -n \"$ranks\")\n";
  s += "if [ \"$(id -u)\" -eq 0 ]; then launcher+=(--allow-run-as-root); fi\n";
  if (local) {
    // A scheduler gives the job its slots; a workstation may have fewer cores than planned.
    s += "# OpenMPI starts at most one rank per core (cores, not hardware threads) unless told\n";
    s += "# to oversubscribe. With fewer cores here than planned ranks, oversubscribe and say so:\n";
    s += "# the run starts, slower than planned. Cores: the fewer of the CPUs this shell may\n";
    s += "# use (nproc) and the physical cores (lscpu); if neither answers, nothing is added.\n";
    s += "cores=$(nproc 2>/dev/null || echo 0)\n";
    s += "physical=$(lscpu -p=core,socket 2>/dev/null | grep -v '^#' | sort -u | wc -l)\n";
    s += "if [ \"$physical\" -gt 0 ] && { [ \"$cores\" -eq 0 ] || [ \"$physical\" -lt \"$cores\" ]; }; then cores=$physical; fi\n";
    s += "if [ \"$cores\" -gt 0 ] && [ \"$ranks\" -gt \"$cores\" ]; then\n";
    s += "  echo \"lodestone job: the plan has $ranks ranks and this machine $cores cores; starting them with\" \\\n";
    s += "    \"mpirun --oversubscribe (slower than planned; plan again with --cores-per-node $cores here)\" >&2\n";
    s += "  launcher+=(--oversubscribe)\n";
    s += "fi\n";
  }
  s += "solve_args=(solve \"$matrix\" --group \"$group\" --pairs \"$pairs\" --method \"$method\"\n";
  s += "  --out \"$result\" --checkpoint \"$checkpoint\" --resume --checkpoint-every \"$checkpoint_every\")\n";
  for (const std::string& w : plan::passed_solve_options(p)) s += fmt::format("solve_args+=({})\n", w);
  if (time_budget > 0) s += fmt::format("solve_args+=(--time-budget {}s)\n", time_budget);
  s += "\n";
  s += "# Stop requests reach this shell. Each is passed to the solver as USR1 (mpirun forwards\n";
  s += "# USR1 to every rank), and the solver checkpoints at its next iteration boundary and\n";
  s += "# exits with status 3.\n";
  s += "solver_pid=''\n";
  s += "stop_requested=''\n";
  s += "# ask_stop and end_solver run from traps, which shellcheck does not follow.\n";
  s += "# shellcheck disable=SC2317\n";
  s += "ask_stop() {\n";
  s += "  echo \"lodestone job: $1 received; asking the solver to checkpoint and stop\" >&2\n";
  s += "  stop_requested=1\n";
  s += "  if [ -n \"$solver_pid\" ]; then kill -USR1 \"$solver_pid\" 2>/dev/null || true; fi\n";
  s += "}\n";
  s += "# Ends mpirun (it ends the ranks, then exits) if it still runs; KILL if it lingers.\n";
  s += "# shellcheck disable=SC2317\n";
  s += "end_solver() {\n";
  s += "  if [ -z \"$solver_pid\" ] || ! kill -0 \"$solver_pid\" 2>/dev/null; then return 0; fi\n";
  s += "  kill -TERM \"$solver_pid\" 2>/dev/null || true\n";
  s += "  for _ in $(seq 100); do\n";
  s += "    kill -0 \"$solver_pid\" 2>/dev/null || return 0\n";
  s += "    sleep 0.1\n";
  s += "  done\n";
  s += "  kill -KILL \"$solver_pid\" 2>/dev/null || true\n";
  s += "}\n";
  s += "# However this shell ends, no solver is left running behind it.\n";
  s += "trap end_solver EXIT\n";
  if (local) {
    s += "# Closing the terminal (HUP) or Ctrl-\\ (QUIT) stops with a checkpoint like TERM. The first\n";
    s += "# Ctrl-C does too; a second one ends mpirun at once, without a checkpoint.\n";
    s += "interrupts=0\n";
    s += "stopped_at_once=''\n";
    for (const char* sig : {"USR1", "TERM", "HUP", "QUIT"}) s += fmt::format("trap 'ask_stop {0}' {0}\n", sig);
    s += "trap 'interrupts=$((interrupts + 1))\n";
    s += "  if [ \"$interrupts\" -lt 2 ]; then ask_stop INT; else\n";
    s += "    echo \"lodestone job: second INT received; ending the solver now, without a checkpoint\" >&2\n";
    s += "    if [ -n \"$solver_pid\" ] && kill -0 \"$solver_pid\" 2>/dev/null; then stopped_at_once=1; fi\n";
    s += "    end_solver\n";
    s += "  fi' INT\n";
    s += "# Ctrl-C signals every process in the terminal's foreground group. mpirun would take it\n";
    s += "# as a reason to end the ranks; in a session of its own it does not see it, and this\n";
    s += "# shell passes the stop request on as above.\n";
    s += "if command -v setsid >/dev/null 2>&1; then launcher=(setsid \"${launcher[@]}\"); fi\n";
  } else {
    s += "# TERM comes at the time limit, or from a cancel (scancel, qdel). A cancel must end the\n";
    s += "# chain: the solver still checkpoints, but the script neither requeues nor resubmits.\n";
    s += "warned=''\n";
    s += "cancelled=''\n";
    s += "trap 'warned=1; ask_stop USR1' USR1\n";
    if (p.scheduler == Scheduler::slurm) {
      s += "# Slurm warns (USR1) before its limit: a TERM that did not follow the warning is a cancel.\n";
      s += "trap 'if [ -z \"$warned\" ]; then cancelled=1; fi\n";
    } else {
      s += "# PBS gives no warning: a TERM earlier than the stop margin and a minute of slack before\n";
      s += "# the walltime (the job's clock starts before this script's) is a cancel.\n";
      s += fmt::format("limit_near={}\n", std::max<std::int64_t>(0, p.job_walltime - p.signal_margin - 60));
      s += "trap 'if [ -z \"$warned\" ] && [ \"$SECONDS\" -lt \"$limit_near\" ]; then cancelled=1; fi\n";
    }
    s += "  ask_stop TERM' TERM\n";
  }
  s += "\n";
  s += "# Run in the background and wait, so a trap runs as soon as a signal arrives.\n";
  s += "\"${launcher[@]}\" \"$lodestone\" \"${solve_args[@]}\" &\n";
  s += "solver_pid=$!\n";
  s += "while :; do\n";
  s += "  wait \"$solver_pid\"\n";
  s += "  status=$?\n";
  s += "  # Above 128 while the solver still runs: a trap interrupted the wait; wait again.\n";
  s += "  if [ \"$status\" -gt 128 ] && kill -0 \"$solver_pid\" 2>/dev/null; then continue; fi\n";
  s += "  break\n";
  s += "done\n";
  s += "# The solver may have ended just after a trap interrupted the wait: its own status\n";
  s += "# (bash keeps it) replaces the interruption's.\n";
  s += "if [ \"$status\" -gt 128 ]; then wait \"$solver_pid\"; status=$?; fi\n";
  if (local) {
    s += "# Ended at once by a second Ctrl-C: say so, whatever mpirun returned.\n";
    s += "if [ -n \"$stopped_at_once\" ]; then\n";
    s += "  echo \"lodestone job: ended at once by a second interrupt (status $status); work since the last checkpoint is lost. Run this script again to resume (from $checkpoint if it exists).\" >&2\n";
    s += "  exit 130\n";
    s += "fi\n";
  }
  s += "# Asked to stop, but ended otherwise: mpirun got a signal too and ended the ranks (it then\n";
  s += "# says 1, or a signal's status). A checkpoint on disk is whole (written under a temporary\n";
  s += "# name, then renamed), so go on as after a stop; work since it was written is lost.\n";
  s += "if [ -n \"$stop_requested\" ] && { [ \"$status\" -eq 1 ] || [ \"$status\" -gt 128 ]; } &&\n";
  s += "   { [ -f \"$checkpoint\" ] || [ -f \"$checkpoint.previous\" ]; }; then\n";
  s += "  echo \"lodestone job: the solver ended with status $status after the stop request; resuming will start from the checkpoint in $checkpoint\" >&2\n";
  s += "  status=3\n";
  s += "fi\n\n";
  return s;
}

// A cancelled batch job whose solver was ended before it could checkpoint (mpirun got the
// TERM too): say it was a cancel, not a failure.
std::string cancelled_without_checkpoint() {
  return "if [ -n \"$cancelled\" ] && { [ \"$status\" -eq 1 ] || [ \"$status\" -gt 128 ]; }; then\n"
         "  echo \"lodestone job: cancelled (TERM before the time limit) before the solver wrote a checkpoint; not resubmitting. Submit this script again to start over.\" >&2\n"
         "  exit \"$status\"\n"
         "fi\n";
}

// What every scheduler does with a status other than 3.
std::string other_statuses() {
  return "  0)\n"
         "    echo \"lodestone job: finished; all $pairs pairs converged; results in $result\" >&2\n"
         "    exit 0 ;;\n"
         "  4)\n"
         "    echo \"lodestone job: fewer pairs converged than asked (the matvec budget ran out, power met eigenvalues one vector cannot separate, or residuals checked at the end missed the tolerance); $result holds every pair with its residual. Not resubmitting.\" >&2\n"
         "    exit 4 ;;\n"
         "  1)\n"
         "    echo \"lodestone job: the solver failed (status 1: bad input or a runtime error; see the messages above). Not resubmitting.\" >&2\n"
         "    exit 1 ;;\n"
         "  2)\n"
         "    echo \"lodestone job: the solver refused its options (status 2); regenerate this script with 'lodestone plan'. Not resubmitting.\" >&2\n"
         "    exit 2 ;;\n"
         "  *)\n"
         "    echo \"lodestone job: the solver ended with status $status (killed by a signal, or mpirun failed). Not resubmitting.\" >&2\n"
         "    exit \"$status\" ;;\n";
}

std::string slurm_script(const Plan& p, const JobOptions& o) {
  std::string s = "#!/bin/bash\n";
  s += "# Slurm batch script written by `lodestone plan`; regenerate it rather than edit it.\n";
  s += comment_block(p);
  s += fmt::format("#SBATCH --job-name={}\n", o.job_name);
  s += fmt::format("#SBATCH --nodes={}\n", p.nodes);
  s += fmt::format("#SBATCH --ntasks-per-node={}\n", p.ranks_per_node);
  s += fmt::format("#SBATCH --time={}\n", plan::format_slurm_time(p.job_walltime));
  s += fmt::format("#SBATCH --mem={}M\n", mebibytes(p.node_memory_used));
  s += fmt::format("#SBATCH --output={}-%j.out\n", o.job_name);
  s += "#SBATCH --open-mode=append\n";
  s += fmt::format("#SBATCH --signal=B:USR1@{}\n", p.signal_margin);
  s += "#SBATCH --requeue\n";
  if (!o.account.empty()) s += fmt::format("#SBATCH --account={}\n", o.account);
  if (!o.partition.empty()) s += fmt::format("#SBATCH --partition={}\n", o.partition);
  s += "\n";
  s += "# Slurm warns this shell (USR1) the stop margin before the limit (or up to a minute\n";
  s += "# earlier). An iteration can outgrow that margin, so the solver also stops itself\n";
  s += "# (--time-budget, half the margin later than the warning) before an iteration it\n";
  s += "# predicts would not end in time.\n";
  s += launch_block(p, o, std::max<std::int64_t>(60, p.job_walltime - p.signal_margin / 2), false);
  s += cancelled_without_checkpoint();
  s += fmt::format("max_requeues={}\n", 2 * p.jobs_high + 2);
  s += "case \"$status\" in\n";
  s += "  3)\n";
  s += "    if [ -n \"$cancelled\" ]; then\n";
  s += "      echo \"lodestone job: cancelled (TERM before the time limit); stopped with a checkpoint in $checkpoint and not requeueing. Submit this script again to resume.\" >&2\n";
  s += "      exit 3\n";
  s += "    fi\n";
  s += "    requeues=\"${SLURM_RESTART_COUNT:-0}\"\n";
  s += "    if [ \"$requeues\" -ge \"$max_requeues\" ]; then\n";
  s += "      echo \"lodestone job: stopped early again after $requeues requeues (limit $max_requeues); not requeueing. Submit this script again to resume from $checkpoint.\" >&2\n";
  s += "      exit 3\n";
  s += "    fi\n";
  s += "    echo \"lodestone job: stopped early with a checkpoint in $checkpoint; requeueing (requeue $((requeues + 1)) of at most $max_requeues)\" >&2\n";
  s += "    if [ -z \"${SLURM_JOB_ID:-}\" ] || ! scontrol requeue \"$SLURM_JOB_ID\"; then\n";
  s += "      echo \"lodestone job: could not requeue; submit this script again to resume from $checkpoint\" >&2\n";
  s += "      exit 3\n";
  s += "    fi\n";
  s += "    exit 0 ;;\n";
  s += other_statuses();
  s += "esac\n";
  return s;
}

std::string pbs_script(const Plan& p, const JobOptions& o) {
  std::string s = "#!/bin/bash\n";
  s += "# PBS batch script written by `lodestone plan`; regenerate it rather than edit it.\n";
  s += comment_block(p);
  s += fmt::format("#PBS -N {}\n", o.job_name);
  s += fmt::format("#PBS -l select={}:ncpus={}:mpiprocs={}:mem={}mb\n", p.nodes, p.cores_per_node, p.ranks_per_node,
                   mebibytes(p.node_memory_used));
  s += "#PBS -l place=scatter\n";
  s += fmt::format("#PBS -l walltime={}\n", plan::format_hms(p.job_walltime));
  s += "#PBS -j oe\n";
  s += "#PBS -S /bin/bash\n";
  if (!o.account.empty()) s += fmt::format("#PBS -A {}\n", o.account);
  if (!o.partition.empty()) s += fmt::format("#PBS -q {}\n", o.partition);
  s += "\n";
  s += "# PBS gives no warning before the walltime ends: the solver stops itself in time\n";
  s += "# (--time-budget), and the next job in the chain resumes from the checkpoint.\n";
  s += "cd \"${PBS_O_WORKDIR:-.}\" || exit 1\n";
  s += launch_block(p, o, std::max<std::int64_t>(60, p.job_walltime - p.signal_margin), false);
  s += assign("script", o.script_path);
  s += cancelled_without_checkpoint();
  s += fmt::format("max_jobs={}\n", 2 * p.jobs_high + 2);
  s += "case \"$status\" in\n";
  s += "  3)\n";
  s += "    if [ -n \"$cancelled\" ]; then\n";
  s += "      echo \"lodestone job: cancelled (TERM before the time limit); stopped with a checkpoint in $checkpoint and not resubmitting. Submit this script again to resume.\" >&2\n";
  s += "      exit 3\n";
  s += "    fi\n";
  s += "    chain=\"${LODESTONE_CHAIN:-1}\"\n";
  s += "    if [ \"$chain\" -ge \"$max_jobs\" ]; then\n";
  s += "      echo \"lodestone job: stopped early again in job $chain of the chain (limit $max_jobs); not resubmitting. Submit this script again to resume from $checkpoint.\" >&2\n";
  s += "      exit 3\n";
  s += "    fi\n";
  s += "    if [ -z \"${PBS_JOBID:-}\" ]; then\n";
  s += "      echo \"lodestone job: not running under PBS (no PBS_JOBID); submit this script with qsub to resume from $checkpoint\" >&2\n";
  s += "      exit 3\n";
  s += "    fi\n";
  s += "    if [ ! -f \"$script\" ]; then\n";
  s += "      echo \"lodestone job: cannot chain the next job: $script is gone; submit it again to resume\" >&2\n";
  s += "      exit 3\n";
  s += "    fi\n";
  s += "    # The next job starts once this one has ended, whatever its state.\n";
  s += "    if ! next=$(qsub -W depend=afterany:\"$PBS_JOBID\" -v \"LODESTONE_CHAIN=$((chain + 1))\" \"$script\"); then\n";
  s += "      echo \"lodestone job: qsub failed; submit this script again to resume from $checkpoint\" >&2\n";
  s += "      exit 3\n";
  s += "    fi\n";
  s += "    echo \"lodestone job: stopped early with a checkpoint in $checkpoint; job $((chain + 1)) of the chain is $next\" >&2\n";
  s += "    exit 0 ;;\n";
  s += other_statuses();
  s += "esac\n";
  return s;
}

std::string local_script(const Plan& p, const JobOptions& o) {
  std::string s = "#!/bin/bash\n";
  s += "# Workstation script written by `lodestone plan`; regenerate it rather than edit it.\n";
  s += "# Ctrl-C (or closing the terminal) stops the solver at its next iteration with a\n";
  s += "# checkpoint; run the script again to resume. A second Ctrl-C ends it at once.\n";
  s += comment_block(p);
  s += "\n";
  s += launch_block(p, o, p.job_walltime > 0 ? std::max<std::int64_t>(1, p.job_walltime - p.signal_margin) : 0, true);
  s += "case \"$status\" in\n";
  s += "  3)\n";
  s += "    echo \"lodestone job: stopped early with a checkpoint in $checkpoint; run this script again to resume\" >&2\n";
  s += "    exit 3 ;;\n";
  s += other_statuses();
  s += "esac\n";
  return s;
}

}  // namespace

std::string shell_quote(const std::string& value) {
  std::string out = "'";
  for (char c : value) {
    if (c == '\'') out += "'\\''";
    else out += c;
  }
  return out + "'";
}

Status check_script_path(const std::string& what, const std::string& value) {
  if (value.empty()) return Status::usage(fmt::format("{} must not be empty", what));
  if (has_control(value))
    return Status::usage(fmt::format("{} '{}' contains a newline or another control character; a job script "
                                     "cannot carry it safely: rename the file", what, visible(value)));
  if (value.front() == '-')
    return Status::usage(fmt::format("{} '{}' starts with '-' and would be read as an option; write ./{}", what,
                                     value, value));
  if (value.size() > 4096) return Status::usage(fmt::format("{} is too long (at most 4096 characters)", what));
  return Status::ok();
}

Status check_script_name(const std::string& what, const std::string& value) {
  LODESTONE_TRY(check_plain_name(what, value, false));
  const char c = value.front();
  if (!((c >= 'a' && c <= 'z') || (c >= 'A' && c <= 'Z')))
    return Status::usage(fmt::format("{} '{}' must start with a letter", what, value));
  if (value.size() > 63) return Status::usage(fmt::format("{} '{}' is too long (at most 63 characters)", what, value));
  return Status::ok();
}

Result<std::string> job_script(const Plan& plan, const JobOptions& o) {
  LODESTONE_TRY(check_script_name("--job-name", o.job_name));
  if (!o.account.empty()) LODESTONE_TRY(check_plain_name("--account", o.account, false));
  if (!o.partition.empty()) LODESTONE_TRY(check_plain_name("--partition", o.partition, plan.scheduler == Scheduler::pbs));
  LODESTONE_TRY(check_script_path("the matrix path", plan.matrix_path));
  LODESTONE_TRY(check_script_path("--group", plan.group));
  LODESTONE_TRY(check_script_path("--result", o.result_path));
  LODESTONE_TRY(check_script_path("--checkpoint", o.checkpoint_path));
  LODESTONE_TRY(check_script_path("--lodestone", o.lodestone));
  if (plan.scheduler == Scheduler::pbs) LODESTONE_TRY(check_script_path("--out", o.script_path));
  if (!plan.fits) return Status::input("the run does not fit as asked (see the warnings); no script written");
  switch (plan.scheduler) {
    case Scheduler::slurm: return slurm_script(plan, o);
    case Scheduler::pbs: return pbs_script(plan, o);
    case Scheduler::local: return local_script(plan, o);
  }
  return Status::usage("unknown scheduler");
}

}  // namespace lodestone
