// Block: a distributed dense multi-vector (n x b) laid out by rows exactly like
// the matrix it multiplies, stored as a PETSc MATDENSE so that the product with
// the matrix is one MatMatMult (one pass over the matrix for the whole block).
//
// Every operation a method needs is here: products with small replicated
// matrices (local BLAS, no communication), Gram matrices X^T Y (local BLAS and
// one reduction, replicated bit-identically on every rank), orthonormalization (Cholesky QR twice, with a stable
// column-by-column fallback), projection against a locked set, and start
// vectors from a counter-based hash of the global row index, so the same seed
// gives the same block on any number of ranks.
#pragma once

#include <petscmat.h>

#include <cstdint>
#include <vector>

#include "algebra/small.hpp"
#include "lodestone/status.hpp"

namespace lodestone::algebra {

class Block {
 public:
  // Collective. An n x cols block with the row layout of `a`, zero-filled.
  static Result<Block> like(Mat a, int cols);

  Block() = default;
  Block(const Block&) = delete;
  Block& operator=(const Block&) = delete;
  Block(Block&& o) noexcept;
  Block& operator=(Block&& o) noexcept;
  ~Block();

  Mat mat() const { return mat_; }
  MPI_Comm comm() const { return comm_; }
  int cols() const { return cols_; }
  PetscInt local_rows() const { return local_rows_; }
  PetscInt row_begin() const { return row_begin_; }
  PetscInt rows() const { return rows_; }

  // Local storage: column j of this rank's rows starts at data() + j * local_rows().
  // Call changed() after writing through the pointer.
  double* data();
  const double* data() const;
  void changed();

  double* column(int j) { return data() + static_cast<std::size_t>(j) * local_rows_; }
  const double* column(int j) const { return data() + static_cast<std::size_t>(j) * local_rows_; }

 private:
  Mat mat_ = nullptr;
  MPI_Comm comm_ = MPI_COMM_NULL;
  int cols_ = 0;
  PetscInt local_rows_ = 0, row_begin_ = 0, rows_ = 0;
  mutable double* data_ = nullptr;
};

// ---- Local operations (no communication) ------------------------------------------------

// Y = X * S  (X: n x k, S: k x m, Y: n x m; Y must not be X).
void times_small(const Block& x, const Small& s, Block& y);
// X = X * S in place (uses a scratch copy of the local rows).
void times_small_inplace(Block& x, const Small& s);
// Columns [0, m) of X = columns [0, k) of X times S (k x m, k and m at most X's
// columns), in place a block of rows at a time: no copy of the local rows.
void times_small_leading(Block& x, const Small& s);
// Y = alpha * Y + beta * X, column ranges [xc, xc+m) of X onto [yc, yc+m) of Y.
void combine(Block& y, double alpha, const Block& x, double beta, int xc = 0, int yc = 0, int m = -1);
// Copy columns [xc, xc+m) of X into columns [yc, yc+m) of Y.
void copy_columns(const Block& x, int xc, Block& y, int yc, int m);
// Y = Y - X * S (X: n x k, S: k x m, acts on all m columns of Y).
void subtract_times(Block& y, const Block& x, const Small& s);
// Fill columns [c0, c0+m) with uniform values in [-1/2, 1/2) from hashed (seed, global row, stream + column).
void fill_random(Block& x, std::uint64_t seed, std::uint64_t stream, int c0 = 0, int m = -1);

// ---- Collective operations -------------------------------------------------------------

// X^T Y, replicated (one reduction). Pass only_columns >= 0 to use X's first columns only.
Small gram(const Block& x, const Block& y);
// Two Gram matrices with one reduction: (X^T Y, Z^T Y).
void gram2(const Block& x, const Block& z, const Block& y, Small& xy, Small& zy);
// 2-norms of the columns (one reduction).
std::vector<double> column_norms(const Block& x);

// X -= Q (Q^T X), twice (classical Gram-Schmidt with re-orthogonalization). Only
// the first q_cols columns of Q are used. Two reductions.
void project_out(const Block& q, int q_cols, Block& x);

// Orthonormalizes the columns of X, which must already be orthogonal to the first
// q_cols columns of Q (pass q_cols = 0 for none). Cholesky QR applied twice (one
// reduction each); if the Gram matrix is not numerically positive definite, falls
// back to column-by-column Gram-Schmidt with re-orthogonalization, replacing
// columns that are numerically dependent by fresh hashed random ones (projected
// against Q and the columns before them), so the result always has full rank.
// Returns the number of columns that had to be replaced.
Result<int> orthonormalize(Block& x, const Block* q, int q_cols, std::uint64_t seed, std::uint64_t stream);

}  // namespace lodestone::algebra
