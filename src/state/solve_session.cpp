// Resume, periodic checkpoints and early stop for a solve (state/solve_session.hpp).
#include "state/solve_session.hpp"

#include <fmt/format.h>

#include <cerrno>
#include <cstdio>
#include <cstring>
#include <filesystem>

#include "state/checkpoint_output.hpp"
#include "state/method_state_adapter.hpp"
#include "state/stop_signals.hpp"
#include "support/collective.hpp"
#include "support/format.hpp"
#include "support/log_stage.hpp"

namespace lodestone::state {
namespace {

// After a resume from FILE.previous: FILE is damaged (or missing). Renamed to
// FILE.damaged, it is no longer rotated over the good previous generation by the
// next checkpoint write; `said` then tells the user where it went.
Status set_aside_damaged(MPI_Comm comm, const std::string& path, std::string& said) {
  Status s;
  if (comm_rank(comm) == 0) {
    std::error_code ec;
    if (std::filesystem::exists(path, ec)) {
      const std::string aside = path + ".damaged";
      if (std::rename(path.c_str(), aside.c_str()) != 0)
        s = Status::input(fmt::format("{}: cannot set the damaged checkpoint aside as {}: {}", path, aside,
                                      std::strerror(errno)));
      else
        said = fmt::format(" (the damaged file is kept as {})", aside);
    }
  }
  return agree(comm, s);
}

}  // namespace

Result<std::unique_ptr<SolveSession>> SolveSession::open(const Matrix& matrix, const CheckpointPlan& plan,
                                                         RunIdentity identity) {
  LODESTONE_TRY(check_checkpoint_plan(plan));
  if (!plan.path.empty()) {
    // Refuse a checkpoint path that cannot be written or whose checkpoints would
    // overwrite an input before any work (nothing is created: each checkpoint
    // gets a fresh temporary name).
    LODESTONE_TRY(ckpt::check_checkpoint_path(matrix.comm(), plan.path, plan.inputs));
  }
  ClockOptions o;
  o.time_budget = plan.time_budget_seconds;
  o.checkpoint_every = plan.every_seconds;
  o.checkpointing = !plan.path.empty();
  // Each rank counts from its own start (clocks of different nodes need not
  // agree); the clock takes the maximum elapsed time over ranks.
  const double start = plan.clock_start < 0 ? MPI_Wtime() : plan.clock_start;
  RunClock clock(matrix.comm(), o, start);
  if (!plan.path.empty()) install_stop_handlers();
  return std::unique_ptr<SolveSession>(new SolveSession(matrix, plan, std::move(identity), std::move(clock)));
}

SolveSession::SolveSession(const Matrix& matrix, CheckpointPlan plan, RunIdentity identity, RunClock clock)
    : matrix_(matrix), plan_(std::move(plan)), identity_(std::move(identity)), clock_(std::move(clock)) {}

// The stop handlers stay installed until the process ends: a signal that
// arrives after the last boundary (while the results are written) is too late
// to stop anything, and the command finishes normally instead of dying.
SolveSession::~SolveSession() = default;

Result<bool> SolveSession::resume(methods::Method& method, algebra::Operator& op, const methods::Problem& problem,
                                  std::vector<HistoryRecord>& history, double& seconds_before,
                                  const std::function<void(const std::string&)>& note) {
  MPI_Comm comm = matrix_.comm();
  if (!active() || !plan_.resume || !checkpoint_exists(comm, plan_.path)) return false;
  const MatrixInfo& info = matrix_.info();
  auto c = read_checkpoint(comm, plan_.path, info.row_begin, info.row_end);
  if (!c) return c.status();
  LODESTONE_TRY(check_resumable(*c, identity_, c->read_from));
  std::string set_aside;
  if (c->read_from != plan_.path) LODESTONE_TRY(set_aside_damaged(comm, plan_.path, set_aside));
  auto ms = import_state(matrix_.petsc(), c->state);
  if (!ms) return ms.status();
  LODESTONE_TRY(agree(comm, method.restore(op, problem, *ms)));
  // The products restore() repeats to rebuild its state are not counted: an
  // interrupted run counts the same products as one that ran straight through.
  op.set_matvecs(c->matvecs);
  history = c->history;
  seconds_before = c->elapsed_seconds;
  if (note && comm_rank(comm) == 0) {
    if (!c->note.empty()) note("warning: " + c->note + set_aside);
    note(fmt::format("resuming from {} (written {} by {} rank(s)): {} iterations, {} matvecs, {} of {} pairs converged",
                     c->read_from, c->written_at, c->written_by_ranks, c->iterations, c->matvecs, c->converged,
                     identity_.options.count("pairs") ? identity_.options.at("pairs") : "?"));
  }
  return true;
}

Status SolveSession::write(methods::Method& method, algebra::Operator& op, const std::vector<HistoryRecord>& history,
                           std::int64_t pairs, double solve_seconds) {
  LogStage stage("Write checkpoint");
  const double t = MPI_Wtime();
  methods::MethodState ms;
  LODESTONE_TRY(agree(matrix_.comm(), method.save(ms)));
  const MatrixInfo& info = matrix_.info();
  Checkpoint c;
  c.identity = identity_;
  c.state = export_state(method.name(), ms, info.rows, info.row_begin, info.row_end);
  c.history = history;
  // Times are measured on every rank; the file records rank 0's, so the
  // replicated part is the same everywhere.
  std::vector<double> seconds;
  for (const auto& h : c.history) seconds.push_back(h.seconds);
  MPI_Bcast(seconds.data(), static_cast<int>(seconds.size()), MPI_DOUBLE, 0, matrix_.comm());
  for (std::size_t k = 0; k < seconds.size(); ++k) c.history[k].seconds = seconds[k];
  c.iterations = method.iterations();
  c.matvecs = op.matvecs();
  c.converged = std::min<std::int64_t>(method.converged(), pairs);
  c.elapsed_seconds = solve_seconds;
  MPI_Bcast(&c.elapsed_seconds, 1, MPI_DOUBLE, 0, matrix_.comm());
  LODESTONE_TRY(write_checkpoint(matrix_.comm(), plan_.path, c, plan_.inputs));
  clock_.checkpoint_written(MPI_Wtime() - t);
  return Status::ok();
}

Status SolveSession::boundary(methods::Method& method, algebra::Operator& op,
                              const std::vector<HistoryRecord>& history, std::int64_t pairs, double solve_seconds,
                              double iteration_seconds) {
  if (!active()) return Status::ok();
  clock_.iteration_finished(iteration_seconds);
  // Every wanted pair converged: the solve finishes now, nothing to save or stop.
  if (method.converged() >= pairs) return Status::ok();
  const BoundaryDecision d = clock_.at_boundary();
  if (d.checkpoint_due) LODESTONE_TRY(write(method, op, history, pairs, solve_seconds));
  if (!d.stop()) return Status::ok();
  const std::string why =
      d.signal ? fmt::format("stopped by {}", signal_name(d.signal))
               : fmt::format("stopped before the time budget of {} ran out", human_seconds(plan_.time_budget_seconds));
  return Status::stopped(fmt::format("{} after {} iterations and {} matvecs ({} of {} pairs converged); {} holds the "
                                     "state: run the same command with --resume to continue",
                                     why, method.iterations(), op.matvecs(),
                                     std::min<std::int64_t>(method.converged(), pairs), pairs, plan_.path));
}

}  // namespace lodestone::state
