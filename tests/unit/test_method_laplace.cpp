// Every method on the Dirichlet Laplacians, whose eigenvalues are known in
// closed form. Each test runs at 1-4 ranks (ctest), so agreement with the closed
// form at every rank count is also the partition-independence check.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <numeric>

#include "io/generators.hpp"
#include "test_solver_matrices.hpp"

using namespace lodestone;

namespace {

// Closed form (standard finite-difference result): the n x n matrix tridiag(-1, 2, -1)
// has eigenvalues 2 - 2 cos(j pi / (n + 1)), j = 1..n.
double lap1(std::int64_t n, std::int64_t j) { return 2.0 - 2.0 * std::cos(static_cast<double>(j) * M_PI / static_cast<double>(n + 1)); }

std::vector<double> lap1_all(std::int64_t n) {
  std::vector<double> v;
  for (std::int64_t j = 1; j <= n; ++j) v.push_back(lap1(n, j));
  return v;
}

// The 5-point 2-D Laplacian on nx x ny is the Kronecker sum: eigenvalues lap1(nx, i) + lap1(ny, j).
std::vector<double> lap2_all(std::int64_t nx, std::int64_t ny) {
  std::vector<double> v;
  for (std::int64_t i = 1; i <= nx; ++i)
    for (std::int64_t j = 1; j <= ny; ++j) v.push_back(lap1(nx, i) + lap1(ny, j));
  return v;
}

Matrix load_laplace1d(std::int64_t n) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string path = test::temp_path(comm, "lap1.h5");
  EXPECT_TRUE(io::write_csr_file(comm, path, "/matrix", n, true, io::generate_laplace1d(comm, n)).is_ok());
  auto m = Matrix::load(comm, path);
  EXPECT_TRUE(m.is_ok());
  return std::move(*m);
}

Matrix load_laplace2d(std::int64_t nx, std::int64_t ny) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string path = test::temp_path(comm, "lap2.h5");
  EXPECT_TRUE(io::write_csr_file(comm, path, "/matrix", nx * ny, true, io::generate_laplace2d(comm, nx, ny)).is_ok());
  auto m = Matrix::load(comm, path);
  EXPECT_TRUE(m.is_ok());
  return std::move(*m);
}

void expect_values(const SolveResult& r, std::vector<double> expected, std::int64_t k, bool ascending) {
  std::sort(expected.begin(), expected.end());
  if (!ascending) std::reverse(expected.begin(), expected.end());
  ASSERT_EQ(r.pairs(), k);
  EXPECT_EQ(r.converged, k);
  double sum = 0, expected_sum = 0;
  for (std::int64_t j = 0; j < k; ++j) {
    EXPECT_NEAR(r.eigenvalues[j], expected[j], 1e-7) << "pair " << j;
    EXPECT_EQ(r.eigenvalues_imag[j], 0.0);
    EXPECT_LE(r.residual_norms[j], r.tolerance * r.norm_estimate * 1.0001);
    sum += r.eigenvalues[j];
    expected_sum += expected[j];
  }
  EXPECT_NEAR(sum, expected_sum, 1e-6);
}

void expect_certified(const Matrix& m, const SolveResult& r) {
  for (std::int64_t j = 0; j < r.pairs(); ++j)
    EXPECT_LE(test::recomputed_residual(m, r, j), 2 * r.tolerance * r.norm_estimate) << "pair " << j;
  auto g = test::vector_gram(MPI_COMM_WORLD, r);
  for (std::int64_t a = 0; a < r.pairs(); ++a)
    for (std::int64_t b = 0; b < r.pairs(); ++b) EXPECT_NEAR(g[a * r.pairs() + b], a == b ? 1.0 : 0.0, 1e-7);
}

}  // namespace

TEST(MethodLaplace, OneDimensionalLargestEveryMethod) {
  for (const char* method : {"chebyshev", "block", "power"}) {
    SCOPED_TRACE(method);
    // Plain power steps converge at the ratio of neighbouring eigenvalues: they get shorter rods.
    const std::string name = method;
    const std::int64_t n = name == "power" ? 7 : name == "block" ? 16 : 40;
    auto m = load_laplace1d(n);
    auto r = solve(m, test::quiet_options(3, method, "largest"));
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    EXPECT_EQ(r->method, method);
    expect_values(*r, lap1_all(n), 3, false);
    expect_certified(m, *r);
  }
}

TEST(MethodLaplace, OneDimensionalMagnitudeAndShift) {
  auto m = load_laplace1d(8);
  auto o = test::quiet_options(2, "power", "magnitude");
  auto r = solve(m, o);
  ASSERT_TRUE(r.is_ok()) << r.status().message();
  expect_values(*r, lap1_all(8), 2, false);
  // With shift 4 the spectrum of A - 4I is in (-4, 0): the largest |lambda - 4| are the smallest lambda.
  o.has_shift = true;
  o.shift = 4.0;
  auto s = solve(m, o);
  ASSERT_TRUE(s.is_ok()) << s.status().message();
  expect_values(*s, lap1_all(8), 2, true);
}

TEST(MethodLaplace, TwoDimensionalLargestAndSmallest) {
  const std::int64_t nx = 12, ny = 9;
  auto m = load_laplace2d(nx, ny);
  for (const char* method : {"chebyshev", "block"}) {
    for (const char* select : {"largest", "smallest"}) {
      SCOPED_TRACE(std::string(method) + " " + select);
      auto r = solve(m, test::quiet_options(6, method, select));
      ASSERT_TRUE(r.is_ok()) << r.status().message();
      EXPECT_EQ(r->selection, select);
      expect_values(*r, lap2_all(nx, ny), 6, std::string(select) == "smallest");
      expect_certified(m, *r);
    }
  }
}

// Without --shift, block and power iterate with A - sigma I where sigma is the far
// end of the spectrum as a short Lanczos run finds it (about 0 here), not -||A||_est
// (-4): the ratio that sets the convergence, (lambda_next - sigma) / (lambda_K - sigma),
// then falls from about 1 - gap/8 to 1 - gap/4, so they need about half the products.
TEST(MethodLaplace, LargestShiftsToTheFarEndOfTheSpectrum) {
  const std::int64_t n = 40;
  auto m = load_laplace1d(n);
  for (const char* method : {"block", "power"}) {
    SCOPED_TRACE(method);
    const std::int64_t k = std::string(method) == "power" ? 1 : 3;
    auto far_end = solve(m, test::quiet_options(k, method, "largest"));
    ASSERT_TRUE(far_end.is_ok()) << far_end.status().message();
    auto o = test::quiet_options(k, method, "largest");
    o.has_shift = true;
    o.shift = -4.0;  // -||A||_est = -sqrt(||A||_1 ||A||_inf), the shift used before the Lanczos run
    auto by_norm = solve(m, o);
    ASSERT_TRUE(by_norm.is_ok()) << by_norm.status().message();
    expect_values(*far_end, lap1_all(n), k, false);
    expect_values(*by_norm, lap1_all(n), k, false);
    expect_certified(m, *far_end);
    EXPECT_LT(static_cast<double>(far_end->matvecs), 0.75 * static_cast<double>(by_norm->matvecs))
        << far_end->matvecs << " products with the far-end shift, " << by_norm->matvecs << " with -||A||_est";
  }
}

TEST(MethodLaplace, AutoPicksChebyshevForSymmetric) {
  auto m = load_laplace1d(30);
  auto o = test::quiet_options(2, "auto", "magnitude");
  std::string note;
  o.note = [&](const std::string& s) { note = s; };
  auto r = solve(m, o);
  ASSERT_TRUE(r.is_ok()) << r.status().message();
  EXPECT_EQ(r->method, "chebyshev");
  if (comm_rank(MPI_COMM_WORLD) == 0) {
    EXPECT_NE(note.find("chebyshev"), std::string::npos);
  }
  expect_values(*r, lap1_all(30), 2, false);
  EXPECT_EQ(r->ranks, comm_size(MPI_COMM_WORLD));
  EXPECT_EQ(r->matrix_fingerprint, m.info().fingerprint);
  EXPECT_GT(r->matvecs, 0);
  EXPECT_FALSE(r->history.empty());
  EXPECT_DOUBLE_EQ(r->norm_estimate, 4.0);  // sqrt(||A||_1 ||A||_inf) = 4 for tridiag(-1, 2, -1), n >= 3
}
