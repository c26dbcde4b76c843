// SolveResult: the eigenpairs a solve found, with their certificates and history.
//
// A SolveResult is what `lodestone solve` writes to its results file and what
// the C++ API returns. Eigenvalues, imaginary parts and residual norms are small
// and replicated on every rank; eigenvectors are distributed like the matrix:
// each rank holds its own rows, never the whole vectors. The results file
// (README "Results file") is written collectively by row block under a
// temporary name and renamed into place.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <string>
#include <vector>

#include "lodestone/status.hpp"

namespace lodestone {

// One line of the convergence history, recorded at an iteration boundary.
struct HistoryRecord {
  std::int64_t iteration = 0;
  std::int64_t matvecs = 0;
  double seconds = 0;
  // Per requested pair (length K): current estimate (real part) and residual
  // norm for pairs still being worked on; NaN for pairs locked or not started.
  std::vector<double> estimates;
  std::vector<double> residuals;
  // Pairs converged (locked) so far.
  std::int64_t converged = 0;
};

struct SolveResult {
  // Replicated on every rank; length = number of pairs returned (K).
  std::vector<double> eigenvalues;       // real parts, in selection order
  std::vector<double> eigenvalues_imag;  // zeros for real eigenvalues
  std::vector<double> residual_norms;    // ||A v - lambda v||_2 with ||v||_2 = 1

  // Distributed: this rank's rows [row_begin, row_end) of the n x K eigenvector
  // matrix, stored column by column (vectors[j * local_rows + i]). For a complex
  // pair in columns j, j+1 they hold the real and imaginary parts.
  std::int64_t rows = 0;
  std::int64_t row_begin = 0;
  std::int64_t row_end = 0;
  std::vector<double> vectors;

  // Run facts, replicated.
  std::int64_t converged = 0;  // pairs meeting the tolerance (the first `converged` in order)
  std::string method;          // power | block | chebyshev
  std::string selection;       // magnitude | largest | smallest
  double tolerance = 0;
  double norm_estimate = 0;    // the ||A|| estimate the tolerance is relative to
  std::int64_t matvecs = 0;    // single-vector products; a block of b counts b
  std::int64_t iterations = 0;
  std::int64_t ranks = 0;
  std::uint64_t matrix_fingerprint = 0;
  double elapsed_seconds = 0;
  std::vector<HistoryRecord> history;
  // Why the method stopped before K pairs converged when it could make no further
  // progress (one sentence); empty otherwise. Not stored in the results file.
  std::string stall_reason;

  std::int64_t pairs() const { return static_cast<std::int64_t>(eigenvalues.size()); }
  std::int64_t local_rows() const { return row_end - row_begin; }
};

// Collective. Writes `result` to `path` atomically; refuses to overwrite any of `inputs`.
Status write_result(MPI_Comm comm, const std::string& path, const SolveResult& result,
                    const std::vector<std::string>& inputs = {});

// Collective. Reads a results file; this rank receives eigenvector rows
// [row_begin, row_end) (pass the matrix's own row range to line up with it).
Result<SolveResult> read_result(MPI_Comm comm, const std::string& path, std::int64_t row_begin, std::int64_t row_end);

}  // namespace lodestone
