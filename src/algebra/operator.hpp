// Operator: the matrix as the methods see it — block products Y = A X through
// PETSc's sparse (or dense) times dense-multi-vector kernel, one pass over the
// matrix per block, with a running count of single-vector products (a block of
// b columns counts b) and cheap norm estimates.
#pragma once

#include <petscmat.h>

#include <cstdint>

#include "algebra/block.hpp"
#include "lodestone/status.hpp"

namespace lodestone::algebra {

class Operator {
 public:
  explicit Operator(Mat a) : a_(a) {}
  Operator(const Operator&) = delete;
  Operator& operator=(const Operator&) = delete;
  ~Operator();

  Mat mat() const { return a_; }
  // Collective. Y = A X. X and Y must have the same column count. The product
  // structure is set up once per (column count) and reused for every call.
  Status apply(const Block& x, Block& y);
  std::int64_t matvecs() const { return matvecs_; }
  void set_matvecs(std::int64_t m) { matvecs_ = m; }

 private:
  Mat a_ = nullptr;
  std::int64_t matvecs_ = 0;
};

// Collective. sqrt(||A||_1 * ||A||_inf): an upper bound on ||A||_2 that costs
// one pass over the local rows (and is exact for the Laplacians' ||A||_inf).
Result<double> norm_estimate(Mat a);

// For a norm (estimate) beyond 2^+-200, where the squares inside norms and Gram
// matrices overflow or underflow, the power of two 2^e near it (so that x / 2^e
// is near 1, and scaling by it is exact); 1 for any other norm, zero or not finite.
double extreme_scale(double norm);

}  // namespace lodestone::algebra
