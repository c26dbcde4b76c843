// Calibration: the planner's free constants, measured on the machine that will run.
//
// `lodestone plan` times a run with a stated model (docs/performance-model.md):
// bandwidth-bound matrix passes, latency-bound global sums growing with log2 of
// the rank count, dense work per row, checkpoint and load bandwidths, and a
// number of matrix products per wanted pair. Its defaults are rules of thumb.
// calibrate() replaces them with figures measured by a short real run on the
// current machine or allocation: it loads a matrix (timing the load), times block
// products with the block width the method uses, times small global sums, writes
// a checkpoint-sized file through the real checkpoint writer (and removes it),
// and runs the solver with a budget of matrix products, from whose history it
// takes the observed convergence (extrapolated from the residuals' decay when the
// budget runs out first). The dense work rate is then fitted so that the model
// reproduces the measured solve time. The result is written as the JSON file
// `plan --calibration` reads; it extrapolates to larger matrices of the same kind
// (the same spectrum's relative gaps: convergence of a matrix whose gaps shrink
// with its size, like a Laplacian's, is not carried over faithfully).
#pragma once

#include <mpi.h>

#include <cstdint>
#include <string>
#include <vector>

#include "lodestone/status.hpp"

namespace lodestone {

struct CalibrationRequest {
  std::string matrix_path;
  std::string group = "/matrix";
  std::int64_t pairs = 1;            // K, as the plan will ask
  std::string method = "auto";       // auto | power | block | chebyshev
  std::int64_t block_size = 0;       // 0: the method's default
  std::int64_t max_matvecs = 2000;   // budget of the short solve
  double tolerance = 1e-8;
  std::uint64_t seed = 1;
  std::string scratch_directory = ".";  // the trial checkpoint is written (and removed) here
};

struct Calibration {
  // What the planner reads (per rank unless said).
  double seconds_per_nonzero = 0;          // one single-vector product, per nonzero of the heaviest rank
  double reduction_latency_seconds = 0;    // one log2(p) stage of a small global sum
  double checkpoint_bytes_per_second = 0;  // whole job, the checkpoint writer (synced)
  double read_bytes_per_second = 0;        // whole job, loading the matrix
  double dense_flops_per_second = 0;       // dense work, fitted so the model reproduces the solve
  double matvecs_per_pair_low = 0, matvecs_per_pair_high = 0;
  std::string method;                      // the method the convergence was observed with
  std::int64_t pairs = 0, block = 0;
  // How they were measured.
  std::string matrix_path;
  std::int64_t rows = 0, nnz = 0, ranks = 0;
  std::int64_t heaviest_rows = 0, heaviest_nnz = 0;
  std::int64_t matvecs = 0, iterations = 0, converged = 0;
  bool extrapolated = false;               // the budget ran out: convergence from the residuals' decay
  double load_seconds = 0, product_seconds = 0, solve_seconds = 0;
  double checkpoint_bytes = 0, checkpoint_seconds = 0;
  std::string measured_at;                 // UTC, ISO 8601
};

// Collective. Runs the measurements; a solve whose residuals do not fall within
// the budget is an input error naming --matvecs.
Result<Calibration> calibrate(MPI_Comm comm, const CalibrationRequest& request);

// The calibration file's text (JSON, "format": "lodestone-calibration", version 1).
std::string calibration_json(const Calibration& calibration);

// Collective. Writes the file atomically; refuses to overwrite any of `inputs`.
Status write_calibration(MPI_Comm comm, const std::string& path, const Calibration& calibration,
                         const std::vector<std::string>& inputs = {});

// A short human summary of what was measured (several lines).
std::string describe_calibration(const Calibration& calibration);

}  // namespace lodestone
