// verify_result: recomputing residuals, norms and orthogonality of a SolveResult.
#include "lodestone/verify.hpp"

#include <fmt/format.h>
#include <petscmat.h>

#include <algorithm>
#include <cmath>
#include <limits>

#include "algebra/operator.hpp"
#include "io/result_file.hpp"
#include "support/collective.hpp"
#include "support/petsc_status.hpp"

namespace lodestone {

namespace {

constexpr double kEps = std::numeric_limits<double>::epsilon();

// Owns a PETSc Mat for the length of a scope.
struct MatGuard {
  Mat m = nullptr;
  ~MatGuard() {
    if (m) MatDestroy(&m);
  }
};

// Checks the places of complex pairs: j holds a + ib, j+1 holds a - ib.
Status check_pair_structure(const SolveResult& r) {
  const std::int64_t k = r.pairs();
  for (std::int64_t j = 0; j < k; ++j) {
    const double b = r.eigenvalues_imag[static_cast<std::size_t>(j)];
    if (b == 0.0) continue;
    if (j + 1 >= k || r.eigenvalues_imag[static_cast<std::size_t>(j + 1)] != -b ||
        r.eigenvalues[static_cast<std::size_t>(j + 1)] != r.eigenvalues[static_cast<std::size_t>(j)])
      return Status::input(fmt::format("pair {} has the complex eigenvalue {} {:+}i, but place {} does not hold its "
                                       "conjugate (complex pairs take two neighbouring places)",
                                       j + 1, r.eigenvalues[static_cast<std::size_t>(j)], b, j + 2));
    ++j;
  }
  return Status::ok();
}

// Each vector's norm and, for a symmetric matrix, G = V^T V first; then
// R := A V - V Lambda, column by column (complex pairs mix two columns), and
// each pair's residual.
Status compute(Mat a, const SolveResult& r, bool symmetric, VerifyReport* out, std::vector<double>* gram) {
  MPI_Comm comm = PetscObjectComm(reinterpret_cast<PetscObject>(a));
  const std::int64_t k = r.pairs(), m = r.local_rows();
  std::vector<double> data = r.vectors;  // PETSc uses this storage in place
  MatGuard v, w, g;
  LODESTONE_PETSC(MatCreateDense(comm, static_cast<PetscInt>(m), PETSC_DECIDE, static_cast<PetscInt>(r.rows),
                                 static_cast<PetscInt>(k), m > 0 ? data.data() : nullptr, &v.m));

  std::vector<PetscReal> vnorm(static_cast<std::size_t>(k)), rnorm(static_cast<std::size_t>(k));
  LODESTONE_PETSC(MatGetColumnNorms(v.m, NORM_2, vnorm.data()));
  if (symmetric && k > 1) {
    // G = V^T V, distributed by rows; gathered whole (K x K is small) on every rank.
    LODESTONE_PETSC(MatTransposeMatMult(v.m, v.m, MAT_INITIAL_MATRIX, PETSC_DEFAULT, &g.m));
    PetscInt lo = 0, hi = 0, ldg = 0;
    const PetscScalar* gv = nullptr;
    LODESTONE_PETSC(MatGetOwnershipRange(g.m, &lo, &hi));
    LODESTONE_PETSC(MatDenseGetLDA(g.m, &ldg));
    LODESTONE_PETSC(MatDenseGetArrayRead(g.m, &gv));
    std::vector<double> mine(static_cast<std::size_t>(k * k), 0.0);
    for (PetscInt i = lo; i < hi; ++i)
      for (std::int64_t j = 0; j < k; ++j) mine[static_cast<std::size_t>(i * k + j)] = gv[(i - lo) + j * ldg];
    LODESTONE_PETSC(MatDenseRestoreArrayRead(g.m, &gv));
    gram->assign(mine.size(), 0.0);
    MPI_Allreduce(mine.data(), gram->data(), static_cast<int>(mine.size()), MPI_DOUBLE, MPI_SUM, comm);
  }

  // For a matrix whose norm is near 1e+-300 the squares inside the column norms
  // of R would overflow or underflow: R is then formed as A (cV) - (cV) Lambda
  // with c a power of two that brings c ||A|| near 1, and its norms divided by c.
  // V is scaled in place, after its own norms and G above were taken from it, so
  // no second copy of the block is needed and nothing has to be undone.
  const double c = 1.0 / algebra::extreme_scale(r.norm_estimate);
  if (c != 1.0) LODESTONE_PETSC(MatScale(v.m, c));
  LODESTONE_PETSC(MatMatMult(a, v.m, MAT_INITIAL_MATRIX, PETSC_DEFAULT, &w.m));
  {
    PetscScalar* rw = nullptr;
    PetscInt ldw = 0;
    LODESTONE_PETSC(MatDenseGetLDA(w.m, &ldw));
    LODESTONE_PETSC(MatDenseGetArray(w.m, &rw));
    const double* x = data.data();  // c V
    for (std::int64_t j = 0; j < k; ++j) {
      const double lam = r.eigenvalues[static_cast<std::size_t>(j)];
      const double b = r.eigenvalues_imag[static_cast<std::size_t>(j)];
      PetscScalar* rj = rw + j * ldw;
      const double* xj = x + j * m;
      if (b == 0.0) {
        for (std::int64_t i = 0; i < m; ++i) rj[i] -= lam * xj[i];
        continue;
      }
      // v = x + iy for lambda = a + ib: real part A x - a x + b y, imaginary part A y - b x - a y.
      PetscScalar* rk = rw + (j + 1) * ldw;
      const double* yj = x + (j + 1) * m;
      for (std::int64_t i = 0; i < m; ++i) {
        rj[i] += -lam * xj[i] + b * yj[i];
        rk[i] += -b * xj[i] - lam * yj[i];
      }
      ++j;
    }
    LODESTONE_PETSC(MatDenseRestoreArray(w.m, &rw));
  }
  LODESTONE_PETSC(MatGetColumnNorms(w.m, NORM_2, rnorm.data()));  // c times the residual norms

  out->pairs.assign(static_cast<std::size_t>(k), PairCheck{});
  for (std::int64_t j = 0; j < k; ++j) {
    auto& p = out->pairs[static_cast<std::size_t>(j)];
    const bool complex = r.eigenvalues_imag[static_cast<std::size_t>(j)] != 0.0;
    double res2 = rnorm[j] * rnorm[j], norm2 = vnorm[j] * vnorm[j];
    if (complex) {
      const std::int64_t o = r.eigenvalues_imag[static_cast<std::size_t>(j)] > 0 ? j + 1 : j - 1;
      res2 += rnorm[o] * rnorm[o];
      norm2 += vnorm[o] * vnorm[o];
    }
    const double norm = std::sqrt(norm2);
    p.residual = norm > 0 ? std::sqrt(res2) / norm / c : std::numeric_limits<double>::infinity();
    p.norm_error = std::abs(norm - 1.0);
  }
  return Status::ok();
}

}  // namespace

double verify_residual_limit(double tolerance, double norm_estimate, std::int64_t n) {
  return tolerance * norm_estimate * (1.0 + 1e-2) + 100.0 * std::sqrt(static_cast<double>(n)) * kEps * norm_estimate;
}

double verify_vector_bound(std::int64_t n) { return std::max(1e-8, 100.0 * std::sqrt(static_cast<double>(n)) * kEps); }

Result<VerifyReport> verify_result(const Matrix& matrix, const SolveResult& given) {
  // An in-process result may leave the imaginary parts empty: they are zeros.
  SolveResult filled;
  if (given.eigenvalues_imag.empty() && given.pairs() > 0) {
    filled = given;
    filled.eigenvalues_imag.assign(static_cast<std::size_t>(given.pairs()), 0.0);
  }
  const SolveResult& result = filled.eigenvalues_imag.empty() ? given : filled;
  if (static_cast<std::int64_t>(result.eigenvalues_imag.size()) != result.pairs() ||
      static_cast<std::int64_t>(result.residual_norms.size()) != result.pairs() ||
      static_cast<std::int64_t>(result.vectors.size()) != result.pairs() * result.local_rows())
    return Status::input("the result's arrays do not fit together (eigenvalues, residual norms, vectors)");
  MPI_Comm comm = matrix.comm();
  const MatrixInfo& info = matrix.info();
  if (result.matrix_fingerprint != info.fingerprint || result.rows != info.rows)
    return Status::input(fmt::format(
        "the result is for a different matrix: it records fingerprint {} and {} rows; the matrix has fingerprint {} "
        "and {} rows",
        io::fingerprint_text(result.matrix_fingerprint), result.rows, io::fingerprint_text(info.fingerprint), info.rows));
  Status s;
  if (result.row_begin != info.row_begin || result.row_end != info.row_end)
    s = Status::input(fmt::format("rank {} holds result rows [{}, {}) but matrix rows [{}, {}); read the result with "
                                  "the matrix's row range",
                                  comm_rank(comm), result.row_begin, result.row_end, info.row_begin, info.row_end));
  LODESTONE_TRY(agree(comm, s));
  LODESTONE_TRY(check_pair_structure(result));  // replicated data: same verdict on every rank

  VerifyReport rep;
  rep.symmetric = info.symmetric;
  rep.residual_limit = verify_residual_limit(result.tolerance, result.norm_estimate, info.rows);
  rep.norm_bound = verify_vector_bound(info.rows);
  rep.orthogonality_bound = rep.symmetric ? verify_vector_bound(info.rows) : 0.0;
  rep.checked = result.converged;
  std::vector<double> gram;  // V^T V (K x K, row-major), symmetric matrices only
  if (result.pairs() > 0) LODESTONE_TRY(agree(comm, compute(matrix.petsc(), result, rep.symmetric, &rep, &gram)));

  // Orthogonality is a property of the set, so a broken vector would make every
  // intact one look "not orthogonal" to it. It is judged only among the checked
  // pairs that pass on their own (residual, length); the broken one is blamed
  // for its own defect.
  const std::int64_t k = result.pairs();
  std::vector<char> sound(static_cast<std::size_t>(k), 0);
  for (std::int64_t j = 0; j < k && j < result.converged; ++j) {
    const auto& p = rep.pairs[static_cast<std::size_t>(j)];
    sound[static_cast<std::size_t>(j)] = std::isfinite(result.eigenvalues[static_cast<std::size_t>(j)]) &&
                                         p.residual <= rep.residual_limit && p.norm_error <= rep.norm_bound;
  }
  if (!gram.empty())
    for (std::int64_t i = 0; i < k; ++i)
      for (std::int64_t j = 0; j < k; ++j)
        if (i != j && sound[static_cast<std::size_t>(i)] && sound[static_cast<std::size_t>(j)]) {
          auto& o = rep.pairs[static_cast<std::size_t>(i)].orthogonality;
          o = std::max(o, std::abs(gram[static_cast<std::size_t>(i * k + j)]));
        }

  for (std::int64_t j = 0; j < result.pairs(); ++j) {
    auto& p = rep.pairs[static_cast<std::size_t>(j)];
    p.eigenvalue = result.eigenvalues[static_cast<std::size_t>(j)];
    p.eigenvalue_imag = result.eigenvalues_imag[static_cast<std::size_t>(j)];
    p.stored_residual = result.residual_norms[static_cast<std::size_t>(j)];
    p.checked = j < result.converged;
    if (!p.checked) {
      p.verdict = "not converged (not checked)";
      continue;
    }
    std::string why;  // the long reason, for the one-line message
    if (!std::isfinite(p.eigenvalue) || !std::isfinite(p.eigenvalue_imag)) {
      p.verdict = "bad eigenvalue";
      why = "the eigenvalue is not a finite number";
    } else if (!(p.residual <= rep.residual_limit)) {
      p.verdict = "residual too large";
      why = fmt::format("recomputed residual {:.3e} exceeds the limit {:.3e}", p.residual, rep.residual_limit);
    } else if (!(p.norm_error <= rep.norm_bound)) {
      p.verdict = "not unit length";
      why = fmt::format("the vector's length is off 1 by {:.3e} (bound {:.1e})", p.norm_error, rep.norm_bound);
    } else if (rep.symmetric && !(p.orthogonality <= rep.orthogonality_bound)) {
      p.verdict = "not orthogonal";
      why = fmt::format("the vector is not orthogonal to the others: |v_i . v_j| up to {:.3e} (bound {:.1e})",
                        p.orthogonality, rep.orthogonality_bound);
    } else {
      p.verdict = "ok";
    }
    p.passed = why.empty();
    if (!p.passed) {
      if (rep.failed == 0) rep.first_failure = fmt::format("pair {}: {}", j + 1, why);
      ++rep.failed;
    }
  }
  return rep;
}

}  // namespace lodestone
