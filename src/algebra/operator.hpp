// Operator: the matrix as the methods see it — block products Y = A X (for an
// AIJ matrix through Lodestone's own sparse x block kernel, which can also fold a
// shift and an update into the same pass; otherwise PETSc's sparse or dense times
// dense-multi-vector product), with a running count of single-vector products (a
// block of b columns counts b) and cheap norm estimates.
#pragma once

#include <petscmat.h>

#include <cstdint>
#include <vector>

#include "algebra/block.hpp"
#include "algebra/sparse_product.hpp"
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
  // structure is set up once per (column count) and reused for every call. An AIJ
  // matrix goes through SparseProduct (one column through apply_one unless its
  // pattern is scattered), a dense matrix on more than one rank through
  // apply_dense.
  Status apply(const Block& x, Block& y);
  // Collective. Column yc of Y = A times column xc of X, in place in the blocks'
  // storage (X and Y may be one block, the columns must differ): MatMult, or for an
  // AIJ matrix with a scattered pattern SparseProduct's one-column kernel.
  Status apply_column(const Block& x, int xc, Block& y, int yc);
  // True when apply_shifted runs as one pass over the matrix (an AIJ matrix);
  // otherwise a method does the product and the update itself.
  bool fuses();
  // Collective. Y = alpha (A X - shift X) + beta Y in one pass; only when fuses().
  Status apply_shifted(const Block& x, Block& y, double alpha, double shift, double beta);
  // The same on this rank's rows held interlaced (x[i * cols + j]; see
  // SparseProduct::apply_rows); only when fuses().
  Status apply_shifted_rows(int cols, const double* x, double* y, double alpha, double shift, double beta);
  std::int64_t matvecs() const { return matvecs_; }
  void set_matvecs(std::int64_t m) { matvecs_ = m; }

 private:
  // A dense (MPIDENSE) matrix on p > 1 ranks: PETSc 3.18 multiplies it by a dense
  // block one column at a time (a matrix-vector product and a broadcast per
  // column). Every rank needs all of X for its own rows anyway, so X is gathered
  // once per product (n x b values: b of the rank's own matrix rows' length) and
  // the local rows multiply it with one BLAS-3 product per owning rank's piece.
  Status apply_dense(const Block& x, Block& y);
  // One column: MatMult on vectors laid over the columns' storage (apply() takes it
  // unless the AIJ pattern is scattered: SparseProduct::scattered).
  Status apply_one(const double* x, double* y, PetscInt local_rows, PetscInt rows);

  Mat a_ = nullptr;
  std::int64_t matvecs_ = 0;
  // Which product the matrix takes, found at the first product.
  enum class Path { unknown, dense, sparse, petsc };
  Path path();
  Path path_ = Path::unknown;
  SparseProduct sparse_;
  Vec x1_ = nullptr, y1_ = nullptr;   // apply_one's vectors, laid over the columns' storage
  std::vector<double> gathered_;      // X from every rank, rank by rank (each piece m_r x b)
  std::vector<int> counts_, displs_;  // of the gather, in values
};

// Collective. sqrt(||A||_1 * ||A||_inf): an upper bound on ||A||_2 that costs
// one pass over the local rows (and is exact for the Laplacians' ||A||_inf).
Result<double> norm_estimate(Mat a);

// For a norm (estimate) beyond 2^+-200, where the squares inside norms and Gram
// matrices overflow or underflow, the power of two 2^e near it (so that x / 2^e
// is near 1, and scaling by it is exact); 1 for any other norm, zero or not finite.
double extreme_scale(double norm);

}  // namespace lodestone::algebra
