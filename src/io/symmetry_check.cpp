// Checking a matrix declared symmetric: |a_ij - a_ji| <= tol * max|a|, naming the first failing row.
#include <fmt/format.h>

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
      for (PetscInt i = 0; i < m; ++i) y[i] = PetscMax(PetscRealPart(y[i]), PetscAbsScalar(x[j * lda + i]));
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

Status check_symmetric(Mat a, double tolerance, const std::string& where) {
  MPI_Comm comm = PetscObjectComm(reinterpret_cast<PetscObject>(a));
  Mat diff = nullptr;
  Vec rowmax = nullptr;
  double amax = 0, dmax = 0;
  std::int64_t first_bad = -1;
  Status s = [&]() -> Status {
    LODESTONE_PETSC(MatCreateVecs(a, nullptr, &rowmax));
    LODESTONE_TRY(max_abs_per_row(a, rowmax, &amax));
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
  if (dmax <= tolerance * amax) return Status::ok();
  std::int64_t row = min_all(comm, first_bad < 0 ? INT64_MAX : first_bad);
  return Status::input(fmt::format("{}: declared symmetric but is not: row {} differs from its column by up to {:.3g} "
                                   "(tolerance {:.3g} x max|a| = {:.3g}); set symmetric=0 or relax --symmetry-tolerance",
                                   where, row, dmax, tolerance, tolerance * amax));
}

}  // namespace lodestone::io
