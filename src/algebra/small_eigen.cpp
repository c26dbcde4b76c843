// Small dense eigenproblems through LAPACK (see small_eigen.hpp).
#include "algebra/small_eigen.hpp"

#include <fmt/format.h>
#include <petscsys.h>
#include <petscblaslapack.h>

#include <cmath>

#include "support/collective.hpp"

// LAPACK routines PETSc does not wrap; they live in the same LAPACK library PETSc links.
extern "C" {
void dgees_(const char* jobvs, const char* sort, void* select, const PetscBLASInt* n, double* a,
            const PetscBLASInt* lda, PetscBLASInt* sdim, double* wr, double* wi, double* vs,
            const PetscBLASInt* ldvs, double* work, const PetscBLASInt* lwork, PetscBLASInt* bwork,
            PetscBLASInt* info);
void dtrexc_(const char* compq, const PetscBLASInt* n, double* t, const PetscBLASInt* ldt, double* q,
             const PetscBLASInt* ldq, PetscBLASInt* ifst, PetscBLASInt* ilst, double* work, PetscBLASInt* info);
void dtrevc_(const char* side, const char* howmny, PetscBLASInt* select, const PetscBLASInt* n, const double* t,
             const PetscBLASInt* ldt, double* vl, const PetscBLASInt* ldvl, double* vr, const PetscBLASInt* ldvr,
             const PetscBLASInt* mm, PetscBLASInt* m, double* work, PetscBLASInt* info);
}

namespace lodestone::algebra {
namespace {

// Runs `local` on rank 0, then shares its Status.
Status on_root(MPI_Comm comm, const std::function<Status()>& local) {
  Status s = comm_rank(comm) == 0 ? local() : Status::ok();
  return agree(comm, s);
}

// Eigenvalues on the diagonal of a quasi-triangular t.
void diagonal_eigenvalues(const Small& t, std::vector<double>& re, std::vector<double>& im) {
  const int n = t.rows;
  re.assign(n, 0.0);
  im.assign(n, 0.0);
  for (int j = 0; j < n;) {
    if (j + 1 < n && t(j + 1, j) != 0.0) {
      const double a = t(j, j), b = t(j, j + 1), c = t(j + 1, j), d = t(j + 1, j + 1);
      const double mean = 0.5 * (a + d);
      const double disc = 0.25 * (a - d) * (a - d) + b * c;  // negative for a complex pair
      const double w = std::sqrt(std::fabs(disc));
      re[j] = re[j + 1] = mean;
      im[j] = w;
      im[j + 1] = -w;
      j += 2;
    } else {
      re[j] = t(j, j);
      j += 1;
    }
  }
}

}  // namespace

Result<SymmetricEigen> symmetric_eigen(MPI_Comm comm, const Small& h) {
  SymmetricEigen out;
  const int n = h.rows;
  Status s = on_root(comm, [&]() -> Status {
    out.vectors = h;
    out.values.assign(n, 0.0);
    if (n == 0) return Status::ok();
    PetscBLASInt bn = n, lwork = -1, info = 0;
    double query = 0;
    LAPACKsyev_("V", "U", &bn, out.vectors.data(), &bn, out.values.data(), &query, &lwork, &info);
    lwork = static_cast<PetscBLASInt>(query);
    std::vector<double> work(static_cast<std::size_t>(lwork));
    LAPACKsyev_("V", "U", &bn, out.vectors.data(), &bn, out.values.data(), work.data(), &lwork, &info);
    if (info != 0) return Status::input(fmt::format("the {}x{} projected eigenproblem failed (LAPACK dsyev info {})", n, n, info));
    return Status::ok();
  });
  if (!s) return s;
  broadcast(comm, out.values);
  broadcast(comm, out.vectors);
  return out;
}

Result<RealSchur> real_schur(MPI_Comm comm, const Small& h, const Priority& priority) {
  RealSchur out;
  const int n = h.rows;
  Status s = on_root(comm, [&]() -> Status {
    out.t = h;
    out.u = Small(n, n);
    if (n == 0) return Status::ok();
    PetscBLASInt bn = n, sdim = 0, info = 0, lwork = std::max(1, 8 * n);
    std::vector<double> wr(n), wi(n), work(static_cast<std::size_t>(lwork) + n);
    dgees_("V", "N", nullptr, &bn, out.t.data(), &bn, &sdim, wr.data(), wi.data(), out.u.data(), &bn, work.data(),
           &lwork, nullptr, &info);
    if (info != 0) return Status::input(fmt::format("the {}x{} projected Schur problem failed (LAPACK dgees info {})", n, n, info));
    // Selection sort of the diagonal blocks, most wanted first, by moving blocks with dtrexc.
    for (int p = 0; p < n;) {
      diagonal_eigenvalues(out.t, out.re, out.im);
      int best = p;
      double best_key = priority(out.re[p], out.im[p]);
      for (int j = p; j < n;) {
        const bool pair = out.im[j] != 0.0;
        const double key = priority(out.re[j], out.im[j]);
        if (key > best_key * (1 + 1e-14) + 1e-300 && key > best_key) best = j, best_key = key;
        j += pair ? 2 : 1;
      }
      if (best != p) {
        PetscBLASInt ifst = best + 1, ilst = p + 1;
        dtrexc_("V", &bn, out.t.data(), &bn, out.u.data(), &bn, &ifst, &ilst, work.data(), &info);
        if (info != 0) break;  // blocks too close to swap: keep the current order from here on
        diagonal_eigenvalues(out.t, out.re, out.im);
      }
      p += out.im[p] != 0.0 ? 2 : 1;
    }
    // Clean the strict lower part below 1x1 blocks.
    for (int j = 0; j < n; ++j)
      for (int i = j + 2; i < n; ++i) out.t(i, j) = 0.0;
    diagonal_eigenvalues(out.t, out.re, out.im);
    return Status::ok();
  });
  if (!s) return s;
  broadcast(comm, out.t);
  broadcast(comm, out.u);
  broadcast(comm, out.re);
  broadcast(comm, out.im);
  return out;
}

Result<Small> schur_eigenvectors(MPI_Comm comm, const Small& t) {
  const int n = t.rows;
  Small vr(n, n);
  Status s = on_root(comm, [&]() -> Status {
    if (n == 0) return Status::ok();
    PetscBLASInt bn = n, m = 0, info = 0;
    std::vector<double> work(static_cast<std::size_t>(3 * n));
    dtrevc_("R", "A", nullptr, &bn, t.data(), &bn, nullptr, &bn, vr.data(), &bn, &bn, &m, work.data(), &info);
    if (info != 0) return Status::input(fmt::format("eigenvectors of the {}x{} Schur form failed (LAPACK dtrevc info {})", n, n, info));
    return Status::ok();
  });
  if (!s) return s;
  broadcast(comm, vr);
  return vr;
}

void quasi_triangular_eigenvalues(const Small& t, std::vector<double>& re, std::vector<double>& im) {
  diagonal_eigenvalues(t, re, im);
}

bool cholesky_upper(Small& g) {
  const int n = g.rows;
  if (n == 0) return true;
  PetscBLASInt bn = n, info = 0;
  LAPACKpotrf_("U", &bn, g.data(), &bn, &info);
  if (info != 0) return false;
  for (int j = 0; j < n; ++j)
    for (int i = j + 1; i < n; ++i) g(i, j) = 0.0;
  return true;
}

}  // namespace lodestone::algebra
