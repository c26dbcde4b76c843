// Non-symmetric input: dominant pairs of equal modulus (+-lambda, complex),
// random matrices in both file layouts cross-checked against LAPACK's dgeev
// (through LAPACKE, Debian liblapacke-dev), and a damped random walk whose
// eigenvector for eigenvalue 1 is the stationary distribution, and pairs stopped
// short whose vectors have a part in the locked ones.
#include <gtest/gtest.h>
#include <lapacke.h>

#include <algorithm>
#include <cmath>
#include <complex>

#include "io/generators.hpp"
#include "test_solver_matrices.hpp"

using namespace lodestone;

namespace {

std::vector<std::complex<double>> reference_eigenvalues(std::int64_t n, const test::RowRule& rule) {
  auto a = test::full_dense(n, rule);
  std::vector<double> wr(n), wi(n);
  // Reference: LAPACK dgeev through LAPACKE (general real eigenproblem).
  int info = LAPACKE_dgeev(LAPACK_ROW_MAJOR, 'N', 'N', static_cast<int>(n), a.data(), static_cast<int>(n), wr.data(),
                           wi.data(), nullptr, 1, nullptr, 1);
  EXPECT_EQ(info, 0);
  std::vector<std::complex<double>> w;
  for (std::int64_t i = 0; i < n; ++i) w.emplace_back(wr[i], wi[i]);
  std::sort(w.begin(), w.end(), [](auto x, auto y) {
    if (std::abs(std::abs(x) - std::abs(y)) > 1e-9) return std::abs(x) > std::abs(y);
    return x.imag() > y.imag();
  });
  return w;
}

// Each returned value must match a distinct reference value among the first k+1 by modulus.
void expect_match(const SolveResult& r, const std::vector<std::complex<double>>& ref, double tol) {
  std::vector<bool> used(ref.size(), false);
  for (std::int64_t j = 0; j < r.pairs(); ++j) {
    std::complex<double> got(r.eigenvalues[j], r.eigenvalues_imag[j]);
    int best = -1;
    for (std::size_t i = 0; i < ref.size(); ++i)
      if (!used[i] && (best < 0 || std::abs(ref[i] - got) < std::abs(ref[best] - got))) best = static_cast<int>(i);
    ASSERT_GE(best, 0);
    EXPECT_LT(std::abs(ref[best] - got), tol) << "pair " << j << " got " << got << " nearest " << ref[best];
    EXPECT_LT(best, r.pairs() + 1) << "pair " << j << " is not among the wanted ones";
    used[best] = true;
  }
}

}  // namespace

TEST(MethodNonsymmetric, PlusMinusPairBlockFindsPowerReports) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 12;
  auto rule = test::planted_block(0.0, 10.0, 2.5, 0.0, n);  // 2x2 block with eigenvalues +5 and -5
  auto m = test::build_aij(comm, n, false, rule);
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  auto r = solve(*m, test::quiet_options(2, "block", "magnitude"));
  ASSERT_TRUE(r.is_ok()) << r.status().message();
  ASSERT_EQ(r->pairs(), 2);
  EXPECT_EQ(r->converged, 2);
  std::vector<double> got = {r->eigenvalues[0], r->eigenvalues[1]};
  std::sort(got.begin(), got.end());
  EXPECT_NEAR(got[0], -5.0, 1e-7);
  EXPECT_NEAR(got[1], 5.0, 1e-7);
  for (std::int64_t j = 0; j < 2; ++j) {
    EXPECT_EQ(r->eigenvalues_imag[j], 0.0);
    EXPECT_LE(test::recomputed_residual(*m, *r, j), 2 * r->tolerance * r->norm_estimate);
  }
  // One vector cannot separate +5 from -5: power stops, says why, and names both.
  auto p = solve(*m, test::quiet_options(2, "power", "magnitude"));
  ASSERT_TRUE(p.is_ok()) << p.status().message();
  EXPECT_EQ(p->converged, 0);
  EXPECT_NE(p->stall_reason.find("have (nearly) the same modulus"), std::string::npos) << p->stall_reason;
  EXPECT_NE(p->stall_reason.find("--method block"), std::string::npos) << p->stall_reason;
}

TEST(MethodNonsymmetric, ComplexPairBlockFindsPowerReports) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 12;
  auto rule = test::planted_block(3.0, 4.0, -4.0, 3.0, n);  // eigenvalues 3 +- 4i, modulus 5
  auto m = test::build_aij(comm, n, false, rule);
  ASSERT_TRUE(m.is_ok());
  auto r = solve(*m, test::quiet_options(2, "block", "magnitude"));
  ASSERT_TRUE(r.is_ok()) << r.status().message();
  ASSERT_EQ(r->pairs(), 2);
  EXPECT_EQ(r->converged, 2);
  EXPECT_NEAR(r->eigenvalues[0], 3.0, 1e-7);
  EXPECT_NEAR(r->eigenvalues[1], 3.0, 1e-7);
  EXPECT_NEAR(r->eigenvalues_imag[0], 4.0, 1e-7);  // positive imaginary part first
  EXPECT_NEAR(r->eigenvalues_imag[1], -4.0, 1e-7);
  EXPECT_LE(r->residual_norms[0], r->tolerance * r->norm_estimate);
  // The complex vector (columns 0 and 1) has unit norm.
  auto g = test::vector_gram(comm, *r);
  EXPECT_NEAR(g[0] + g[3], 1.0, 1e-10);
  auto p = solve(*m, test::quiet_options(1, "power", "magnitude"));
  ASSERT_TRUE(p.is_ok()) << p.status().message();
  EXPECT_EQ(p->converged, 0);
  EXPECT_NE(p->stall_reason.find("complex pair 3 +- 4i"), std::string::npos) << p->stall_reason;
}

// A real dominant eigenvalue 20, then a complex pair 5 +- 0.004i so nearly real that
// the residual's plateau is below 1e-3 ||A||: power converges the first pair, stops
// on the second with its reason, and keeps the first. Block finds all three.
TEST(MethodNonsymmetric, PowerKeepsWhatConvergedBeforeANearlyRealComplexPair) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 30;
  auto rule = [n](std::int64_t i, test::Entries& e) {
    if (i == 0) e.push_back({0, 5.0}), e.push_back({1, 0.004});
    if (i == 1) e.push_back({0, -0.004}), e.push_back({1, 5.0});
    if (i == 2) e.push_back({2, 20.0});
    if (i >= 3) e.push_back({i, 2.0 - 0.05 * static_cast<double>(i - 3)});
    if (i + 1 < n && i >= 1) e.push_back({i + 1, 0.25});  // upper triangle: the eigenvalues stay those of the blocks
  };
  auto ref = reference_eigenvalues(n, rule);
  auto m = test::build_aij(comm, n, false, rule);
  ASSERT_TRUE(m.is_ok());
  auto p = solve(*m, test::quiet_options(2, "power", "magnitude"));
  ASSERT_TRUE(p.is_ok()) << p.status().message();
  EXPECT_EQ(p->converged, 1);
  EXPECT_NEAR(p->eigenvalues[0], 20.0, 1e-7);
  EXPECT_LE(test::recomputed_residual(*m, *p, 0), 2 * p->tolerance * p->norm_estimate);
  EXPECT_NE(p->stall_reason.find("pair 2"), std::string::npos) << p->stall_reason;
  EXPECT_NE(p->stall_reason.find("--method block"), std::string::npos) << p->stall_reason;
  auto b = solve(*m, test::quiet_options(3, "block", "magnitude"));
  ASSERT_TRUE(b.is_ok()) << b.status().message();
  EXPECT_EQ(b->converged, 3);
  EXPECT_TRUE(b->stall_reason.empty());
  expect_match(*b, ref, 1e-6);
}

TEST(MethodNonsymmetric, RandomDenseAndCsrAgainstLapack) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 36;
  // Random entries from the counter-based hash, with three planted diagonal values so
  // that the wanted pairs stand clear of the random bulk (spectral radius about 1).
  const auto dense_rule = test::planted_random(n, 11, 0.4, {6.0, -4.5, 3.5});
  auto sparse_rule = [&](std::int64_t i, test::Entries& e) {
    e.push_back({i, i == 0 ? 5.0 : i == 1 ? -4.0 : i == 2 ? 3.2 : 0.1});
    for (int k = 0; k < 4; ++k) {
      auto j = static_cast<std::int64_t>(io::hashed_uniform(12, static_cast<std::uint64_t>(i), k) * static_cast<double>(n));
      if (j != i) e.push_back({j, io::hashed_uniform(13, static_cast<std::uint64_t>(i), k) - 0.5});
    }
  };
  for (bool dense : {true, false}) {
    SCOPED_TRACE(dense ? "dense" : "csr");
    test::RowRule rule = dense ? test::RowRule(dense_rule) : test::RowRule(sparse_rule);
    auto m = test::build_file(comm, n, false, dense, rule);
    ASSERT_TRUE(m.is_ok()) << m.status().message();
    EXPECT_EQ(m->info().layout, dense ? Layout::dense : Layout::csr);
    auto ref = reference_eigenvalues(n, rule);
    auto r = solve(*m, test::quiet_options(3, "block", "magnitude"));
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    EXPECT_EQ(r->converged, r->pairs());
    expect_match(*r, ref, 1e-6);
    for (std::int64_t j = 0; j < r->pairs(); ++j)
      if (r->eigenvalues_imag[j] == 0.0) {
        EXPECT_LE(test::recomputed_residual(*m, *r, j), 2 * r->tolerance * r->norm_estimate);
      }
    auto a = solve(*m, test::quiet_options(2, "auto", "magnitude"));
    ASSERT_TRUE(a.is_ok()) << a.status().message();
    EXPECT_EQ(a->method, "krylov");
  }
}

TEST(MethodNonsymmetric, DampedRandomWalkStationaryDistribution) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 40;
  const double damping = 0.85;
  // A directed graph: node j links to j+1, 3j+1 and 7j+2 (mod n), distinct targets only.
  auto targets = [&](std::int64_t j) {
    std::vector<std::int64_t> t = {(j + 1) % n, (3 * j + 1) % n, (7 * j + 2) % n};
    std::sort(t.begin(), t.end());
    t.erase(std::unique(t.begin(), t.end()), t.end());
    return t;
  };
  // Column-stochastic: A = damping * P + (1 - damping) / n * ones, P[i][j] = 1/outdeg(j) for each link j -> i.
  auto rule = [&](std::int64_t i, test::Entries& e) {
    for (std::int64_t j = 0; j < n; ++j) {
      double v = (1.0 - damping) / static_cast<double>(n);
      auto t = targets(j);
      if (std::find(t.begin(), t.end(), i) != t.end()) v += damping / static_cast<double>(t.size());
      e.push_back({j, v});
    }
  };
  auto m = test::build_file(comm, n, false, true, rule);
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  // Reference: solve (I - A) x = 0 with the last equation replaced by sum(x) = 1 (LAPACKE dgesv).
  auto a = test::full_dense(n, rule);
  std::vector<double> lhs(static_cast<std::size_t>(n * n)), x(n, 0.0);
  for (std::int64_t i = 0; i < n; ++i)
    for (std::int64_t j = 0; j < n; ++j)
      lhs[i * n + j] = i == n - 1 ? 1.0 : (i == j ? 1.0 : 0.0) - a[i * n + j];
  x[n - 1] = 1.0;
  std::vector<int> piv(n);
  ASSERT_EQ(LAPACKE_dgesv(LAPACK_ROW_MAJOR, static_cast<int>(n), 1, lhs.data(), static_cast<int>(n), piv.data(), x.data(), 1), 0);
  for (const char* method : {"block", "power"}) {
    SCOPED_TRACE(method);
    auto r = solve(*m, test::quiet_options(1, method, "magnitude"));
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    EXPECT_NEAR(r->eigenvalues[0], 1.0, 1e-9);
    EXPECT_EQ(r->eigenvalues_imag[0], 0.0);
    // Scale the unit vector to sum 1 and compare with the direct solve, row by row.
    double local_sum = 0;
    for (std::int64_t i = 0; i < r->local_rows(); ++i) local_sum += r->vectors[i];
    const double sum = sum_all(comm, local_sum);
    for (std::int64_t i = 0; i < r->local_rows(); ++i)
      EXPECT_NEAR(r->vectors[i] / sum, x[r->row_begin + i], 1e-8) << "row " << r->row_begin + i;
  }
}

TEST(MethodNonsymmetric, UnconvergedPairsKeepTheirLockedPart) {
  MPI_Comm comm = MPI_COMM_WORLD;
  // Upper bidiagonal: 1, 2, ..., n on the diagonal and 0.5 above it; its eigenvalues are
  // its diagonal (a triangular matrix's, closed form) and its eigenvectors are far from
  // orthogonal. Stopped by the budget after the first pairs are locked, a pair still
  // active has an eigenvector with a part in the locked Schur vectors; the vector
  // reported must include it, so its residual is about as small as its eigenvalue is close.
  const std::int64_t n = 40;
  auto rule = [&](std::int64_t i, test::Entries& e) {
    e.push_back({i, 1.0 + static_cast<double>(i)});
    if (i + 1 < n) e.push_back({i + 1, 0.5});
  };
  auto m = test::build_aij(comm, n, false, rule);
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  auto o = test::quiet_options(3, "block", "magnitude");
  o.max_matvecs = 800;  // measured: the first pair locked, the third within 1e-6 of 38 but not converged
  auto r = solve(*m, o);
  ASSERT_TRUE(r.is_ok()) << r.status().message();
  ASSERT_EQ(r->pairs(), 3);
  EXPECT_LT(r->converged, 3);
  for (int j = 0; j < 3; ++j) {
    SCOPED_TRACE(j);
    const double exact = static_cast<double>(n - j);
    if (std::fabs(r->eigenvalues[j] - exact) > 1e-4) continue;  // not close yet: nothing to compare
    EXPECT_LT(r->residual_norms[j], 1e-2) << "eigenvalue " << r->eigenvalues[j];
    EXPECT_NEAR(test::recomputed_residual(*m, *r, j), r->residual_norms[j], 1e-8 + 1e-6 * r->residual_norms[j]);
  }
}

// Eigenvalues -5 +- 60i, -6 +- 59i and 10 (closed form: the 2x2 blocks [[a, b], [-b, a]]
// have eigenvalues a +- bi). By real part 10 comes first, although the complex pairs
// are six times larger in modulus; krylov ranks it so, and power and block refuse
// the request rather than answer with the pairs largest in |lambda + ||A|||.
TEST(MethodNonsymmetric, LargestRealPartAheadOfLargeComplexPairs) {
  auto rule = [](std::int64_t i, test::Entries& e) {
    const double a = i < 2 ? -5.0 : -6.0, b = i < 2 ? 60.0 : 59.0;
    if (i == 0 || i == 2) e.push_back({i, a}), e.push_back({i + 1, b});
    if (i == 1 || i == 3) e.push_back({i - 1, -b}), e.push_back({i, a});
    if (i == 4) e.push_back({4, 10.0});
  };
  auto m = test::build_aij(MPI_COMM_WORLD, 5, false, rule);
  ASSERT_TRUE(m.is_ok());
  auto r = solve(*m, test::quiet_options(3, "krylov", "largest"));
  ASSERT_TRUE(r.is_ok()) << r.status().message();
  EXPECT_EQ(r->converged, 3);
  EXPECT_NEAR(r->eigenvalues[0], 10.0, 1e-7);
  EXPECT_EQ(r->eigenvalues_imag[0], 0.0);
  EXPECT_NEAR(r->eigenvalues[1], -5.0, 1e-7);
  EXPECT_NEAR(std::fabs(r->eigenvalues_imag[1]), 60.0, 1e-7);
  for (const char* method : {"power", "block"}) {
    auto refused = solve(*m, test::quiet_options(1, method, "largest"));
    ASSERT_FALSE(refused.is_ok()) << method;
    EXPECT_EQ(refused.status().kind(), ErrorKind::usage);
  }
}
