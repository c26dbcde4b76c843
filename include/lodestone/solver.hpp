// solve(): a few wanted eigenpairs of a distributed matrix, with certificates.
//
// A solve runs one method (power, block, chebyshev or krylov; `auto` picks
// chebyshev for symmetric matrices and krylov otherwise) on the matrix until K wanted pairs
// meet the tolerance or the budget of matrix-vector products runs out. Which
// pairs are wanted is the selection: largest modulus (default), largest or
// smallest algebraic value (smallest: symmetric matrices only). A pair (lambda,
// v) with ||v||_2 = 1 counts as converged when ||A v - lambda v||_2 <= tol *
// ||A||_est, where ||A||_est = sqrt(||A||_1 * ||A||_inf) is a cheap upper bound
// on ||A||_2 recorded in the result. A complex pair is returned as two entries
// (lambda and its conjugate, positive imaginary part first) whose vector columns
// hold the real and imaginary parts of one complex vector of unit norm; it is
// never split, so K+1 entries can come back when the K-th is the first of a pair.
// Start vectors come from a counter-based hash of the seed and the global row
// index, and every small dense problem is solved once and broadcast, so the
// same options give the same eigenvalues on any number of ranks.
#pragma once

#include <cstdint>
#include <functional>
#include <string>
#include <vector>

#include "lodestone/checkpoint.hpp"
#include "lodestone/matrix.hpp"
#include "lodestone/result.hpp"
#include "lodestone/status.hpp"

namespace lodestone {

struct SolveOptions {
  std::int64_t pairs = 1;                // K
  std::string selection = "magnitude";   // magnitude | largest | smallest
  std::string method = "auto";           // auto | power | block | chebyshev | krylov
  double tolerance = 1e-8;
  std::int64_t max_matvecs = 0;          // 0: no limit
  std::uint64_t seed = 1;
  bool has_shift = false;                // power and block: iterate with A - shift*I
  double shift = 0.0;
  std::int64_t block_size = 0;           // block and chebyshev; 0: K plus a few
  double progress_seconds = 5.0;         // progress lines on rank 0 (stderr); <= 0: none
  // Checkpoints, resume and early stop (checkpoint.hpp); no path: none. A solve
  // stopped early returns Status::stopped after writing the checkpoint.
  CheckpointPlan checkpoint;
  // Receives one-line notes for a person (e.g. which method `auto` picked); rank 0 only.
  std::function<void(const std::string&)> note;
};

// Collective. Finds the pairs. When the matvec budget runs out, or the method
// can make no further progress (result.stall_reason says why), the result holds
// what converged (result.converged < pairs) and is still returned as a value;
// the caller decides how to report it. Errors (bad options, bad input) come back
// as Status.
Result<SolveResult> solve(const Matrix& matrix, const SolveOptions& options);

// The values SolveOptions::method accepts: "auto", then every method there is.
std::vector<std::string> method_choices();

}  // namespace lodestone
