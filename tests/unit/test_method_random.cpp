// Symmetric input: random matrices in both file layouts cross-checked against
// LAPACK's dsyev (through LAPACKE, Debian liblapacke-dev), and the hypercube
// graph, whose degenerate eigenvalues must all be found with independent vectors,
// and a spectrum with one eigenvalue far out from the rest.
#include <gtest/gtest.h>
#include <lapacke.h>

#include <algorithm>
#include <cmath>

#include "io/generators.hpp"
#include "test_solver_matrices.hpp"

using namespace lodestone;

namespace {

std::vector<double> reference_symmetric(std::int64_t n, const test::RowRule& rule) {
  auto a = test::full_dense(n, rule);
  std::vector<double> w(n);
  // Reference: LAPACK dsyev through LAPACKE (symmetric eigenvalues, ascending).
  EXPECT_EQ(LAPACKE_dsyev(LAPACK_ROW_MAJOR, 'N', 'U', static_cast<int>(n), a.data(), static_cast<int>(n), w.data()), 0);
  return w;
}

void expect_orthonormal(const SolveResult& r) {
  auto g = test::vector_gram(MPI_COMM_WORLD, r);
  for (std::int64_t a = 0; a < r.pairs(); ++a)
    for (std::int64_t b = 0; b < r.pairs(); ++b) EXPECT_NEAR(g[a * r.pairs() + b], a == b ? 1.0 : 0.0, 1e-8);
}

}  // namespace

TEST(MethodRandom, SymmetricDenseAndCsrAgainstLapack) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 48;
  // Symmetric random entries from the hash of the unordered index pair, with four
  // planted diagonal values at both ends so the wanted pairs stand clear of the bulk.
  auto entry = [](std::int64_t i, std::int64_t j) {
    const auto lo = static_cast<std::uint64_t>(std::min(i, j)), hi = static_cast<std::uint64_t>(std::max(i, j));
    return io::hashed_uniform(21, lo, hi) - 0.5;
  };
  const double planted[] = {7.0, -6.0, 5.0, -4.0};
  auto dense_rule = [&](std::int64_t i, test::Entries& e) {
    for (std::int64_t j = 0; j < n; ++j) e.push_back({j, 0.3 * entry(i, j) + (i == j && i < 4 ? planted[i] : 0.0)});
  };
  // Sparse: a band of width 3 plus planted diagonal values.
  auto sparse_rule = [&](std::int64_t i, test::Entries& e) {
    for (std::int64_t j = std::max<std::int64_t>(0, i - 3); j <= std::min(n - 1, i + 3); ++j)
      e.push_back({j, entry(i, j) + (i == j && i < 4 ? planted[i] : 0.0)});
  };
  for (bool dense : {true, false}) {
    test::RowRule rule = dense ? test::RowRule(dense_rule) : test::RowRule(sparse_rule);
    auto m = test::build_file(comm, n, true, dense, rule);
    ASSERT_TRUE(m.is_ok()) << m.status().message();
    auto ref = reference_symmetric(n, rule);  // ascending
    std::vector<double> by_magnitude = ref;
    std::sort(by_magnitude.begin(), by_magnitude.end(), [](double a, double b) { return std::fabs(a) > std::fabs(b); });
    for (const char* method : {"chebyshev", "block"}) {
      for (const char* select : {"magnitude", "largest", "smallest"}) {
        SCOPED_TRACE(std::string(dense ? "dense " : "csr ") + method + " " + select);
        auto r = solve(*m, test::quiet_options(3, method, select));
        ASSERT_TRUE(r.is_ok()) << r.status().message();
        ASSERT_EQ(r->pairs(), 3);
        EXPECT_EQ(r->converged, 3);
        for (int j = 0; j < 3; ++j) {
          const double want = std::string(select) == "magnitude" ? by_magnitude[j]
                              : std::string(select) == "largest" ? ref[n - 1 - j]
                                                                 : ref[j];
          EXPECT_NEAR(r->eigenvalues[j], want, 1e-7) << "pair " << j;
          EXPECT_LE(test::recomputed_residual(*m, *r, j), 2 * r->tolerance * r->norm_estimate);
        }
        expect_orthonormal(*r);
      }
    }
  }
}

TEST(MethodRandom, HypercubeDegenerateEigenvalues) {
  MPI_Comm comm = MPI_COMM_WORLD;
  // Hypercube Q_d: vertices are d-bit words, edges join words one bit apart. Its
  // adjacency eigenvalues are d - 2i with multiplicity C(d, i) (spectral graph
  // theory, standard result). The K = 1 + d largest are d once and d - 2 d times.
  const int d = 6;
  const std::int64_t n = std::int64_t{1} << d;
  auto rule = [&](std::int64_t i, test::Entries& e) {
    for (int b = 0; b < d; ++b) e.push_back({i ^ (std::int64_t{1} << b), 1.0});
  };
  auto m = test::build_aij(comm, n, true, rule);
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  for (const char* method : {"chebyshev", "block"}) {
    SCOPED_TRACE(method);
    auto r = solve(*m, test::quiet_options(1 + d, method, "largest"));
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    ASSERT_EQ(r->pairs(), 1 + d);
    EXPECT_EQ(r->converged, 1 + d);
    EXPECT_NEAR(r->eigenvalues[0], d, 1e-8);
    double sum = 0;
    for (int j = 1; j <= d; ++j) {
      EXPECT_NEAR(r->eigenvalues[j], d - 2, 1e-8) << "pair " << j;
      sum += r->eigenvalues[j];
    }
    EXPECT_NEAR(sum, d * (d - 2.0), 1e-7);
    // d independent vectors for the d-fold eigenvalue: orthonormal, each a true eigenvector.
    expect_orthonormal(*r);
    for (int j = 0; j <= d; ++j) EXPECT_LE(test::recomputed_residual(*m, *r, j), 2 * r->tolerance * r->norm_estimate);
  }
  // The single-vector method with restarted deflation finds them too, one at a time.
  auto p = solve(*m, test::quiet_options(1 + d, "power", "largest"));
  ASSERT_TRUE(p.is_ok()) << p.status().message();
  for (int j = 1; j <= d; ++j) EXPECT_NEAR(p->eigenvalues[j], d - 2, 1e-7) << "pair " << j;
  expect_orthonormal(*p);
}

TEST(MethodRandom, OneEigenvalueFarOutTheRest) {
  MPI_Comm comm = MPI_COMM_WORLD;
  // 1000 on its own, beside the 1-D Laplacian tridiag(-1, 2, -1) of order n - 1, whose
  // eigenvalues are 2 - 2 cos(k pi / n), k = 1 .. n - 1 (closed form). The filter grows
  // the far end of the spectrum fastest; once 1000 is locked, its rounding-level share
  // of the block must not swamp the pairs still wanted.
  const std::int64_t n = 60;
  auto rule = [&](std::int64_t i, test::Entries& e) {
    if (i == 0) {
      e.push_back({0, 1000.0});
      return;
    }
    if (i > 1) e.push_back({i - 1, -1.0});
    e.push_back({i, 2.0});
    if (i < n - 1) e.push_back({i + 1, -1.0});
  };
  auto m = test::build_aij(comm, n, true, rule);
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  const double pi = std::acos(-1.0);
  for (const char* select : {"largest", "magnitude"}) {
    SCOPED_TRACE(select);
    auto o = test::quiet_options(3, "chebyshev", select);
    o.max_matvecs = 50000;  // far more than needed; before the growth was capped it never converged
    auto r = solve(*m, o);
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    ASSERT_EQ(r->pairs(), 3);
    EXPECT_EQ(r->converged, 3);
    EXPECT_NEAR(r->eigenvalues[0], 1000.0, 1e-6);
    for (int j = 1; j < 3; ++j) {
      EXPECT_NEAR(r->eigenvalues[j], 2.0 - 2.0 * std::cos((n - j) * pi / n), 1e-6) << "pair " << j;
      EXPECT_LE(test::recomputed_residual(*m, *r, j), 2 * r->tolerance * r->norm_estimate);
    }
    expect_orthonormal(*r);
  }
}
