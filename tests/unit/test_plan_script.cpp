// Job scripts from a plan: directives in each scheduler's syntax, quoting, and
// refusal of values no script may carry.
#include <gtest/gtest.h>

#include "lodestone/plan.hpp"

using namespace lodestone;

namespace {

Plan sample(Scheduler s) {
  Plan p;
  p.matrix_path = "data/deck model.h5";
  p.group = "/matrix";
  p.rows = 1000;
  p.nnz = 5000;
  p.symmetric = true;
  p.method = "chebyshev";
  p.pairs = 6;
  p.block = 8;
  p.scheduler = s;
  p.nodes = 3;
  p.ranks_per_node = 16;
  p.ranks = 48;
  p.cores_per_node = 32;
  p.node_memory = std::int64_t{64} << 30;
  p.node_memory_used = 10.5 * 1024 * 1024 * 1024;  // 10752 MiB
  p.job_walltime = 2 * 3600 + 30 * 60;
  p.signal_margin = 95;
  p.checkpoint_interval = 900;
  p.jobs_low = 1;
  p.jobs_high = 3;
  return p;
}

JobOptions options() {
  JobOptions o;
  o.job_name = "deck-modes";
  o.account = "structures";
  o.partition = "long";
  o.script_path = "jobs/deck.pbs";
  o.result_path = "deck.result.h5";
  o.checkpoint_path = "deck.checkpoint.h5";
  return o;
}

bool has_line(const std::string& text, const std::string& line) {
  return text.find("\n" + line + "\n") != std::string::npos;
}

}  // namespace

TEST(PlanScript, ShellQuote) {
  EXPECT_EQ(shell_quote("abc"), "'abc'");
  EXPECT_EQ(shell_quote("it's"), "'it'\\''s'");
  EXPECT_EQ(shell_quote("$(touch x) `y` ;z"), "'$(touch x) `y` ;z'");
  EXPECT_EQ(shell_quote(""), "''");
}

TEST(PlanScript, SlurmDirectives) {
  auto s = job_script(sample(Scheduler::slurm), options());
  ASSERT_TRUE(s.is_ok()) << s.status().message();
  const std::string& t = *s;
  EXPECT_EQ(t.rfind("#!/bin/bash\n", 0), 0u);
  EXPECT_TRUE(has_line(t, "#SBATCH --job-name=deck-modes"));
  EXPECT_TRUE(has_line(t, "#SBATCH --nodes=3"));
  EXPECT_TRUE(has_line(t, "#SBATCH --ntasks-per-node=16"));
  EXPECT_TRUE(has_line(t, "#SBATCH --time=02:30:00"));
  EXPECT_TRUE(has_line(t, "#SBATCH --mem=10752M"));
  EXPECT_TRUE(has_line(t, "#SBATCH --output=deck-modes-%j.out"));
  EXPECT_TRUE(has_line(t, "#SBATCH --open-mode=append"));
  EXPECT_TRUE(has_line(t, "#SBATCH --signal=B:USR1@95"));
  EXPECT_TRUE(has_line(t, "#SBATCH --requeue"));
  EXPECT_TRUE(has_line(t, "#SBATCH --account=structures"));
  EXPECT_TRUE(has_line(t, "#SBATCH --partition=long"));
  EXPECT_TRUE(has_line(t, "matrix='data/deck model.h5'"));
  EXPECT_TRUE(has_line(t, "ranks=48"));
  EXPECT_TRUE(has_line(t, "max_requeues=8"));  // 2 x 3 chained jobs + 2
  EXPECT_NE(t.find("scontrol requeue \"$SLURM_JOB_ID\""), std::string::npos);
  EXPECT_NE(t.find("--checkpoint \"$checkpoint\" --resume"), std::string::npos);
  // Every directive comes before the first command.
  EXPECT_LT(t.rfind("#SBATCH"), t.find("\nset -u"));
}

TEST(PlanScript, PbsDirectives) {
  auto s = job_script(sample(Scheduler::pbs), options());
  ASSERT_TRUE(s.is_ok()) << s.status().message();
  const std::string& t = *s;
  EXPECT_TRUE(has_line(t, "#PBS -N deck-modes"));
  EXPECT_TRUE(has_line(t, "#PBS -l select=3:ncpus=32:mpiprocs=16:mem=10752mb"));
  EXPECT_TRUE(has_line(t, "#PBS -l walltime=02:30:00"));
  EXPECT_TRUE(has_line(t, "#PBS -A structures"));
  EXPECT_TRUE(has_line(t, "#PBS -q long"));
  // PBS has no advance warning: the solver gets a budget of walltime less the margin.
  EXPECT_TRUE(has_line(t, "solve_args+=(--time-budget 8905s)"));
  EXPECT_TRUE(has_line(t, "script='jobs/deck.pbs'"));
  EXPECT_NE(t.find("qsub -W depend=afterany:\"$PBS_JOBID\""), std::string::npos);
  EXPECT_LT(t.rfind("#PBS"), t.find("\ncd \"${PBS_O_WORKDIR:-.}\""));
}

TEST(PlanScript, LocalScript) {
  auto p = sample(Scheduler::local);
  p.nodes = 1;
  p.ranks = 4;
  p.job_walltime = 0;
  auto s = job_script(p, options());
  ASSERT_TRUE(s.is_ok()) << s.status().message();
  EXPECT_EQ(s->find("#SBATCH"), std::string::npos);
  EXPECT_EQ(s->find("#PBS"), std::string::npos);
  EXPECT_EQ(s->find("--time-budget"), std::string::npos);
  EXPECT_NE(s->find("fi' INT\n"), std::string::npos);
  // Oversubscribes only when the ranks exceed the cores found at run time, before the launch
  // (tests/cli/plan_hostile.sh runs it with stand-in core counts).
  const auto check = s->find("if [ \"$cores\" -gt 0 ] && [ \"$ranks\" -gt \"$cores\" ]; then\n");
  const auto add = s->find("\n  launcher+=(--oversubscribe)\n");
  ASSERT_NE(check, std::string::npos);
  ASSERT_NE(add, std::string::npos);
  EXPECT_LT(check, add);
  EXPECT_LT(add, s->find("\"${launcher[@]}\""));
  EXPECT_NE(s->find("cores=$(nproc"), std::string::npos);
}

// scancel and qdel send TERM, as the time limit does: a TERM with no USR1 warning before
// it (under PBS, which never warns: an early one) is a cancel, and the script neither requeues nor submits the next job
// (tests/cli/plan_batch_cancel.sh runs the scripts with stand-ins).
TEST(PlanScript, BatchScriptsTellACancelFromTheLimit) {
  for (Scheduler sch : {Scheduler::slurm, Scheduler::pbs}) {
    auto s = job_script(sample(sch), options());
    ASSERT_TRUE(s.is_ok()) << s.status().message();
    const std::string& t = *s;
    EXPECT_TRUE(has_line(t, "trap 'warned=1; ask_stop USR1' USR1")) << scheduler_name(sch);
    if (sch == Scheduler::pbs) {
      // No warning under PBS: walltime 9000 s, less the margin (95 s) and a minute of slack.
      EXPECT_TRUE(has_line(t, "limit_near=8845"));
      EXPECT_TRUE(has_line(t, "trap 'if [ -z \"$warned\" ] && [ \"$SECONDS\" -lt \"$limit_near\" ]; then cancelled=1; fi"));
    } else {
      // Slurm always warns before its limit: any TERM before the warning is a cancel.
      EXPECT_EQ(t.find("limit_near"), std::string::npos);
      EXPECT_TRUE(has_line(t, "trap 'if [ -z \"$warned\" ]; then cancelled=1; fi"));
    }
    const auto cancel = t.find("    if [ -n \"$cancelled\" ]; then\n");
    ASSERT_NE(cancel, std::string::npos) << scheduler_name(sch);
    const auto resubmit = t.find(sch == Scheduler::pbs ? "qsub -W" : "scontrol requeue");
    EXPECT_LT(cancel, resubmit) << scheduler_name(sch);
    EXPECT_LT(t.find("exit 3\n", cancel), resubmit) << scheduler_name(sch);
    EXPECT_EQ(t.find("' HUP\n"), std::string::npos) << scheduler_name(sch);
  }
}

// Closing the terminal or Ctrl-\ stops with a checkpoint; a second Ctrl-C ends mpirun; no
// solver outlives the script (tests/cli/plan_local_signals.sh runs it).
TEST(PlanScript, LocalScriptSignals) {
  auto p = sample(Scheduler::local);
  p.nodes = 1;
  p.ranks = 4;
  auto s = job_script(p, options());
  ASSERT_TRUE(s.is_ok()) << s.status().message();
  const std::string& t = *s;
  for (const char* sig : {"USR1", "TERM", "HUP", "QUIT"})
    EXPECT_TRUE(has_line(t, std::string("trap 'ask_stop ") + sig + "' " + sig)) << sig;
  EXPECT_TRUE(has_line(t, "trap end_solver EXIT"));
  EXPECT_NE(t.find("if [ \"$interrupts\" -lt 2 ]; then ask_stop INT; else"), std::string::npos);
  EXPECT_NE(t.find("exit 130"), std::string::npos);
  EXPECT_EQ(t.find("limit_near="), std::string::npos);
}

TEST(PlanScript, BatchScriptsLeaveSlotsToTheScheduler) {
  for (Scheduler sch : {Scheduler::slurm, Scheduler::pbs}) {
    auto s = job_script(sample(sch), options());
    ASSERT_TRUE(s.is_ok()) << s.status().message();
    EXPECT_EQ(s->find("--oversubscribe"), std::string::npos) << scheduler_name(sch);
    EXPECT_EQ(s->find("nproc"), std::string::npos) << scheduler_name(sch);
  }
}

TEST(PlanScript, HostileNamesAreRefused) {
  for (const char* name : {"a b", "a;b", "$(id)", "`id`", "a'b", "a\"b", "x\ny", "1abc", "", "a/b", "-x"}) {
    auto o = options();
    o.job_name = name;
    auto s = job_script(sample(Scheduler::slurm), o);
    ASSERT_FALSE(s.is_ok()) << name;
    EXPECT_EQ(s.status().kind(), ErrorKind::usage);
    EXPECT_NE(s.status().message().find("--job-name"), std::string::npos) << s.status().message();
  }
  for (const char* account : {"a b", "a;b", "$(id)", "x\ny", "a@b"}) {
    auto o = options();
    o.account = account;
    auto s = job_script(sample(Scheduler::slurm), o);
    ASSERT_FALSE(s.is_ok()) << account;
    EXPECT_NE(s.status().message().find("--account"), std::string::npos) << s.status().message();
  }
  // PBS queues may name a server.
  auto o = options();
  o.partition = "workq@head1";
  EXPECT_TRUE(job_script(sample(Scheduler::pbs), o).is_ok());
}

TEST(PlanScript, PathsWithControlCharactersAreRefusedOthersQuoted) {
  auto p = sample(Scheduler::slurm);
  p.matrix_path = "evil\n$(touch /tmp/x).h5";
  auto s = job_script(p, options());
  ASSERT_FALSE(s.is_ok());
  EXPECT_NE(s.status().message().find("evil\\n$(touch /tmp/x).h5"), std::string::npos) << s.status().message();
  EXPECT_NE(s.status().message().find("newline"), std::string::npos);
  p.matrix_path = "-rf";
  EXPECT_FALSE(job_script(p, options()).is_ok());
  p.matrix_path = "it's $(touch /tmp/x) `id`; rm -rf ~.h5";
  auto q = job_script(p, options());
  ASSERT_TRUE(q.is_ok());
  EXPECT_TRUE(has_line(*q, "matrix='it'\\''s $(touch /tmp/x) `id`; rm -rf ~.h5'"));
  auto o = options();
  o.result_path = "r\tx.h5";
  EXPECT_FALSE(job_script(sample(Scheduler::slurm), o).is_ok());
}

TEST(PlanScript, APlanThatDoesNotFitWritesNoScript) {
  auto p = sample(Scheduler::slurm);
  p.fits = false;
  auto s = job_script(p, options());
  ASSERT_FALSE(s.is_ok());
  EXPECT_EQ(s.status().kind(), ErrorKind::input);
}
