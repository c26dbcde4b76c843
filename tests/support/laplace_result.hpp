// A SolveResult built from closed-form eigenpairs of the 1-D Dirichlet Laplacian,
// for tests of the results file, `lodestone verify`, `inspect` and the plot script.
//
// The n x n matrix tridiag(-1, 2, -1) (io::generate_laplace1d) has eigenvalues
// lambda_j = 2 - 2 cos(j pi / (n+1)) and eigenvectors v_j(i) = sqrt(2/(n+1)) sin(i j pi / (n+1)),
// i, j = 1..n, which have unit 2-norm (closed form; the standard finite-difference
// result for the discrete Dirichlet Laplacian). The K largest are returned, largest first.
// The history is invented test data of a plausible shape (residuals falling
// geometrically, pairs locking in order), not the record of a real solve.
#pragma once

#include <mpi.h>

#include <cmath>
#include <cstdint>
#include <limits>
#include <numbers>

#include "lodestone/result.hpp"
#include "support/collective.hpp"

namespace lodestone::test {

inline double laplace1d_eigenvalue(std::int64_t n, std::int64_t j) {
  return 2.0 - 2.0 * std::cos(static_cast<double>(j) * std::numbers::pi / static_cast<double>(n + 1));
}

// Row i (0-based) of eigenvector j (1-based).
inline double laplace1d_vector(std::int64_t n, std::int64_t j, std::int64_t i) {
  const double h = std::numbers::pi / static_cast<double>(n + 1);
  return std::sqrt(2.0 / static_cast<double>(n + 1)) * std::sin(static_cast<double>((i + 1) * j) * h);
}

// This rank holds rows [row_begin, row_end).
inline SolveResult laplace1d_result(MPI_Comm comm, std::int64_t n, std::int64_t k, std::int64_t row_begin,
                                    std::int64_t row_end, std::uint64_t fingerprint) {
  SolveResult r;
  r.rows = n;
  r.row_begin = row_begin;
  r.row_end = row_end;
  const std::int64_t m = row_end - row_begin;
  for (std::int64_t p = 0; p < k; ++p) {
    const std::int64_t j = n - p;  // largest first
    r.eigenvalues.push_back(laplace1d_eigenvalue(n, j));
    r.eigenvalues_imag.push_back(0.0);
    r.residual_norms.push_back(0.0);  // exact eigenpairs: zero residual in exact arithmetic
    for (std::int64_t i = 0; i < m; ++i) r.vectors.push_back(laplace1d_vector(n, j, row_begin + i));
  }
  r.converged = k;
  r.method = "block";
  r.selection = "largest";
  r.tolerance = 1e-8;
  r.norm_estimate = 4.0;  // Gershgorin: every row sum of |a_ij| is at most 4, so ||A||_2 <= 4
  r.ranks = comm_size(comm);
  r.matrix_fingerprint = fingerprint;
  r.elapsed_seconds = 0.25;
  // Invented history: pair p's residual is 4 * 10^-(h+1) * (p+1) at record h, locked once below tol * 4.
  const double nan = std::numeric_limits<double>::quiet_NaN();
  std::int64_t h = 0, locked = 0;
  for (; locked < k && h < 40; ++h) {
    HistoryRecord rec;
    rec.iteration = h + 1;
    rec.matvecs = (h + 1) * (k + 2);
    rec.seconds = 0.01 * static_cast<double>(h + 1);
    std::int64_t now_locked = locked;
    for (std::int64_t p = 0; p < k; ++p) {
      if (p < locked) {
        rec.estimates.push_back(nan);
        rec.residuals.push_back(nan);
        continue;
      }
      const double res = 4.0 * std::pow(10.0, -static_cast<double>(h + 1)) * static_cast<double>(p + 1);
      rec.estimates.push_back(r.eigenvalues[static_cast<std::size_t>(p)] - res);
      rec.residuals.push_back(res);
      if (p == now_locked && res <= r.tolerance * r.norm_estimate) ++now_locked;
    }
    locked = now_locked;
    rec.converged = locked;
    r.history.push_back(rec);
  }
  r.iterations = h;
  r.matvecs = h * (k + 2);
  return r;
}

}  // namespace lodestone::test
