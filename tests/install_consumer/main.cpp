// A caller that builds its own PETSc matrix (the 1-D Dirichlet Laplacian) and
// hands it to Lodestone through the installed public API, in-process: wrap,
// solve, read the pairs — no files.
#include <lodestone/matrix.hpp>
#include <lodestone/runtime.hpp>
#include <lodestone/solver.hpp>
#include <petscmat.h>

#include <cmath>
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
  bool ok = m->info().nnz == 3 * n - 2 && m->info().symmetric;

  lodestone::SolveOptions options;
  options.pairs = 3;
  options.selection = "largest";
  options.progress_seconds = 0;
  auto r = lodestone::solve(*m, options);
  if (!r) {
    if (rank == 0) std::fprintf(stderr, "consumer: %s\n", r.status().message().c_str());
    return 1;
  }
  // Eigenvalues 2 - 2cos(j pi/(n+1)), j = n, n-1, n-2 are the three largest
  // (closed form of the 1-D Dirichlet Laplacian, a standard finite-difference result).
  double worst = 0;
  for (int k = 0; k < 3; ++k) {
    const double exact = 2 - 2 * std::cos((n - k) * M_PI / (n + 1));
    worst = std::fmax(worst, std::fabs(r->eigenvalues[k] - exact));
  }
  ok = ok && r->converged == 3 && worst < 1e-6;
  if (rank == 0)
    std::printf("consumer: n=%lld nnz=%lld fingerprint=%016llx, 3 largest eigenvalues off by %.1e: %s\n",
                (long long)m->info().rows, (long long)m->info().nnz, (unsigned long long)m->info().fingerprint, worst,
                ok ? "ok" : "WRONG");
  return ok ? 0 : 1;
}
