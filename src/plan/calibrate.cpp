// calibrate(): measures the planner's constants with a short real run (lodestone/calibration.hpp).
#include "lodestone/calibration.hpp"

#include <fmt/format.h>
#include <petscmat.h>
#include <unistd.h>

#include <algorithm>
#include <cmath>
#include <ctime>
#include <filesystem>
#include <limits>
#include <nlohmann/json.hpp>

#include "algebra/block.hpp"
#include "algebra/operator.hpp"
#include "io/generators.hpp"
#include "lodestone/checkpoint.hpp"
#include "lodestone/matrix.hpp"
#include "lodestone/solver.hpp"
#include "methods/method.hpp"
#include "plan/matrix_facts.hpp"
#include "plan/model.hpp"
#include "support/collective.hpp"
#include "support/format.hpp"
#include "support/petsc_status.hpp"

namespace lodestone {
namespace {

// Seconds since `start` on the slowest rank (everyone waits for it).
double slowest_since(MPI_Comm comm, double start) { return max_all(comm, MPI_Wtime() - start); }

// The heaviest rank (most nonzeros) and the most rows of any rank, as the planner sees them.
Result<plan::PartitionStats> partition_of(const Matrix& m) {
  MPI_Comm comm = m.comm();
  const MatrixInfo& info = m.info();
  std::int64_t nnz = 0;
  const std::int64_t rows = info.row_end - info.row_begin;
  if (info.layout == Layout::dense) {
    nnz = rows * info.cols;
  } else {
    MatInfo mi;
    const PetscErrorCode e = MatGetInfo(m.petsc(), MAT_LOCAL, &mi);
    LODESTONE_TRY(agree(comm, e != 0 ? petsc_status(e, "MatGetInfo") : Status::ok()));
    nnz = static_cast<std::int64_t>(mi.nz_used);
  }
  const int p = comm_size(comm);
  std::vector<std::int64_t> all(2 * static_cast<std::size_t>(p));
  std::int64_t mine[2] = {rows, nnz};
  MPI_Allgather(mine, 2, MPI_INT64_T, all.data(), 2, MPI_INT64_T, comm);
  plan::PartitionStats part;
  part.parts = p;
  for (int r = 0; r < p; ++r) {
    const std::int64_t rr = all[2 * r], zz = all[2 * r + 1];
    if (zz > part.heaviest_nnz || r == 0) part.heaviest_nnz = zz, part.heaviest_rows = rr;
    part.max_rows = std::max(part.max_rows, rr);
  }
  return part;
}

// Seconds of one block product with `b` columns (the slowest rank's), repeated for about half
// a second: Y = A X, or, for chebyshev on a matrix whose products fuse, the filter's own pass
// (Y = A X - s X + c Y with the rows interlaced, the blocks' storage reused for it).
Result<double> time_products(const Matrix& m, int b, bool filter_pass) {
  MPI_Comm comm = m.comm();
  auto x = algebra::Block::like(m.petsc(), b);
  if (!x) return x.status();
  auto y = algebra::Block::like(m.petsc(), b);
  if (!y) return y.status();
  algebra::fill_random(*x, 7, 0);
  algebra::Operator op(m.petsc());
  const bool fused = filter_pass && op.fuses();
  auto product = [&]() -> Status {
    return fused ? op.apply_shifted_rows(b, x->data(), y->data(), 1.0, 0.5, -0.5) : op.apply(*x, *y);
  };
  LODESTONE_TRY(product());  // sets up the product structure
  MPI_Barrier(comm);
  double t0 = MPI_Wtime();
  LODESTONE_TRY(product());
  const double once = slowest_since(comm, t0);
  const int reps = static_cast<int>(std::clamp(0.5 / std::max(once, 1e-9), 3.0, 2000.0));
  MPI_Barrier(comm);
  t0 = MPI_Wtime();
  for (int i = 0; i < reps; ++i) LODESTONE_TRY(product());
  return slowest_since(comm, t0) / reps;
}

// Seconds per log2(p) stage of an all-reduce of a b x b Gram matrix's worth of doubles.
double time_reductions(MPI_Comm comm, int b) {
  std::vector<double> in(static_cast<std::size_t>(b) * b, 1.0), out(in.size());
  const int reps = 2000;
  for (int i = 0; i < 20; ++i) MPI_Allreduce(in.data(), out.data(), static_cast<int>(in.size()), MPI_DOUBLE, MPI_SUM, comm);
  MPI_Barrier(comm);
  const double t0 = MPI_Wtime();
  for (int i = 0; i < reps; ++i)
    MPI_Allreduce(in.data(), out.data(), static_cast<int>(in.size()), MPI_DOUBLE, MPI_SUM, comm);
  const double each = slowest_since(comm, t0) / reps;
  return each / static_cast<double>(std::max<std::int64_t>(1, plan::log2_ceil(comm_size(comm))));
}

// Writes a checkpoint of `vectors` columns through the real writer into `dir`, then removes it.
Status time_checkpoint(const Matrix& m, const std::string& dir, const std::string& method, std::int64_t vectors,
                       const std::string& input, double& bytes, double& seconds) {
  MPI_Comm comm = m.comm();
  const MatrixInfo& info = m.info();
  long long pid = comm_rank(comm) == 0 ? static_cast<long long>(::getpid()) : 0;
  MPI_Bcast(&pid, 1, MPI_LONG_LONG, 0, comm);
  const std::string path = (std::filesystem::path(dir) / fmt::format(".lodestone-calibrate-{}.checkpoint.h5", pid)).string();
  Checkpoint c;
  c.identity.matrix_fingerprint = info.fingerprint;
  c.identity.rows = info.rows;
  c.identity.options = {{"purpose", "calibration"}};
  c.state.method = method;
  c.state.rows = info.rows;
  c.state.row_begin = info.row_begin;
  c.state.row_end = info.row_end;
  StateBlock& blk = c.state.blocks["trial"];
  blk.columns = vectors;
  const std::int64_t local = info.row_end - info.row_begin;
  blk.local.resize(static_cast<std::size_t>(local * vectors));
  for (std::int64_t j = 0; j < vectors; ++j)
    for (std::int64_t i = 0; i < local; ++i)
      blk.local[static_cast<std::size_t>(j * local + i)] =
          io::hashed_uniform(3, static_cast<std::uint64_t>(info.row_begin + i), static_cast<std::uint64_t>(j));
  MPI_Barrier(comm);
  const double t0 = MPI_Wtime();
  Status s = write_checkpoint(comm, path, c, {input});
  seconds = slowest_since(comm, t0);
  double size = 0;
  if (comm_rank(comm) == 0) {
    std::error_code ec;
    if (s) size = static_cast<double>(std::filesystem::file_size(path, ec));
    std::filesystem::remove(path, ec);
    std::filesystem::remove(previous_checkpoint_path(path), ec);
  }
  MPI_Bcast(&size, 1, MPI_DOUBLE, 0, comm);
  if (!s) return Status::input(fmt::format("calibration: writing a trial checkpoint in {}: {}", dir, s.message()));
  bytes = size;
  return Status::ok();
}

// Matvecs the solve would need in all: observed when it converged, else extrapolated from
// the decay of the worst unconverged residual over the second half of the run.
Result<double> total_matvecs(const SolveResult& r, std::int64_t pairs, double target, bool& extrapolated) {
  extrapolated = r.converged < pairs;
  if (!extrapolated) return static_cast<double>(r.matvecs);
  auto worst = [](const HistoryRecord& h) {
    double w = 0;
    for (double x : h.residuals)
      if (std::isfinite(x)) w = std::max(w, x);
    return w;
  };
  const auto& h = r.history;
  if (h.size() >= 3) {
    const HistoryRecord& last = h.back();
    const HistoryRecord* mid = &h[h.size() / 2];
    const double w1 = worst(*mid), w2 = worst(last);
    const double span = static_cast<double>(last.matvecs - mid->matvecs);
    if (w1 > 0 && w2 > 0 && w2 < w1 && span > 0) {
      const double rate = std::log(w1 / w2) / span;  // per matvec
      const double left = std::max(0.0, std::log(w2 / target) / rate);
      return static_cast<double>(r.matvecs) + left;
    }
  }
  return Status::input(fmt::format("calibration: {} of {} pairs converged in {} matvecs and the residuals did not fall "
                                   "steadily; give a larger --matvecs", r.converged, pairs, r.matvecs));
}

}  // namespace

Result<Calibration> calibrate(MPI_Comm comm, const CalibrationRequest& req) {
  if (req.pairs < 1) return Status::usage("--pairs must be at least 1");
  if (req.max_matvecs < 1) return Status::usage("--matvecs must be at least 1");
  auto facts = plan::read_facts(comm, req.matrix_path, req.group);
  if (!facts) return facts.status();
  Calibration c;
  c.matrix_path = req.matrix_path;
  c.ranks = comm_size(comm);
  c.measured_at = utc_now();

  // Loading, at the model's byte count (plan/model.cpp load_time).
  LoadOptions lo;
  lo.group = req.group;
  MPI_Barrier(comm);
  const double t_load = MPI_Wtime();
  auto m = Matrix::load(comm, req.matrix_path, lo);
  if (!m) return m.status();
  c.load_seconds = slowest_since(comm, t_load);
  const MatrixInfo& info = m->info();
  const bool dense = info.layout == Layout::dense;
  plan::MachineModel model;
  model.index_bytes = static_cast<double>(sizeof(PetscInt));
  model.file_index_bytes = facts->file_index_bytes;
  model.read_bandwidth = 1.0;
  c.read_bytes_per_second = plan::load_time(model, dense, info.rows, info.nnz) / std::max(c.load_seconds, 1e-9);
  c.rows = info.rows;
  c.nnz = info.nnz;

  std::string method = req.method;
  if (method == "auto") method = info.symmetric ? "chebyshev" : "krylov";
  if (!methods::find_method(method))
    return Status::usage(fmt::format("--method '{}': expected auto, {}", req.method, methods::method_names()));
  if (method == "chebyshev" && !info.symmetric)
    return Status::usage("--method chebyshev needs a symmetric matrix; this one is not declared symmetric (use block)");
  const plan::MethodShape shape = plan::method_shape(method, req.pairs, req.block_size);
  if (shape.block >= info.rows)
    return Status::usage(fmt::format("--pairs {} is too large for a {}-row matrix", req.pairs, info.rows));
  c.method = method;
  c.pairs = req.pairs;
  c.block = shape.block;

  auto part = partition_of(*m);
  if (!part) return part.status();
  c.heaviest_rows = part->heaviest_rows;
  c.heaviest_nnz = part->heaviest_nnz;

  // Block products with the method's width.
  auto product = time_products(*m, static_cast<int>(shape.block), method == "chebyshev");
  if (!product) return product.status();
  c.product_seconds = *product;
  c.seconds_per_nonzero = c.product_seconds / (static_cast<double>(shape.block) *
                                               static_cast<double>(std::max<std::int64_t>(1, part->heaviest_nnz)));
  c.reduction_latency_seconds = time_reductions(comm, static_cast<int>(shape.block));

  // The trial checkpoint: as many vectors as the method's checkpoint keeps.
  LODESTONE_TRY(time_checkpoint(*m, req.scratch_directory, method, shape.checkpoint_vectors, req.matrix_path,
                                c.checkpoint_bytes, c.checkpoint_seconds));
  c.checkpoint_bytes_per_second = c.checkpoint_bytes / std::max(c.checkpoint_seconds, 1e-9);

  // The short solve.
  SolveOptions so;
  so.pairs = req.pairs;
  so.method = method;
  so.block_size = req.block_size;
  so.max_matvecs = req.max_matvecs;
  so.tolerance = req.tolerance;
  so.seed = req.seed;
  so.progress_seconds = 0;
  MPI_Barrier(comm);
  const double t_solve = MPI_Wtime();
  auto r = solve(*m, so);
  if (!r) return r.status();
  c.solve_seconds = slowest_since(comm, t_solve);
  c.matvecs = r->matvecs;
  c.iterations = r->iterations;
  c.converged = r->converged;
  auto total = total_matvecs(*r, req.pairs, req.tolerance * r->norm_estimate, c.extrapolated);
  if (!total) return total.status();
  const double per_pair = *total / static_cast<double>(req.pairs);
  // A range around the figure: narrower when it was observed than when it was extrapolated.
  c.matvecs_per_pair_low = per_pair * (c.extrapolated ? 0.67 : 0.8);
  c.matvecs_per_pair_high = per_pair * (c.extrapolated ? 1.5 : 1.25);

  // Dense work: whatever of the solve the model's matrix passes, halo and sums do not
  // explain, over the model's dense flops for the same number of iterations (at least 5%
  // of the solve, so the rate stays finite). With it the model reproduces this solve.
  model = plan::MachineModel{};
  model.index_bytes = static_cast<double>(sizeof(PetscInt));
  model.seconds_per_nonzero = c.seconds_per_nonzero;
  model.reduction_latency = c.reduction_latency_seconds;
  model.flop_rate = std::numeric_limits<double>::infinity();
  const std::int64_t ghosts = plan::ghost_estimate(dense, info.rows, *part);
  const IterationTime it = plan::iteration_time(model, shape, dense, info.rows, *part, ghosts);
  const double per_iteration = static_cast<double>(shape.matvecs_per_iteration());
  const double model_iterations = static_cast<double>(r->matvecs) / per_iteration;
  const double startup = static_cast<double>(shape.startup_matvecs) * (it.matrix_passes + it.halo) / per_iteration;
  const double explained = model_iterations * it.total() + startup;
  const double dense_seconds = std::max(c.solve_seconds - explained, 0.05 * c.solve_seconds);
  const double dense_flops = model_iterations * shape.dense_flops_per_row *
                             static_cast<double>(std::max(part->heaviest_rows, part->max_rows));
  c.dense_flops_per_second = std::max(dense_flops, 1.0) / std::max(dense_seconds, 1e-9);
  return c;
}

std::string calibration_json(const Calibration& c) {
  nlohmann::ordered_json j;
  j["format"] = "lodestone-calibration";
  j["version"] = 1;
  j["seconds_per_nonzero"] = c.seconds_per_nonzero;
  // On one rank a global sum costs nothing to speak of: the default stands for plans on more.
  if (c.ranks > 1) j["reduction_latency_seconds"] = c.reduction_latency_seconds;
  j["checkpoint_bytes_per_second"] = c.checkpoint_bytes_per_second;
  j["read_bytes_per_second"] = c.read_bytes_per_second;
  j["dense_flops_per_second"] = c.dense_flops_per_second;
  j["matvecs_per_pair"] = {c.matvecs_per_pair_low, c.matvecs_per_pair_high};
  j["method"] = c.method;
  j["pairs"] = c.pairs;
  j["block"] = c.block;
  nlohmann::ordered_json m;
  m["matrix"] = c.matrix_path;
  m["rows"] = c.rows;
  m["nonzeros"] = c.nnz;
  m["ranks"] = c.ranks;
  m["heaviest_rank_rows"] = c.heaviest_rows;
  m["heaviest_rank_nonzeros"] = c.heaviest_nnz;
  m["matvecs"] = c.matvecs;
  m["iterations"] = c.iterations;
  m["converged"] = c.converged;
  m["convergence"] = c.extrapolated ? "extrapolated from the residuals (budget ran out)" : "observed";
  m["load_seconds"] = c.load_seconds;
  m["block_product_seconds"] = c.product_seconds;
  m["solve_seconds"] = c.solve_seconds;
  m["checkpoint_bytes"] = c.checkpoint_bytes;
  m["checkpoint_seconds"] = c.checkpoint_seconds;
  m["measured_at"] = c.measured_at;
  j["measured"] = m;
  return j.dump(2) + "\n";
}

std::string describe_calibration(const Calibration& c) {
  std::string o = fmt::format("Calibration on {} rank(s) with {} ({} x {}, {} nonzeros)\n", c.ranks, c.matrix_path,
                              c.rows, c.rows, c.nnz);
  auto line = [&](std::string_view label, const std::string& text) { o += fmt::format("  {:<22}{}\n", label, text); };
  line("loading", fmt::format("{:.3f} s, {:.3g} bytes/s", c.load_seconds, c.read_bytes_per_second));
  line("block product", fmt::format("{:.3g} s for {} vectors: {:.3g} s per nonzero per vector", c.product_seconds,
                                    c.block, c.seconds_per_nonzero));
  line("global sum", c.ranks > 1 ? fmt::format("{:.3g} s per log2(p) stage", c.reduction_latency_seconds)
                                  : std::string("not measured on one rank (the default stands)"));
  line("checkpoint", fmt::format("{:.0f} bytes in {:.3f} s: {:.3g} bytes/s", c.checkpoint_bytes, c.checkpoint_seconds,
                                 c.checkpoint_bytes_per_second));
  line("solve", fmt::format("{} with {} pair(s): {} of {} converged, {} matvecs, {} iterations, {:.2f} s", c.method,
                            c.pairs, c.converged, c.pairs, c.matvecs, c.iterations, c.solve_seconds));
  line("matvecs per pair", fmt::format("{:.0f} to {:.0f} ({})", c.matvecs_per_pair_low, c.matvecs_per_pair_high,
                                       c.extrapolated ? "extrapolated from the residuals' decay" : "observed"));
  line("dense work", fmt::format("{:.3g} flop/s (fitted to the solve time)", c.dense_flops_per_second));
  return o;
}

}  // namespace lodestone
