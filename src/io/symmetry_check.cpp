// Checking a matrix declared symmetric: |a_ij - a_ji| <= tol * max|a|, naming the first failing row.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <vector>

#include "io/matrix_reader.hpp"
#include "support/collective.hpp"
#include "support/petsc_status.hpp"

namespace lodestone::io {

static Status max_abs_per_row(Mat a, Vec out, double* overall) {
  PetscBool dense = PETSC_FALSE;
  LODESTONE_PETSC(PetscObjectTypeCompareAny(reinterpret_cast<PetscObject>(a), &dense, MATSEQDENSE, MATMPIDENSE, ""));
  if (dense) {
    // PETSc has no row maximum for distributed dense matrices: scan the local
    // column-major block directly.
    const PetscScalar* x = nullptr;
    PetscScalar* y = nullptr;
    PetscInt lda = 0, m = 0, n = 0;
    LODESTONE_PETSC(MatGetLocalSize(a, &m, nullptr));
    LODESTONE_PETSC(MatGetSize(a, nullptr, &n));
    LODESTONE_PETSC(MatDenseGetLDA(a, &lda));
    LODESTONE_PETSC(MatDenseGetArrayRead(a, &x));
    LODESTONE_PETSC(VecGetArray(out, &y));
    for (PetscInt i = 0; i < m; ++i) y[i] = 0;
    for (PetscInt j = 0; j < n; ++j)
      for (PetscInt i = 0; i < m; ++i)
        y[i] = PetscMax(PetscRealPart(y[i]), PetscAbsScalar(x[static_cast<std::int64_t>(j) * lda + i]));
    LODESTONE_PETSC(VecRestoreArray(out, &y));
    LODESTONE_PETSC(MatDenseRestoreArrayRead(a, &x));
  } else {
    LODESTONE_PETSC(MatGetRowMaxAbs(a, out, nullptr));
  }
  PetscReal m = 0;
  LODESTONE_PETSC(VecMax(out, nullptr, &m));
  *overall = m;
  return Status::ok();
}

// A dense matrix, by the ranks' column-major row blocks: a_ij against a_ji without a
// transposed copy. Step 0 compares the rank's own diagonal block; in step t every rank
// sends rank r + t the columns of its rows that name rank r + t's rows (straight from
// the matrix's storage) and receives, a piece of at most piece_values values at a time,
// rank r - t's columns of its own rows. *dmax: the largest |a_ij - a_ji| in this rank's
// rows; *first_bad: its first row with a difference above limit (-1: none).
static Status dense_asymmetry(Mat a, double limit, std::int64_t piece_values, double* dmax, std::int64_t* first_bad) {
  MPI_Comm comm = PetscObjectComm(reinterpret_cast<PetscObject>(a));
  int size = 1, rank = 0;
  MPI_Comm_size(comm, &size);
  MPI_Comm_rank(comm, &rank);
  const PetscInt* ranges = nullptr;
  PetscInt lda = 0;
  LODESTONE_PETSC(MatGetOwnershipRanges(a, &ranges));
  LODESTONE_PETSC(MatDenseGetLDA(a, &lda));
  const std::int64_t lo = ranges[rank], m = ranges[rank + 1] - ranges[rank];
  const PetscScalar* x = nullptr;
  LODESTONE_PETSC(MatDenseGetArrayRead(a, &x));
  // a(lo + i, col) for this rank's row i.
  const auto at = [&](std::int64_t i, std::int64_t col) { return x[i + col * static_cast<std::int64_t>(lda)]; };
  std::vector<double> row_diff(static_cast<std::size_t>(m), 0.0);
  // row_diff[i] = max over k < rows_k of |a(lo + i, col0 + k) - t(k, i)|, for this rank's rows
  // i in [i0, i1): one of the two sides is read across its columns, so by tiles of kTile x kTile
  // that stay in cache.
  constexpr std::int64_t kTile = 32;
  const auto compare = [&](std::int64_t i0, std::int64_t i1, std::int64_t col0, std::int64_t rows_k, auto&& t) {
    for (std::int64_t kb = 0; kb < rows_k; kb += kTile)
      for (std::int64_t ib = i0; ib < i1; ib += kTile)
        for (std::int64_t k = kb; k < std::min(kb + kTile, rows_k); ++k)
          for (std::int64_t i = ib; i < std::min(ib + kTile, i1); ++i)
            row_diff[i] = std::max(row_diff[i], std::abs(at(i, col0 + k) - t(k, i)));
  };
  compare(0, m, lo, m, [&](std::int64_t k, std::int64_t i) { return at(k, lo + i); });  // the diagonal block
  // The pieces of one rank's columns for another's rows: as many whole columns (the
  // sender's m values each) as fit in piece_values; sender and receiver count alike.
  const auto width = [&](std::int64_t sender_rows) {
    return std::max<std::int64_t>(1, piece_values / std::max<std::int64_t>(sender_rows, 1));
  };
  // One column of this rank's rows, lda values from the next: count c of them = c columns.
  MPI_Datatype column = MPI_DATATYPE_NULL, columns = MPI_DATATYPE_NULL;
  MPI_Type_contiguous(static_cast<int>(m), MPI_DOUBLE, &column);
  MPI_Type_create_resized(column, 0, static_cast<MPI_Aint>(lda) * static_cast<MPI_Aint>(sizeof(double)), &columns);
  MPI_Type_commit(&columns);
  MPI_Type_free(&column);
  std::vector<MPI_Request> sends;
  std::vector<double> piece;
  int failed = 0;
  for (int t = 1; t < size; ++t) {
    const int to = (rank + t) % size, from = (rank - t + size) % size;
    const std::int64_t to_lo = ranges[to], to_m = ranges[to + 1] - to_lo;
    const std::int64_t from_lo = ranges[from], from_m = ranges[from + 1] - from_lo;
    sends.clear();
    if (m > 0)
      for (std::int64_t c0 = 0; c0 < to_m; c0 += width(m)) {
        const int count = static_cast<int>(std::min(width(m), to_m - c0));
        sends.push_back(MPI_REQUEST_NULL);
        failed |= MPI_Isend(x + (to_lo + c0) * static_cast<std::int64_t>(lda), count, columns, to, t, comm, &sends.back());
      }
    if (from_m > 0)
      for (std::int64_t r0 = 0; r0 < m; r0 += width(from_m)) {
        const std::int64_t count = std::min(width(from_m), m - r0);
        // piece[k + i * from_m] = a(from_lo + k, lo + r0 + i).
        piece.resize(static_cast<std::size_t>(count * from_m));
        failed |= MPI_Recv(piece.data(), static_cast<int>(count * from_m), MPI_DOUBLE, from, t, comm, MPI_STATUS_IGNORE);
        const double* got = piece.data();
        compare(r0, r0 + count, from_lo, from_m,
                [&](std::int64_t k, std::int64_t i) { return got[k + (i - r0) * from_m]; });
      }
    failed |= MPI_Waitall(static_cast<int>(sends.size()), sends.data(), MPI_STATUSES_IGNORE);
  }
  MPI_Type_free(&columns);
  LODESTONE_PETSC(MatDenseRestoreArrayRead(a, &x));
  if (failed != 0) return Status::input("internal: the symmetry check could not exchange the matrix's rows");
  *dmax = 0;
  *first_bad = -1;
  for (std::int64_t i = 0; i < m; ++i) {
    *dmax = std::max(*dmax, row_diff[i]);
    if (*first_bad < 0 && row_diff[i] > limit) *first_bad = lo + i;
  }
  return Status::ok();
}

Status check_symmetric(Mat a, double tolerance, const std::string& where, std::int64_t piece_values) {
  MPI_Comm comm = PetscObjectComm(reinterpret_cast<PetscObject>(a));
  PetscBool is_dense = PETSC_FALSE;
  LODESTONE_PETSC(
      PetscObjectTypeCompareAny(reinterpret_cast<PetscObject>(a), &is_dense, MATSEQDENSE, MATMPIDENSE, ""));
  Mat diff = nullptr;
  Vec rowmax = nullptr;
  double amax = 0, dmax = 0;
  std::int64_t first_bad = -1;
  Status s = [&]() -> Status {
    LODESTONE_PETSC(MatCreateVecs(a, nullptr, &rowmax));
    LODESTONE_TRY(max_abs_per_row(a, rowmax, &amax));
    if (is_dense) {
      LODESTONE_TRY(dense_asymmetry(a, tolerance * amax, piece_values, &dmax, &first_bad));
      return Status::ok();
    }
    LODESTONE_PETSC(MatTranspose(a, MAT_INITIAL_MATRIX, &diff));
    LODESTONE_PETSC(MatAXPY(diff, -1.0, a, DIFFERENT_NONZERO_PATTERN));
    LODESTONE_TRY(max_abs_per_row(diff, rowmax, &dmax));
    if (dmax <= tolerance * amax) return Status::ok();
    const PetscScalar* v = nullptr;
    PetscInt lo = 0, hi = 0;
    LODESTONE_PETSC(VecGetOwnershipRange(rowmax, &lo, &hi));
    LODESTONE_PETSC(VecGetArrayRead(rowmax, &v));
    for (PetscInt i = 0; i < hi - lo; ++i)
      if (PetscRealPart(v[i]) > tolerance * amax) {
        first_bad = lo + i;
        break;
      }
    LODESTONE_PETSC(VecRestoreArrayRead(rowmax, &v));
    return Status::ok();
  }();
  if (diff) MatDestroy(&diff);
  if (rowmax) VecDestroy(&rowmax);
  LODESTONE_TRY(agree(comm, s));
  if (is_dense) dmax = max_all(comm, dmax);  // each rank measured its own rows
  if (dmax <= tolerance * amax) return Status::ok();
  std::int64_t row = min_all(comm, first_bad < 0 ? INT64_MAX : first_bad);
  return Status::input(fmt::format("{}: declared symmetric but is not: row {} differs from its column by up to {:.3g} "
                                   "(tolerance {:.3g} x max|a| = {:.3g}); set symmetric=0 or relax --symmetry-tolerance",
                                   where, row, dmax, tolerance, tolerance * amax));
}

}  // namespace lodestone::io
