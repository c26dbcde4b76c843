// Matrix: a square real matrix distributed by rows over the ranks of a communicator.
//
// A Matrix is loaded from a file in Lodestone's matrix layout (an HDF5 group
// holding either CSR arrays or a dense array; see README "Matrix file layout"),
// or wraps a PETSc Mat that the caller already built. Each rank holds only a
// contiguous block of rows; for CSR files the row boundaries balance nonzeros
// plus rows, so a power-law graph's heavy rows do not all land on one rank.
// Loading validates the whole file and agrees on any defect across ranks, so a
// bad file costs one message, never a hang. Every Matrix carries a fingerprint:
// an order- and partition-independent 64-bit hash of its nonzero entries that
// identifies it to checkpoints and results.
#pragma once

#include <mpi.h>
#include <petscmat.h>

#include <cstdint>
#include <string>

#include "lodestone/status.hpp"

namespace lodestone {

enum class Layout { csr, dense };
const char* layout_name(Layout layout);

struct MatrixInfo {
  Layout layout = Layout::csr;
  std::int64_t rows = 0;
  std::int64_t cols = 0;
  std::int64_t nnz = 0;                // stored entries (rows*cols for dense)
  bool symmetric = false;              // declared (and checked) symmetric
  std::uint64_t fingerprint = 0;       // hash of the nonzero entries; see README
  std::int64_t row_begin = 0;          // this rank's first row
  std::int64_t row_end = 0;            // one past this rank's last row
};

struct LoadOptions {
  std::string group = "/matrix";       // HDF5 group holding the matrix
  // A matrix declared symmetric is accepted when |a_ij - a_ji| <= tol * max|a|.
  double symmetry_tolerance = 1e-12;
  // Largest number of entries read from the file in one piece per rank.
  std::int64_t chunk_entries = std::int64_t{1} << 22;
};

class Matrix {
 public:
  // Collective over comm. Reads and validates the matrix at `group` in `path`.
  static Result<Matrix> load(MPI_Comm comm, const std::string& path, const LoadOptions& options = {});
  // Collective. Wraps an assembled square PETSc matrix the caller built (a
  // reference is taken). `symmetric` is the caller's promise, checked here; a
  // NaN or infinite entry is refused, its row and column named.
  static Result<Matrix> wrap(Mat a, bool symmetric, double symmetry_tolerance = 1e-12);

  Matrix() = default;
  Matrix(Mat a, MatrixInfo info) : mat_(a), info_(info) {}
  Matrix(const Matrix&) = delete;
  Matrix& operator=(const Matrix&) = delete;
  Matrix(Matrix&& o) noexcept : mat_(o.mat_), info_(o.info_) { o.mat_ = nullptr; }
  Matrix& operator=(Matrix&& o) noexcept;
  ~Matrix();

  Mat petsc() const { return mat_; }
  const MatrixInfo& info() const { return info_; }
  MPI_Comm comm() const;

 private:
  Mat mat_ = nullptr;
  MatrixInfo info_;
};

}  // namespace lodestone
