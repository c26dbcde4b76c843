// Verification: an independent check of a SolveResult against its matrix.
//
// verify_result recomputes every pair's residual ||A v - lambda v||_2 from the
// stored vectors with its own matrix products (one PETSc MatMatMult over all
// pairs), measures how far each vector is from unit length and, for a
// symmetric matrix, how far the vectors are from mutually orthogonal, and
// checks the result belongs to this matrix (same fingerprint and size). It
// trusts nothing the solver stored except the vectors and eigenvalues it
// checks, and the tolerance it checks them against. `lodestone verify` prints
// its report; tests use it as their oracle.
#pragma once

#include <cstdint>
#include <string>
#include <vector>

#include "lodestone/matrix.hpp"
#include "lodestone/result.hpp"
#include "lodestone/status.hpp"

namespace lodestone {

struct PairCheck {
  double eigenvalue = 0;           // real part
  double eigenvalue_imag = 0;
  double stored_residual = 0;      // as the solver recorded it
  double residual = 0;             // recomputed, for the vector scaled to unit norm
  double norm_error = 0;           // | ||v||_2 - 1 | (complex pairs: of x + iy)
  double orthogonality = 0;        // max |v_i . v_j| over the other checked pairs j, among pairs whose
                                   // residual and length pass (symmetric only; else 0)
  bool checked = false;            // among the pairs the result says converged
  bool passed = false;             // checked and within every bound
  std::string verdict;             // "ok", "residual too large", ..., or "not converged (not checked)"
};

struct VerifyReport {
  std::vector<PairCheck> pairs;
  bool symmetric = false;
  double residual_limit = 0;       // tolerance * norm_estimate, plus the roundoff slack below
  double norm_bound = 0;           // allowed | ||v|| - 1 |
  double orthogonality_bound = 0;  // allowed |v_i . v_j| (symmetric)
  std::int64_t checked = 0;        // pairs checked (= the result's converged count)
  std::int64_t failed = 0;         // checked pairs outside a bound
  std::string first_failure;       // one line about the first failing pair ("pair 3: ...", numbered
                                   // from 1 as every listing is; pairs[2] above), empty if none
  bool ok() const { return failed == 0; }
};

// The bounds verify_result applies, for a matrix with n rows (see README/docs):
//   residual  <= tolerance * norm_estimate * (1 + 1e-2) + 100 * sqrt(n) * eps * norm_estimate
//   norm error and |v_i . v_j| <= max(1e-8, 100 * sqrt(n) * eps)
double verify_residual_limit(double tolerance, double norm_estimate, std::int64_t n);
double verify_vector_bound(std::int64_t n);

// Collective over the matrix's communicator. `result` must hold the rows this
// rank owns of the matrix (read it with the matrix's row range). A result for
// another matrix (fingerprint or size differs) is an error, not a report.
Result<VerifyReport> verify_result(const Matrix& matrix, const SolveResult& result);

}  // namespace lodestone
