// Numerically hostile but valid matrices, for every method (power, block, krylov,
// chebyshev, auto): each gives the right pairs, or refuses with a specific
// message, and never returns NaN or a pair whose residual does not hold up.
// Expected values are closed forms, named beside each case.
#include <gtest/gtest.h>

#include <cmath>
#include <string>
#include <vector>

#include "io/generators.hpp"
#include "test_solver_matrices.hpp"

using namespace lodestone;

namespace {

const char* const kMethods[] = {"power", "block", "chebyshev", "krylov", "auto"};

bool all_finite(const SolveResult& r) {
  for (double v : r.eigenvalues)
    if (!std::isfinite(v)) return false;
  for (double v : r.eigenvalues_imag)
    if (!std::isfinite(v)) return false;
  for (double v : r.residual_norms)
    if (!std::isfinite(v)) return false;
  for (double v : r.vectors)
    if (!std::isfinite(v)) return false;
  return true;
}

// ||A v_j - lambda_j v_j|| for a real pair, recomputed here on c A and c lambda_j
// with c a power of two that brings ||A||_inf near 1 (exact scaling), then divided
// by c: at 1e-300 the residual itself would be a subnormal number, and at 1e+300
// PETSc's NORM_2 would overflow.
double residual(const Matrix& m, const SolveResult& r, std::int64_t j) {
  PetscReal big = 0;
  MatNorm(m.petsc(), NORM_INFINITY, &big);
  int e = 0;
  std::frexp(big > 0 ? big : 1.0, &e);
  const double c = std::ldexp(1.0, -e);
  Mat a;
  MatDuplicate(m.petsc(), MAT_COPY_VALUES, &a);
  MatScale(a, c);
  Vec x, y;
  MatCreateVecs(a, &x, &y);
  PetscScalar* px = nullptr;
  VecGetArray(x, &px);
  for (std::int64_t i = 0; i < r.local_rows(); ++i) px[i] = r.vectors[static_cast<std::size_t>(j * r.local_rows() + i)];
  VecRestoreArray(x, &px);
  MatMult(a, x, y);
  VecAXPY(y, -c * r.eigenvalues[static_cast<std::size_t>(j)], x);
  PetscReal ny = 0, nx = 0;
  VecNorm(y, NORM_2, &ny);
  VecNorm(x, NORM_2, &nx);
  VecDestroy(&x);
  VecDestroy(&y);
  MatDestroy(&a);
  return ny / nx / c;
}

// ||A x - lambda x|| / ||x|| for the complex pair in columns j (real part) and
// j + 1 (imaginary part) with lambda = re_j + i im_j (unscaled: for moderate norms).
double complex_residual(const Matrix& m, const SolveResult& r, std::int64_t j) {
  if (j + 1 >= r.pairs()) return INFINITY;
  Vec xr, xi, yr, yi;
  MatCreateVecs(m.petsc(), &xr, &yr);
  VecDuplicate(xr, &xi);
  VecDuplicate(yr, &yi);
  PetscScalar *pr = nullptr, *pi = nullptr;
  VecGetArray(xr, &pr);
  VecGetArray(xi, &pi);
  for (std::int64_t i = 0; i < r.local_rows(); ++i) {
    pr[i] = r.vectors[static_cast<std::size_t>(j * r.local_rows() + i)];
    pi[i] = r.vectors[static_cast<std::size_t>((j + 1) * r.local_rows() + i)];
  }
  VecRestoreArray(xr, &pr);
  VecRestoreArray(xi, &pi);
  const double a = r.eigenvalues[static_cast<std::size_t>(j)], b = r.eigenvalues_imag[static_cast<std::size_t>(j)];
  MatMult(m.petsc(), xr, yr);  // real part: A xr - a xr + b xi
  MatMult(m.petsc(), xi, yi);  // imaginary part: A xi - b xr - a xi
  VecAXPBYPCZ(yr, -a, b, 1.0, xr, xi);
  VecAXPBYPCZ(yi, -b, -a, 1.0, xr, xi);
  PetscReal nyr = 0, nyi = 0, nxr = 0, nxi = 0;
  VecNorm(yr, NORM_2, &nyr);
  VecNorm(yi, NORM_2, &nyi);
  VecNorm(xr, NORM_2, &nxr);
  VecNorm(xi, NORM_2, &nxi);
  for (Vec* v : {&xr, &xi, &yr, &yi}) VecDestroy(v);
  return std::hypot(nyr, nyi) / std::hypot(nxr, nxi);
}

// The returned pairs match `want` (in selection order) to `tol` * scale, every
// converged pair's residual recomputed here holds, and the vectors have unit
// norm (and are orthonormal when `orthonormal`).
void expect_pairs(const Matrix& m, const SolveResult& r, const std::vector<double>& want, double scale,
                  bool orthonormal, double tol = 1e-7) {
  ASSERT_TRUE(all_finite(r)) << "NaN or infinity in the result";
  ASSERT_EQ(r.pairs(), static_cast<std::int64_t>(want.size()));
  EXPECT_EQ(r.converged, r.pairs());
  for (std::size_t j = 0; j < want.size(); ++j) {
    EXPECT_NEAR(r.eigenvalues[j], want[j], tol * scale) << "pair " << j;
    EXPECT_EQ(r.eigenvalues_imag[j], 0.0) << "pair " << j;
    const double res = residual(m, r, static_cast<std::int64_t>(j));
    EXPECT_LE(res, 10 * r.tolerance * r.norm_estimate) << "pair " << j;
    EXPECT_LE(r.residual_norms[j], r.tolerance * r.norm_estimate) << "pair " << j;
  }
  const auto g = test::vector_gram(MPI_COMM_WORLD, r);
  const std::int64_t k = r.pairs();
  for (std::int64_t a = 0; a < k; ++a)
    for (std::int64_t b = 0; b < k; ++b) {
      if (a == b || orthonormal) {
        EXPECT_NEAR(g[static_cast<std::size_t>(a * k + b)], a == b ? 1.0 : 0.0, 1e-8) << "Gram entry " << a << "," << b;
      }
    }
}

Result<SolveResult> run(const Matrix& m, std::int64_t k, const std::string& method, const std::string& select,
                        std::int64_t max_matvecs = 200000) {
  auto o = test::quiet_options(k, method, select);
  o.max_matvecs = max_matvecs;
  return solve(m, o);
}

test::RowRule diagonal(std::vector<double> d) {
  return [d](std::int64_t i, test::Entries& e) {
    if (d[static_cast<std::size_t>(i)] != 0.0) e.push_back({i, d[static_cast<std::size_t>(i)]});
  };
}

}  // namespace

// The zero matrix: A x = 0 for every x, so every vector is an eigenvector with
// eigenvalue 0 and ||A||_est = 0 (closed form). No division by zero, no NaN.
TEST(HostileMatrices, ZeroMatrix) {
  const std::int64_t n = 9;
  auto m = test::build_aij(MPI_COMM_WORLD, n, true, [](std::int64_t, test::Entries&) {});
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  for (const char* method : kMethods) {
    SCOPED_TRACE(method);
    auto r = run(*m, 2, method, "magnitude");
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    expect_pairs(*m, *r, {0.0, 0.0}, 1.0, true);
    EXPECT_GT(r->norm_estimate, 0.0);  // a zero matrix is measured against 1 (src/api/solver.cpp)
  }
}

// The identity: every vector is an eigenvector with eigenvalue 1 (closed form);
// K pairs come back with value 1 and orthonormal vectors.
TEST(HostileMatrices, Identity) {
  const std::int64_t n = 12;
  auto m = test::build_aij(MPI_COMM_WORLD, n, true, [](std::int64_t i, test::Entries& e) { e.push_back({i, 1.0}); });
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  for (const char* method : kMethods) {
    SCOPED_TRACE(method);
    auto r = run(*m, 4, method, "magnitude");
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    expect_pairs(*m, *r, {1.0, 1.0, 1.0, 1.0}, 1.0, true);
  }
}

// The shift matrix (ones on the superdiagonal) is nilpotent: J^n = 0, all its
// eigenvalues are 0 and its only eigenvector is e_0 (closed form: one Jordan
// block). A method either returns a pair whose residual holds, or refuses with
// a specific message; never NaN. A residual r <= tol ||A|| only says lambda is an
// eigenvalue of J + E with ||E|| <= r, and a perturbation of size r moves the
// eigenvalues of an n x n Jordan block by up to r^(1/n) (closed form: the
// characteristic polynomial of J + r e_n e_1^T is lambda^n - r), so the expected
// answer is |lambda| <= (10 tol ||A||)^(1/n), not |lambda| <= tol; such a lambda
// may well be complex (the perturbed block's eigenvalues lie on a circle), and
// then the residual is the complex pair's. Chebyshev needs symmetric input.
TEST(HostileMatrices, Nilpotent) {
  const std::int64_t n = 8;
  auto m = test::build_aij(MPI_COMM_WORLD, n, false, [n](std::int64_t i, test::Entries& e) {
    if (i + 1 < n) e.push_back({i + 1, 1.0});
  });
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  for (const char* method : kMethods) {
    SCOPED_TRACE(method);
    auto r = run(*m, 1, method, "magnitude", 4000);
    if (std::string(method) == "chebyshev") {
      ASSERT_FALSE(r.is_ok());
      EXPECT_NE(r.status().message().find("needs a symmetric matrix"), std::string::npos) << r.status().message();
      continue;
    }
    if (!r.is_ok()) {
      ADD_FAILURE() << "refused: " << r.status().message();
      continue;
    }
    ASSERT_TRUE(all_finite(*r)) << "NaN or infinity in the result";
    ASSERT_GE(r->pairs(), 1);
    if (r->converged >= 1) {
      EXPECT_LE(std::hypot(r->eigenvalues[0], r->eigenvalues_imag[0]),
                std::pow(10 * r->tolerance * r->norm_estimate, 1.0 / static_cast<double>(n)));
      EXPECT_LE(r->eigenvalues_imag[0] == 0.0 ? residual(*m, *r, 0) : complex_residual(*m, *r, 0),
                10 * r->tolerance * r->norm_estimate);
    }
  }
}

// Diagonal matrices with entries near 1e+300 and 1e-300: the eigenvalues are the
// diagonal entries (closed form). Norms, Gram matrices and Rayleigh quotients
// must neither overflow nor underflow.
TEST(HostileMatrices, ExtremeScales) {
  const std::int64_t n = 10;
  for (double scale : {1e300, 1e-300}) {
    SCOPED_TRACE(scale);
    std::vector<double> d(n);
    for (std::int64_t i = 0; i < n; ++i) d[static_cast<std::size_t>(i)] = scale * static_cast<double>(i + 1) / n;
    auto m = test::build_aij(MPI_COMM_WORLD, n, true, diagonal(d));
    ASSERT_TRUE(m.is_ok()) << m.status().message();
    for (const char* method : kMethods) {
      SCOPED_TRACE(method);
      auto r = run(*m, 2, method, "magnitude");
      ASSERT_TRUE(r.is_ok()) << r.status().message();
      expect_pairs(*m, *r, {scale, scale * 0.9}, scale, true);
    }
  }
}

// Entries of 1e307, twenty to a row: every row and column sum overflows, so there is
// no finite ||A||_est. Refused with a reason, on every rank alike, not solved against
// an infinite tolerance.
TEST(HostileMatrices, NormBeyondTheDoubleRangeIsRefused) {
  const std::int64_t n = 40;
  auto m = test::build_aij(MPI_COMM_WORLD, n, false, [n](std::int64_t i, test::Entries& e) {
    for (std::int64_t k = 0; k < 20; ++k) e.push_back({(i + k) % n, 1e307});
  });
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  for (const char* method : {"power", "krylov"}) {
    SCOPED_TRACE(method);
    auto r = run(*m, 1, method, "magnitude");
    ASSERT_FALSE(r.is_ok());
    EXPECT_EQ(r.status().kind(), ErrorKind::input);
    EXPECT_NE(r.status().message().find("sums overflow double precision"), std::string::npos)
        << r.status().message();
  }
}

// Empty rows and columns: diag(3, 0, 0, B, 0, 0) with B = [[2, .5], [.5, 1]] in
// rows 3 and 5 (rows 1, 2, 4, 6, 7 empty). Eigenvalues 3, 3/2 +- sqrt(2)/2 (closed
// form of a symmetric 2 x 2 matrix: (a+d)/2 +- sqrt(((a-d)/2)^2 + b^2)) and zeros.
TEST(HostileMatrices, EmptyRowsAndColumns) {
  const std::int64_t n = 8;
  auto rule = [](std::int64_t i, test::Entries& e) {
    if (i == 0) e.push_back({0, 3.0});
    if (i == 3) e.push_back({3, 2.0}), e.push_back({5, 0.5});
    if (i == 5) e.push_back({3, 0.5}), e.push_back({5, 1.0});
  };
  auto m = test::build_aij(MPI_COMM_WORLD, n, true, rule);
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  const double h = std::sqrt(2.0) / 2;
  for (const char* method : kMethods) {
    SCOPED_TRACE(method);
    auto r = run(*m, 3, method, "magnitude");
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    expect_pairs(*m, *r, {3.0, 1.5 + h, 1.5 - h}, 3.0, true);
  }
}

// A 1 x 1 matrix [3.5]: its eigenpair is (3.5, +-1) (closed form). With more
// ranks than rows, most ranks own no row.
TEST(HostileMatrices, OneByOne) {
  auto m = test::build_aij(MPI_COMM_WORLD, 1, true, [](std::int64_t, test::Entries& e) { e.push_back({0, 3.5}); });
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  for (const char* method : kMethods) {
    SCOPED_TRACE(method);
    auto r = run(*m, 1, method, "magnitude");
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    expect_pairs(*m, *r, {3.5}, 3.5, true);
  }
}

// K = n: every eigenpair of tridiag(-1, 2, -1) of order 6, lambda_j = 2 - 2 cos(j pi / 7)
// (closed form, standard finite-difference result), largest first.
TEST(HostileMatrices, AllPairsOfASmallMatrix) {
  const std::int64_t n = 6;
  auto m = test::build_aij(MPI_COMM_WORLD, n, true, [n](std::int64_t i, test::Entries& e) {
    if (i > 0) e.push_back({i - 1, -1.0});
    e.push_back({i, 2.0});
    if (i + 1 < n) e.push_back({i + 1, -1.0});
  });
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  std::vector<double> want;
  for (std::int64_t j = n; j >= 1; --j) want.push_back(2.0 - 2.0 * std::cos(static_cast<double>(j) * M_PI / 7.0));
  for (const char* method : kMethods) {
    SCOPED_TRACE(method);
    auto r = run(*m, n, method, "largest");
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    expect_pairs(*m, *r, want, 4.0, true);
  }
}

// A start vector with no component along the dominant eigenvector. The first
// start vector is x0[i] = hashed_uniform(seed, i, stream 1) - 0.5 (algebra::fill_random,
// as every method starts). A = H D H with the Householder reflector H mapping e_0
// to a unit u orthogonal to x0, D = diag(10, 1, 0.9, 0.8, ...): the eigenpairs are
// (D_kk, H e_k) (closed form: a similarity by an orthogonal reflector), so the
// dominant eigenvector is u and x0 has no component along it. In exact arithmetic
// the power method would converge to 1; rounding brings u back, and the answer
// must be 10.
TEST(HostileMatrices, StartVectorOrthogonalToDominant) {
  const std::int64_t n = 10;
  std::vector<double> x0(n), u(n, 0.0), w(n), dd(n);
  for (std::int64_t i = 0; i < n; ++i) x0[static_cast<std::size_t>(i)] = io::hashed_uniform(1, static_cast<std::uint64_t>(i), 1) - 0.5;
  // u = (x0[1], -x0[0], 0, ...)/norm: orthogonal to x0 up to rounding.
  const double un = std::hypot(x0[0], x0[1]);
  u[0] = x0[1] / un, u[1] = -x0[0] / un;
  for (std::int64_t i = 0; i < n; ++i) w[static_cast<std::size_t>(i)] = (i == 0 ? 1.0 : 0.0) - u[static_cast<std::size_t>(i)];
  double ww = 0;
  for (double v : w) ww += v * v;
  dd[0] = 10.0;
  for (std::int64_t i = 1; i < n; ++i) dd[static_cast<std::size_t>(i)] = 1.0 - 0.1 * static_cast<double>(i - 1);
  // A = H D H, H = I - 2 w w^T / (w^T w), computed entry by entry.
  auto h = [&](std::int64_t a, std::int64_t b) {
    return (a == b ? 1.0 : 0.0) - 2.0 * w[static_cast<std::size_t>(a)] * w[static_cast<std::size_t>(b)] / ww;
  };
  auto rule = [&](std::int64_t i, test::Entries& e) {
    for (std::int64_t j = 0; j < n; ++j) {
      double v = 0;
      for (std::int64_t k = 0; k < n; ++k) v += h(i, k) * dd[static_cast<std::size_t>(k)] * h(k, j);
      e.push_back({j, v});
    }
  };
  auto m = test::build_aij(MPI_COMM_WORLD, n, true, rule);
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  double along = 0;
  for (std::int64_t i = 0; i < n; ++i) along += x0[static_cast<std::size_t>(i)] * u[static_cast<std::size_t>(i)];
  ASSERT_LT(std::fabs(along), 1e-15);  // the construction holds: x0 has no component along u
  for (const char* method : kMethods) {
    SCOPED_TRACE(method);
    auto r = run(*m, 1, method, "magnitude");
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    expect_pairs(*m, *r, {10.0}, 10.0, true);
  }
}

// Two eigenvalues 1 + 1e-12 and 1 that differ in the 13th digit, below the
// tolerance (1e-9 of ||A||): diag(1 + 1e-12, 1, 0.5, 0.4, ...). Expected: both
// returned values lie within the tolerance of 1 (they cannot be told apart at
// this tolerance, and need not be ordered), and the two vectors are an
// orthonormal basis of span(e_0, e_1) up to the tolerance (closed form: a
// diagonal matrix's eigenvectors are the unit vectors).
TEST(HostileMatrices, EigenvaluesDifferingInThe13thDigit) {
  const std::int64_t n = 10;
  std::vector<double> d(n);
  d[0] = 1.0 + 1e-12, d[1] = 1.0;
  for (std::int64_t i = 2; i < n; ++i) d[static_cast<std::size_t>(i)] = 0.5 - 0.01 * static_cast<double>(i);
  auto m = test::build_aij(MPI_COMM_WORLD, n, true, diagonal(d));
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  for (const char* method : kMethods) {
    SCOPED_TRACE(method);
    auto r = run(*m, 2, method, "magnitude");
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    expect_pairs(*m, *r, {1.0, 1.0}, 1.0, true, 1e-9);
    // Outside span(e_0, e_1) each vector has (at most) rounding-level weight.
    double outside = 0;
    for (std::int64_t j = 0; j < 2; ++j)
      for (std::int64_t i = r->row_begin; i < r->row_end; ++i)
        if (i >= 2) outside += std::pow(r->vectors[static_cast<std::size_t>(j * r->local_rows() + (i - r->row_begin))], 2);
    MPI_Allreduce(MPI_IN_PLACE, &outside, 1, MPI_DOUBLE, MPI_SUM, MPI_COMM_WORLD);
    EXPECT_LT(std::sqrt(outside), 1e-6);
  }
}
