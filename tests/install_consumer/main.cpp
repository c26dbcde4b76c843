// A caller that builds its own PETSc matrix (the 1-D Dirichlet Laplacian) and
// hands it to Lodestone through the installed public API.
#include <lodestone/matrix.hpp>
#include <lodestone/runtime.hpp>
#include <petscmat.h>

#include <cstdio>

int main(int argc, char** argv) {
  lodestone::Runtime runtime(&argc, &argv);
  const PetscInt n = 50;
  Mat a;
  MatCreateAIJ(PETSC_COMM_WORLD, PETSC_DECIDE, PETSC_DECIDE, n, n, 3, nullptr, 2, nullptr, &a);
  PetscInt lo, hi;
  MatGetOwnershipRange(a, &lo, &hi);
  for (PetscInt i = lo; i < hi; ++i) {
    if (i > 0) MatSetValue(a, i, i - 1, -1.0, INSERT_VALUES);
    MatSetValue(a, i, i, 2.0, INSERT_VALUES);
    if (i + 1 < n) MatSetValue(a, i, i + 1, -1.0, INSERT_VALUES);
  }
  MatAssemblyBegin(a, MAT_FINAL_ASSEMBLY);
  MatAssemblyEnd(a, MAT_FINAL_ASSEMBLY);
  auto m = lodestone::Matrix::wrap(a, true);
  MatDestroy(&a);
  int rank = 0;
  MPI_Comm_rank(PETSC_COMM_WORLD, &rank);
  if (!m) {
    if (rank == 0) std::fprintf(stderr, "consumer: %s\n", m.status().message().c_str());
    return 1;
  }
  // 1-D Laplacian: n diagonal entries and 2(n-1) off-diagonal ones (closed form).
  const bool ok = m->info().nnz == 3 * n - 2 && m->info().symmetric;
  if (rank == 0) std::printf("consumer: n=%lld nnz=%lld fingerprint=%016llx %s\n", (long long)m->info().rows,
                             (long long)m->info().nnz, (unsigned long long)m->info().fingerprint, ok ? "ok" : "WRONG");
  return ok ? 0 : 1;
}
