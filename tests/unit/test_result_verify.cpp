// verify_result: closed-form eigenpairs pass; damaged ones, and another matrix's, fail.
#include <gtest/gtest.h>

#include <cmath>
#include <numbers>

#include "io/generators.hpp"
#include "io/matrix_writer.hpp"
#include "laplace_result.hpp"
#include "lodestone/matrix.hpp"
#include "lodestone/result.hpp"
#include "lodestone/verify.hpp"
#include "support/collective.hpp"
#include "test_solver_matrices.hpp"
#include "test_util.hpp"

using namespace lodestone;

namespace {

constexpr std::int64_t kN = 31;
constexpr std::int64_t kK = 5;

Matrix load_laplace(MPI_Comm comm, std::int64_t n) {
  std::string path = test::temp_path(comm, "verify-lap1d.h5");
  auto rows = io::generate_laplace1d(comm, n);
  EXPECT_TRUE(io::write_csr_file(comm, path, "/matrix", n, true, rows).is_ok());
  auto m = Matrix::load(comm, path);
  EXPECT_TRUE(m.is_ok()) << m.status().message();
  return std::move(m).value();
}

SolveResult laplace_pairs(MPI_Comm comm, const Matrix& a) {
  const auto& i = a.info();
  return test::laplace1d_result(comm, i.rows, kK, i.row_begin, i.row_end, i.fingerprint);
}

}  // namespace

TEST(Verify, ClosedFormLaplacePairsPass) {
  MPI_Comm comm = MPI_COMM_WORLD;
  Matrix a = load_laplace(comm, kN);
  auto rep = verify_result(a, laplace_pairs(comm, a));
  ASSERT_TRUE(rep.is_ok()) << rep.status().message();
  EXPECT_TRUE(rep->ok()) << rep->first_failure;
  EXPECT_TRUE(rep->symmetric);
  ASSERT_EQ(rep->pairs.size(), static_cast<std::size_t>(kK));
  for (const auto& p : rep->pairs) {
    EXPECT_TRUE(p.passed);
    EXPECT_LT(p.residual, 1e-13);
    EXPECT_LT(p.norm_error, 1e-13);
    EXPECT_LT(p.orthogonality, 1e-13);  // sine vectors of distinct frequencies are orthogonal
  }
}

TEST(Verify, PerturbedVectorFails) {
  MPI_Comm comm = MPI_COMM_WORLD;
  Matrix a = load_laplace(comm, kN);
  auto r = laplace_pairs(comm, a);
  // Mix a little of pair 3's vector into pair 2's, then renormalise: unit length
  // and still a plausible vector, but no longer an eigenvector.
  const std::int64_t m = r.local_rows();
  for (std::int64_t i = 0; i < m; ++i) r.vectors[static_cast<std::size_t>(2 * m + i)] += 1e-3 * r.vectors[static_cast<std::size_t>(3 * m + i)];
  double local = 0;
  for (std::int64_t i = 0; i < m; ++i) local += std::pow(r.vectors[static_cast<std::size_t>(2 * m + i)], 2);
  const double norm = std::sqrt(sum_all(comm, local));
  for (std::int64_t i = 0; i < m; ++i) r.vectors[static_cast<std::size_t>(2 * m + i)] /= norm;
  auto rep = verify_result(a, r);
  ASSERT_TRUE(rep.is_ok()) << rep.status().message();
  EXPECT_FALSE(rep->ok());
  EXPECT_EQ(rep->failed, 1);
  EXPECT_EQ(rep->pairs[2].verdict, "residual too large");
  // Pair 2 now leans 1e-3 towards pair 3, but the blame stays with pair 2: the
  // intact pairs are judged orthogonal among themselves. The message numbers
  // pairs from 1, as every listing does: index 2 is "pair 3".
  EXPECT_EQ(rep->pairs[3].verdict, "ok");
  EXPECT_LT(rep->pairs[3].orthogonality, 1e-13);
  EXPECT_EQ(rep->first_failure.rfind("pair 3: ", 0), 0u) << rep->first_failure;
  EXPECT_TRUE(rep->pairs[1].passed);
}

TEST(Verify, UnconvergedPairsAreShownButNotChecked) {
  MPI_Comm comm = MPI_COMM_WORLD;
  Matrix a = load_laplace(comm, kN);
  auto r = laplace_pairs(comm, a);
  r.converged = 3;
  r.eigenvalues[4] += 0.1;  // wrong, but the result does not claim it converged
  auto rep = verify_result(a, r);
  ASSERT_TRUE(rep.is_ok()) << rep.status().message();
  EXPECT_TRUE(rep->ok());
  EXPECT_EQ(rep->checked, 3);
  EXPECT_FALSE(rep->pairs[4].checked);
  EXPECT_GT(rep->pairs[4].residual, 0.05);  // still recomputed and reported
}

TEST(Verify, DuplicatedVectorIsNotOrthogonal) {
  // Two copies of one eigenvector (a degenerate pair found twice) have tiny
  // residuals; only the orthogonality check can catch them.
  MPI_Comm comm = MPI_COMM_WORLD;
  Matrix a = load_laplace(comm, kN);
  auto r = laplace_pairs(comm, a);
  const std::int64_t m = r.local_rows();
  for (std::int64_t i = 0; i < m; ++i) r.vectors[static_cast<std::size_t>(1 * m + i)] = r.vectors[static_cast<std::size_t>(i)];
  r.eigenvalues[1] = r.eigenvalues[0];
  auto rep = verify_result(a, r);
  ASSERT_TRUE(rep.is_ok()) << rep.status().message();
  EXPECT_FALSE(rep->ok());
  EXPECT_EQ(rep->pairs[0].verdict, "not orthogonal");
  EXPECT_EQ(rep->pairs[1].verdict, "not orthogonal");
}

TEST(Verify, WrongMatrixIsAnError) {
  MPI_Comm comm = MPI_COMM_WORLD;
  Matrix a = load_laplace(comm, kN);
  auto r = laplace_pairs(comm, a);
  r.matrix_fingerprint ^= 1;
  auto rep = verify_result(a, r);
  ASSERT_FALSE(rep.is_ok());
  EXPECT_NE(rep.status().message().find("different matrix"), std::string::npos) << rep.status().message();
}

TEST(Verify, ComplexPairsOfTheCyclicShift) {
  // The cyclic shift (A e)_i = e_{(i+1) mod n} is a real circulant matrix: its
  // eigenvalues are the n-th roots of unity w^k = exp(2 pi i k / n) with Fourier
  // eigenvectors v_k(j) = w^{jk} / sqrt(n) (closed form; circulant matrices are
  // diagonalised by the discrete Fourier basis, a standard linear-algebra result).
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 12;
  auto a = test::build_file(comm, n, false, false, [&](std::int64_t i, test::Entries& e) { e.push_back({(i + 1) % n, 1.0}); });
  ASSERT_TRUE(a.is_ok()) << a.status().message();
  const auto& info = a->info();
  SolveResult r;
  r.rows = n;
  r.row_begin = info.row_begin;
  r.row_end = info.row_end;
  r.matrix_fingerprint = info.fingerprint;
  r.tolerance = 1e-10;
  r.norm_estimate = 1.0;  // a permutation matrix has 2-norm 1
  // Places: lambda = 1 (k = 0), then the pair k = 1 (w, conj w), then k = 3 (i, -i).
  auto add_real = [&](double lam, std::int64_t k) {
    r.eigenvalues.push_back(lam);
    r.eigenvalues_imag.push_back(0.0);
    for (std::int64_t j = r.row_begin; j < r.row_end; ++j)
      r.vectors.push_back(std::cos(2 * std::numbers::pi * static_cast<double>(j * k) / n) / std::sqrt(double(n)));
  };
  auto add_complex = [&](std::int64_t k) {
    const double t = 2 * std::numbers::pi * static_cast<double>(k) / n;
    r.eigenvalues.insert(r.eigenvalues.end(), {std::cos(t), std::cos(t)});
    r.eigenvalues_imag.insert(r.eigenvalues_imag.end(), {std::sin(t), -std::sin(t)});
    for (int part = 0; part < 2; ++part)
      for (std::int64_t j = r.row_begin; j < r.row_end; ++j) {
        const double phase = t * static_cast<double>(j);
        r.vectors.push_back((part == 0 ? std::cos(phase) : std::sin(phase)) / std::sqrt(double(n)));
      }
  };
  add_real(1.0, 0);
  add_complex(1);
  add_complex(3);
  r.residual_norms.assign(5, 0.0);
  r.converged = 5;
  auto rep = verify_result(*a, r);
  ASSERT_TRUE(rep.is_ok()) << rep.status().message();
  EXPECT_TRUE(rep->ok()) << rep->first_failure;
  EXPECT_FALSE(rep->symmetric);
  for (const auto& p : rep->pairs) {
    EXPECT_LT(p.residual, 1e-14);
    EXPECT_LT(p.norm_error, 1e-14);
  }

  // The conjugate eigenvalue with the same vector is wrong: A(x + iy) != conj(w)(x + iy).
  auto swapped = r;
  std::swap(swapped.eigenvalues_imag[1], swapped.eigenvalues_imag[2]);
  rep = verify_result(*a, swapped);
  ASSERT_TRUE(rep.is_ok()) << rep.status().message();
  EXPECT_FALSE(rep->ok());
  EXPECT_EQ(rep->pairs[1].verdict, "residual too large");

  // A complex eigenvalue without its conjugate beside it is refused.
  auto lone = r;
  lone.eigenvalues_imag[2] = 0.0;
  auto bad = verify_result(*a, lone);
  ASSERT_FALSE(bad.is_ok());
  EXPECT_NE(bad.status().message().find("conjugate"), std::string::npos) << bad.status().message();
}

TEST(Verify, ExtremeScalesKeepNormsAndOrthogonality) {
  // D = scale * diag(1, ..., n) / n near 1e+300 and 1e-300: the squares inside
  // column norms of A V would overflow or underflow, so verify forms the residual
  // from a scaled V; the vectors' own norms and V^T V must still come from V.
  // Pairs: e_{n-1}; v = (e_{n-2} + delta e_0) / sqrt(1 + delta^2) with eigenvalue
  // d_{n-2}, whose residual is delta |d_0 - d_{n-2}| / sqrt(1 + delta^2); and e_0,
  // whose inner product with v is delta / sqrt(1 + delta^2) (closed forms).
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 10;
  const double delta = 1.0 / 1024;
  const double shrink = 1.0 / std::sqrt(1.0 + delta * delta);
  for (double scale : {1e300, 1e-300}) {
    SCOPED_TRACE(scale);
    auto d = [&](std::int64_t i) { return scale * static_cast<double>(i + 1) / static_cast<double>(n); };
    auto a = test::build_file(comm, n, true, false, [&](std::int64_t i, test::Entries& e) { e.push_back({i, d(i)}); });
    ASSERT_TRUE(a.is_ok()) << a.status().message();
    const auto& info = a->info();
    SolveResult r;
    r.rows = n;
    r.row_begin = info.row_begin;
    r.row_end = info.row_end;
    r.matrix_fingerprint = info.fingerprint;
    r.tolerance = 1e-2;  // loose, so that v passes its residual and is judged for orthogonality
    r.norm_estimate = scale;
    auto add = [&](double lam, std::int64_t i, std::int64_t mixed) {
      r.eigenvalues.push_back(lam);
      r.eigenvalues_imag.push_back(0.0);
      for (std::int64_t j = r.row_begin; j < r.row_end; ++j)
        r.vectors.push_back(mixed < 0 ? (j == i ? 1.0 : 0.0) : (j == i ? shrink : j == mixed ? delta * shrink : 0.0));
    };
    add(d(n - 1), n - 1, -1);
    add(d(n - 2), n - 2, 0);
    add(d(0), 0, -1);
    r.residual_norms.assign(3, 0.0);
    r.converged = 3;
    auto rep = verify_result(*a, r);
    ASSERT_TRUE(rep.is_ok()) << rep.status().message();
    ASSERT_EQ(rep->pairs.size(), 3u);
    EXPECT_LE(rep->pairs[0].residual, 1e-14 * scale);
    const double want = delta * std::abs(d(0) - d(n - 2)) * shrink;
    EXPECT_NEAR(rep->pairs[1].residual, want, 1e-12 * want);
    EXPECT_LE(rep->pairs[2].residual, 1e-14 * scale);
    for (const auto& p : rep->pairs) EXPECT_LT(p.norm_error, 1e-15);
    EXPECT_EQ(rep->pairs[0].verdict, "ok");
    EXPECT_EQ(rep->pairs[0].orthogonality, 0.0);
    EXPECT_NEAR(rep->pairs[1].orthogonality, delta * shrink, 1e-15);
    EXPECT_NEAR(rep->pairs[2].orthogonality, delta * shrink, 1e-15);
    EXPECT_EQ(rep->pairs[1].verdict, "not orthogonal");
    EXPECT_EQ(rep->first_failure.rfind("pair 2: ", 0), 0u) << rep->first_failure;
  }
}

TEST(Verify, DenseLayoutMatrix) {
  // The same check through a dense (MPIDENSE) matrix: MatMatMult of two dense matrices.
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 17;
  auto a = test::build_file(comm, n, true, true, [&](std::int64_t i, test::Entries& e) {
    e.push_back({i, 2.0});
    if (i > 0) e.push_back({i - 1, -1.0});
    if (i + 1 < n) e.push_back({i + 1, -1.0});
  });
  ASSERT_TRUE(a.is_ok()) << a.status().message();
  const auto& i = a->info();
  auto rep = verify_result(*a, test::laplace1d_result(comm, n, 3, i.row_begin, i.row_end, i.fingerprint));
  ASSERT_TRUE(rep.is_ok()) << rep.status().message();
  EXPECT_TRUE(rep->ok()) << rep->first_failure;
}
