// Small dense matrices, replicated on every rank: Gram matrices, projected
// problems and rotations of a block. Column-major, like BLAS and LAPACK.
#pragma once

#include <mpi.h>

#include <cstddef>
#include <vector>

namespace lodestone::algebra {

struct Small {
  int rows = 0;
  int cols = 0;
  std::vector<double> a;  // column-major, rows * cols

  Small() = default;
  Small(int r, int c) : rows(r), cols(c), a(static_cast<std::size_t>(r) * c, 0.0) {}
  static Small identity(int n);
  double& operator()(int i, int j) { return a[static_cast<std::size_t>(j) * rows + i]; }
  double operator()(int i, int j) const { return a[static_cast<std::size_t>(j) * rows + i]; }
  double* data() { return a.data(); }
  const double* data() const { return a.data(); }
  // Columns [c0, c0+n) as a new matrix.
  Small columns(int c0, int n) const;
  // Rows [r0, r0+m) and columns [c0, c0+n).
  Small sub(int r0, int m, int c0, int n) const;
};

// C = A * B (both small).
Small multiply(const Small& a, const Small& b);
// A^T.
Small transpose(const Small& a);

// Collective: every rank leaves with rank 0's copy, so no rank's later
// decisions can drift from another's by rounding.
void broadcast(MPI_Comm comm, Small& m);
void broadcast(MPI_Comm comm, std::vector<double>& v);

// Collective. In-place sum over ranks that leaves every rank with bit-identical
// values (reduced on rank 0, then broadcast): an MPI_Allreduce may round
// differently on different ranks, and a decision taken on such a value (a
// convergence test, a fallback) must be the same everywhere or ranks diverge.
void sum_replicated(MPI_Comm comm, double* values, int count);

}  // namespace lodestone::algebra
