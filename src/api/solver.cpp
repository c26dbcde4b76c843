// solve(): option checks, the iteration loop with budget, progress and history,
// and the conversion of the method's pairs into a SolveResult (solver.hpp).
#include "lodestone/solver.hpp"

#include <fmt/format.h>
#include <mpi.h>

#include <chrono>
#include <cmath>
#include <cstdio>
#include <limits>
#include <optional>

#include "algebra/operator.hpp"
#include "methods/method.hpp"
#include "state/history_cap.hpp"
#include "state/solve_session.hpp"
#include "support/collective.hpp"
#include "support/format.hpp"
#include "support/log_stage.hpp"
#include "support/petsc_status.hpp"

namespace lodestone {
namespace {

using Clock = std::chrono::steady_clock;

// Progress lines on rank 0: every few seconds, never every iteration, one line each.
class ProgressReporter {
 public:
  ProgressReporter(MPI_Comm comm, double every, std::int64_t pairs)
      : enabled_(every > 0 && comm_rank(comm) == 0), every_(every), pairs_(pairs) {}

  void maybe_print(double seconds, std::int64_t iteration, std::int64_t matvecs, std::int64_t converged,
                   const std::vector<double>& residuals, double target) {
    if (!enabled_ || seconds - last_ < every_) return;
    double worst = 0;
    for (double r : residuals)
      if (std::isfinite(r)) worst = std::max(worst, r);
    std::string eta = "unknown";
    if (worst > 0 && last_worst_ > 0 && worst < last_worst_ && seconds > last_) {
      // Observed rate of the worst residual, extrapolated to the target.
      const double rate = std::log(last_worst_ / worst) / (seconds - last_);
      if (rate > 0) eta = "~" + human_seconds(std::max(0.0, std::log(worst / target) / rate));
    }
    std::fprintf(stderr, "[%9s] iteration %lld  matvecs %lld  converged %lld/%lld  worst residual %.2e  left %s\n",
                 human_seconds(seconds).c_str(), static_cast<long long>(iteration), static_cast<long long>(matvecs),
                 static_cast<long long>(converged), static_cast<long long>(pairs_), worst, eta.c_str());
    std::fflush(stderr);
    last_ = seconds;
    last_worst_ = worst;
  }

 private:
  bool enabled_;
  double every_;
  std::int64_t pairs_;
  double last_ = 0;
  double last_worst_ = 0;
};

// The options a checkpoint must be resumed with (checkpoint.hpp).
RunIdentity checkpoint_identity(const MatrixInfo& info, const SolveOptions& o, const std::string& method) {
  RunIdentity id;
  id.matrix_fingerprint = info.fingerprint;
  id.rows = info.rows;
  id.options = {{"pairs", std::to_string(o.pairs)}, {"selection", o.selection}, {"method", method},
                {"tolerance", fmt::format("{}", o.tolerance)}, {"seed", std::to_string(o.seed)},
                {"block_size", std::to_string(o.block_size)},
                {"shift", o.has_shift ? fmt::format("{}", o.shift) : "none"},
                // The same entries declared symmetric or not take different code paths.
                {"symmetric", info.symmetric ? "yes" : "no"}};
  return id;
}

}  // namespace

std::vector<std::string> method_choices() {
  std::vector<std::string> out = {"auto"};
  for (const auto& m : methods::registry()) out.emplace_back(m.name);
  return out;
}

Result<SolveResult> solve(const Matrix& matrix, const SolveOptions& options) {
  const auto t0 = Clock::now();
  MPI_Comm comm = matrix.comm();
  const MatrixInfo& info = matrix.info();
  auto selection = methods::parse_selection(options.selection);
  if (!selection) return selection.status();
  if (options.pairs < 1) return Status::usage("--pairs must be at least 1");
  if (options.pairs > info.rows)
    return Status::usage(fmt::format("--pairs {} exceeds the matrix order {}", options.pairs, info.rows));
  if (!(options.tolerance > 0 && options.tolerance < 1))
    return Status::usage("--tol must be between 0 and 1");
  std::string method_name = options.method;
  if (method_name == "auto") {
    method_name = info.symmetric ? "chebyshev" : "krylov";
    if (options.note && comm_rank(comm) == 0)
      options.note(fmt::format("method auto: using {} ({} matrix)", method_name,
                               info.symmetric ? "symmetric" : "non-symmetric"));
  }
  const methods::MethodInfo* entry = methods::find_method(method_name);
  if (!entry)
    return Status::usage(fmt::format("unknown method '{}' (auto, {})", options.method, methods::method_names()));
  LODESTONE_TRY(methods::check_fit(*entry, {info.symmetric, *selection, options.pairs, options.block_size,
                                             options.has_shift}));

  std::optional<LogStage> stage(std::in_place, "Set up");
  auto norm = algebra::norm_estimate(matrix.petsc());
  LODESTONE_TRY(agree(comm, norm.status()));
  // Entries near 1e+-300 overflow or underflow in the squares that Gram
  // matrices and norms form. Such a matrix is iterated as 2^-e A, scaled by a
  // power of two (exact) so that its ||.||_est is near 1, in a copy made only
  // then; eigenvalues, residuals and history are scaled back. Every rank takes
  // the exponent from rank 0's estimate.
  double est = *norm;
  MPI_Bcast(&est, 1, MPI_DOUBLE, 0, comm);
  // Sums of entries near the top of the double range overflow: there is no finite
  // ||A||_est to scale by or to set the tolerance against (and the eigenvalues may
  // be out of range too). Said plainly rather than solved with a meaningless test.
  if (!std::isfinite(est))
    return Status::input(fmt::format(
        "the matrix's row or column sums overflow double precision (||A||_est = sqrt(||A||_1 ||A||_inf) is "
        "{}), so its eigenvalues may be too and no tolerance can be set relative to it; scale the matrix down "
        "by a power of two such as 2^-64 (its eigenvalues scale by the same factor, exactly)", est));
  const double unscale = algebra::extreme_scale(est);
  struct OwnedMat {
    Mat m = nullptr;
    ~OwnedMat() { MatDestroy(&m); }
  } scaled;
  if (unscale != 1.0) {
    auto checked = [](PetscErrorCode e, const char* what) { return e == 0 ? Status::ok() : petsc_status(e, what); };
    LODESTONE_TRY(agree(comm, checked(MatDuplicate(matrix.petsc(), MAT_COPY_VALUES, &scaled.m), "copying the matrix")));
    LODESTONE_TRY(agree(comm, checked(MatScale(scaled.m, 1.0 / unscale), "scaling the matrix")));
    *norm /= unscale;
  }
  methods::Problem problem;
  problem.symmetric = info.symmetric;
  problem.selection = *selection;
  problem.pairs = static_cast<int>(options.pairs);
  problem.block_size = static_cast<int>(std::min<std::int64_t>(options.block_size, info.rows));
  problem.tolerance = options.tolerance;
  problem.norm_estimate = *norm > 0 ? *norm : 1.0;
  // Every rank must test convergence against the very same number.
  MPI_Bcast(&problem.norm_estimate, 1, MPI_DOUBLE, 0, comm);
  problem.seed = options.seed;
  problem.has_shift = options.has_shift;
  problem.shift = options.shift / unscale;
  problem.value_scale = unscale;

  algebra::Operator op(scaled.m ? scaled.m : matrix.petsc());
  auto method = entry->make();
  auto session = state::SolveSession::open(matrix, options.checkpoint, checkpoint_identity(info, options, method_name));
  if (!session) return session.status();
  SolveResult result;
  double seconds_before = 0;  // solve time of earlier jobs when resuming
  auto resumed = (*session)->resume(*method, op, problem, result.history, seconds_before, options.note);
  if (!resumed) return resumed.status();
  if (!*resumed) LODESTONE_TRY(method->setup(op, problem));

  ProgressReporter progress(comm, options.progress_seconds, options.pairs);
  auto elapsed = [&] { return seconds_before + std::chrono::duration<double>(Clock::now() - t0).count(); };
  auto record = [&] {
    HistoryRecord h;
    h.iteration = method->iterations();
    h.matvecs = op.matvecs();
    h.seconds = elapsed();
    method->progress(h.estimates, h.residuals);
    for (double& x : h.estimates) x *= unscale;
    for (double& x : h.residuals) x *= unscale;
    h.converged = std::min<std::int64_t>(method->converged(), options.pairs);
    // Only rank 0 prints, so the clock-driven decision needs no agreement.
    progress.maybe_print(h.seconds, h.iteration, h.matvecs, h.converged, h.residuals,
                         options.tolerance * problem.norm_estimate * unscale);
    result.history.push_back(std::move(h));
    state::cap_history(result.history);
  };
  stage.emplace("Iterate");
  if (!*resumed) record();
  while (method->converged() < options.pairs) {
    if (options.max_matvecs > 0 && op.matvecs() >= options.max_matvecs) break;
    const double step_start = elapsed();
    LODESTONE_TRY(method->step());
    record();
    result.stall_reason = method->stall_reason();
    if (!result.stall_reason.empty()) break;
    LODESTONE_TRY((*session)->boundary(*method, op, result.history, options.pairs, elapsed(), elapsed() - step_start));
  }
  // Stopped short by the matvec budget or a stall: the checkpoint keeps every
  // product done, so a later job (a larger --max-matvecs, say) resumes from here.
  if (method->converged() < options.pairs && (*session)->active())
    LODESTONE_TRY((*session)->write(*method, op, result.history, options.pairs, elapsed()));

  stage.emplace("Extract pairs");
  auto pairs = method->extract();
  if (!pairs) return pairs.status();
  result.eigenvalues = pairs->re;
  result.eigenvalues_imag = pairs->im;
  result.residual_norms = pairs->residuals;
  for (auto* values : {&result.eigenvalues, &result.eigenvalues_imag, &result.residual_norms})
    for (double& x : *values) x *= unscale;
  result.rows = info.rows;
  result.row_begin = info.row_begin;
  result.row_end = info.row_end;
  const auto& v = pairs->vectors;
  const std::size_t local = static_cast<std::size_t>(v.local_rows());
  result.vectors.resize(local * static_cast<std::size_t>(v.cols()));
  for (int j = 0; j < v.cols(); ++j)
    std::copy(v.column(j), v.column(j) + local, result.vectors.begin() + static_cast<std::ptrdiff_t>(j * local));
  // History records hold one entry per returned pair (fewer than K when a
  // single-vector run stops on its budget, K+1 when a complex pair ends the list).
  for (auto& h : result.history) {
    h.estimates.resize(pairs->re.size(), std::numeric_limits<double>::quiet_NaN());
    h.residuals.resize(pairs->re.size(), std::numeric_limits<double>::quiet_NaN());
  }
  result.converged = pairs->converged;
  result.method = method->name();
  result.selection = methods::selection_name(*selection);
  result.tolerance = options.tolerance;
  result.norm_estimate = problem.norm_estimate * unscale;
  result.matvecs = op.matvecs();
  result.iterations = method->iterations();
  result.ranks = comm_size(comm);
  result.matrix_fingerprint = info.fingerprint;
  result.elapsed_seconds = elapsed();
  // Rank 0's clock is the run's clock.
  MPI_Bcast(&result.elapsed_seconds, 1, MPI_DOUBLE, 0, comm);
  return result;
}

}  // namespace lodestone
