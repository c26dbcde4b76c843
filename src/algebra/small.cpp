// Small replicated dense matrices (see small.hpp).
#include "algebra/small.hpp"

#include <petscsys.h>
#include <petscblaslapack.h>

namespace lodestone::algebra {

Small Small::identity(int n) {
  Small m(n, n);
  for (int i = 0; i < n; ++i) m(i, i) = 1.0;
  return m;
}

Small Small::columns(int c0, int n) const { return sub(0, rows, c0, n); }

Small Small::sub(int r0, int m, int c0, int n) const {
  Small out(m, n);
  for (int j = 0; j < n; ++j)
    for (int i = 0; i < m; ++i) out(i, j) = (*this)(r0 + i, c0 + j);
  return out;
}

Small multiply(const Small& a, const Small& b) {
  Small c(a.rows, b.cols);
  if (a.rows == 0 || b.cols == 0 || a.cols == 0) return c;
  PetscBLASInt m = a.rows, n = b.cols, k = a.cols;
  double one = 1.0, zero = 0.0;
  BLASgemm_("N", "N", &m, &n, &k, &one, a.data(), &m, b.data(), &k, &zero, c.data(), &m);
  return c;
}

Small transpose(const Small& a) {
  Small t(a.cols, a.rows);
  for (int j = 0; j < a.cols; ++j)
    for (int i = 0; i < a.rows; ++i) t(j, i) = a(i, j);
  return t;
}

void broadcast(MPI_Comm comm, Small& m) {
  int shape[2] = {m.rows, m.cols};
  MPI_Bcast(shape, 2, MPI_INT, 0, comm);
  m.rows = shape[0];
  m.cols = shape[1];
  m.a.resize(static_cast<std::size_t>(m.rows) * m.cols);
  if (!m.a.empty()) MPI_Bcast(m.a.data(), static_cast<int>(m.a.size()), MPI_DOUBLE, 0, comm);
}

void broadcast(MPI_Comm comm, std::vector<double>& v) {
  long long n = static_cast<long long>(v.size());
  MPI_Bcast(&n, 1, MPI_LONG_LONG, 0, comm);
  v.resize(static_cast<std::size_t>(n));
  if (n > 0) MPI_Bcast(v.data(), static_cast<int>(n), MPI_DOUBLE, 0, comm);
}

void sum_replicated(MPI_Comm comm, double* values, int count) {
  if (count <= 0) return;
  int rank = 0;
  MPI_Comm_rank(comm, &rank);
  MPI_Reduce(rank == 0 ? MPI_IN_PLACE : values, values, count, MPI_DOUBLE, MPI_SUM, 0, comm);
  MPI_Bcast(values, count, MPI_DOUBLE, 0, comm);
}

}  // namespace lodestone::algebra
