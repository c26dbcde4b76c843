// The Krylov-Schur method (`krylov`): closed-form spectra (Laplacians, planted
// real and complex pairs), random symmetric and non-symmetric matrices against
// LAPACK (through LAPACKE), partition independence within one run, a save on
// this rank count restored on one rank, and its product count against `block`
// on a well-separated non-symmetric walk. Run at 1-4 ranks by ctest.
#include <gtest/gtest.h>
#include <lapacke.h>

#include <algorithm>
#include <cmath>
#include <complex>

#include "algebra/operator.hpp"
#include "io/generators.hpp"
#include "methods/method.hpp"
#include "test_solver_matrices.hpp"

using namespace lodestone;

namespace {

// Closed form (standard finite-difference result): tridiag(-1, 2, -1) of order n has
// eigenvalues 2 - 2 cos(j pi / (n + 1)), j = 1..n; the 5-point 2-D Laplacian on
// nx x ny is the Kronecker sum, eigenvalues lap1(nx, i) + lap1(ny, j).
double lap1(std::int64_t n, std::int64_t j) { return 2.0 - 2.0 * std::cos(static_cast<double>(j) * M_PI / static_cast<double>(n + 1)); }

std::vector<double> lap2_sorted(std::int64_t nx, std::int64_t ny) {
  std::vector<double> v;
  for (std::int64_t i = 1; i <= nx; ++i)
    for (std::int64_t j = 1; j <= ny; ++j) v.push_back(lap1(nx, i) + lap1(ny, j));
  std::sort(v.begin(), v.end());
  return v;
}

test::RowRule laplace1d(std::int64_t n) {
  return [n](std::int64_t i, test::Entries& e) {
    if (i > 0) e.push_back({i - 1, -1.0});
    e.push_back({i, 2.0});
    if (i + 1 < n) e.push_back({i + 1, -1.0});
  };
}

Matrix load_laplace2d(MPI_Comm comm, std::int64_t nx, std::int64_t ny) {
  std::string path = test::temp_path(comm, "krylov_lap2.h5");
  EXPECT_TRUE(io::write_csr_file(comm, path, "/matrix", nx * ny, true, io::generate_laplace2d(comm, nx, ny)).is_ok());
  auto m = Matrix::load(comm, path);
  EXPECT_TRUE(m.is_ok());
  return std::move(*m);
}

// A damped random walk of n nodes with four well-separated communities (the
// benchmark's kind of matrix, scaled down), written to `file` and loaded.
Result<Matrix> walk_matrix(MPI_Comm comm, std::int64_t n, const char* file) {
  io::WalkOptions w;
  w.n = n;
  w.communities = 4;
  w.mixing = 0.1;
  const std::string path = test::temp_path(comm, file);
  LODESTONE_TRY(io::write_csr_file(comm, path, "/matrix", w.n, false, io::generate_walk(comm, w)));
  return Matrix::load(comm, path);
}

void expect_certified(const Matrix& m, const SolveResult& r) {
  for (std::int64_t j = 0; j < r.pairs(); ++j) {
    EXPECT_LE(r.residual_norms[j], r.tolerance * r.norm_estimate * 1.0001) << "pair " << j;
    if (r.eigenvalues_imag[j] == 0.0) {
      EXPECT_LE(test::recomputed_residual(m, r, j), 2 * r.tolerance * r.norm_estimate) << "pair " << j;
    }
  }
}

}  // namespace

TEST(MethodKrylov, LaplaceClosedForms) {
  MPI_Comm comm = MPI_COMM_WORLD;
  {
    const std::int64_t n = 60;
    auto m = test::build_aij(comm, n, true, laplace1d(n));
    ASSERT_TRUE(m.is_ok()) << m.status().message();
    auto r = solve(*m, test::quiet_options(3, "krylov", "largest"));
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    EXPECT_EQ(r->method, "krylov");
    ASSERT_EQ(r->pairs(), 3);
    EXPECT_EQ(r->converged, 3);
    for (int j = 0; j < 3; ++j) EXPECT_NEAR(r->eigenvalues[j], lap1(n, n - j), 1e-7) << "pair " << j;
    expect_certified(*m, *r);
    // With shift 4 the eigenvalues farthest from 4 are the smallest ones.
    auto o = test::quiet_options(2, "krylov", "magnitude");
    o.has_shift = true;
    o.shift = 4.0;
    auto s = solve(*m, o);
    ASSERT_TRUE(s.is_ok()) << s.status().message();
    EXPECT_EQ(s->converged, 2);
    for (int j = 0; j < 2; ++j) EXPECT_NEAR(s->eigenvalues[j], lap1(n, j + 1), 1e-7) << "pair " << j;
  }
  const std::int64_t nx = 12, ny = 9;
  auto m = load_laplace2d(comm, nx, ny);
  const auto all = lap2_sorted(nx, ny);
  for (const char* select : {"largest", "smallest"}) {
    SCOPED_TRACE(select);
    auto r = solve(m, test::quiet_options(6, "krylov", select));
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    ASSERT_EQ(r->pairs(), 6);
    EXPECT_EQ(r->converged, 6);
    const bool small = std::string(select) == "smallest";
    for (int j = 0; j < 6; ++j)
      EXPECT_NEAR(r->eigenvalues[j], small ? all[j] : all[all.size() - 1 - j], 1e-7) << "pair " << j;
    expect_certified(m, *r);
    auto g = test::vector_gram(comm, *r);
    for (int a = 0; a < 6; ++a)
      for (int b = 0; b < 6; ++b) EXPECT_NEAR(g[a * 6 + b], a == b ? 1.0 : 0.0, 1e-7);
  }
}

TEST(MethodKrylov, PlantedComplexAndPlusMinusPairs) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 30;
  {
    auto m = test::build_aij(comm, n, false, test::planted_block(3.0, 4.0, -4.0, 3.0, n));  // 3 +- 4i, modulus 5
    ASSERT_TRUE(m.is_ok());
    // K = 1 asks for one value; the pair comes back whole.
    for (int k : {1, 2, 3}) {
      SCOPED_TRACE(k);
      auto r = solve(*m, test::quiet_options(k, "krylov", "magnitude"));
      ASSERT_TRUE(r.is_ok()) << r.status().message();
      ASSERT_GE(r->pairs(), 2);
      EXPECT_GE(r->converged, k);
      EXPECT_NEAR(r->eigenvalues[0], 3.0, 1e-7);
      EXPECT_NEAR(r->eigenvalues[1], 3.0, 1e-7);
      EXPECT_NEAR(r->eigenvalues_imag[0], 4.0, 1e-7);  // positive imaginary part first
      EXPECT_NEAR(r->eigenvalues_imag[1], -4.0, 1e-7);
      if (k == 3) {
        EXPECT_NEAR(r->eigenvalues[2], 3.0, 1e-7);  // the largest diagonal entry
        EXPECT_EQ(r->eigenvalues_imag[2], 0.0);
      }
      expect_certified(*m, *r);
      auto g = test::vector_gram(comm, *r);
      EXPECT_NEAR(g[0] + g[static_cast<std::size_t>(r->pairs()) + 1], 1.0, 1e-10);  // unit complex vector
    }
  }
  auto m = test::build_aij(comm, n, false, test::planted_block(0.0, 10.0, 2.5, 0.0, n));  // eigenvalues +5 and -5
  ASSERT_TRUE(m.is_ok());
  auto r = solve(*m, test::quiet_options(2, "krylov", "magnitude"));
  ASSERT_TRUE(r.is_ok()) << r.status().message();
  ASSERT_EQ(r->pairs(), 2);
  EXPECT_EQ(r->converged, 2);
  std::vector<double> got = {r->eigenvalues[0], r->eigenvalues[1]};
  std::sort(got.begin(), got.end());
  EXPECT_NEAR(got[0], -5.0, 1e-7);
  EXPECT_NEAR(got[1], 5.0, 1e-7);
  expect_certified(*m, *r);
}

TEST(MethodKrylov, RandomMatricesAgainstLapack) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 50;
  // Non-symmetric: hashed random entries plus planted diagonal values.
  const auto general = test::planted_random(n, 31, 0.5, {4.0, -3.5, 3.0});
  {
    auto m = test::build_file(comm, n, false, false, general);
    ASSERT_TRUE(m.is_ok()) << m.status().message();
    auto a = test::full_dense(n, general);
    std::vector<double> wr(n), wi(n);
    // Reference: LAPACK dgeev through LAPACKE (general real eigenproblem).
    ASSERT_EQ(LAPACKE_dgeev(LAPACK_ROW_MAJOR, 'N', 'N', static_cast<int>(n), a.data(), static_cast<int>(n), wr.data(),
                            wi.data(), nullptr, 1, nullptr, 1), 0);
    std::vector<std::complex<double>> ref;
    for (std::int64_t i = 0; i < n; ++i) ref.emplace_back(wr[i], wi[i]);
    for (const char* select : {"magnitude", "largest"}) {
      SCOPED_TRACE(select);
      const bool mag = std::string(select) == "magnitude";
      auto key = [&](std::complex<double> z) { return mag ? std::abs(z) : z.real(); };
      std::sort(ref.begin(), ref.end(), [&](auto x, auto y) { return key(x) > key(y); });
      auto r = solve(*m, test::quiet_options(4, "krylov", select));
      ASSERT_TRUE(r.is_ok()) << r.status().message();
      EXPECT_GE(r->converged, 4);
      // Each returned value is one of the wanted ones (the first 5 by the key, a pair may straddle).
      for (std::int64_t j = 0; j < r->pairs(); ++j) {
        std::complex<double> got(r->eigenvalues[j], r->eigenvalues_imag[j]);
        double best = 1e300;
        for (int i = 0; i < 5; ++i) best = std::min(best, std::abs(ref[i] - got));
        EXPECT_LT(best, 1e-7) << "pair " << j << " got " << got;
      }
      // And the K-th wanted key is reached.
      EXPECT_NEAR(key({r->eigenvalues[3], r->eigenvalues_imag[3]}), key(ref[3]), 1e-7);
      expect_certified(*m, *r);
    }
  }
  // Symmetric: (B + B^T) / 2 of hashed entries plus planted diagonal values.
  auto sym = [&](std::int64_t i, test::Entries& e) {
    for (std::int64_t j = 0; j < n; ++j) {
      const auto lo = static_cast<std::uint64_t>(std::min(i, j)), hi = static_cast<std::uint64_t>(std::max(i, j));
      double v = io::hashed_uniform(32, lo, hi) - 0.5;
      if (i == j && i < 4) v += (i == 0 ? 6.0 : i == 1 ? -5.0 : i == 2 ? 4.5 : -4.0);
      e.push_back({j, v});
    }
  };
  auto m = test::build_file(comm, n, true, true, sym);
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  auto a = test::full_dense(n, sym);
  std::vector<double> w(n);
  // Reference: LAPACK dsyev through LAPACKE (symmetric eigenproblem), ascending.
  ASSERT_EQ(LAPACKE_dsyev(LAPACK_ROW_MAJOR, 'N', 'U', static_cast<int>(n), a.data(), static_cast<int>(n), w.data()), 0);
  std::vector<double> by_magnitude = w;
  std::sort(by_magnitude.begin(), by_magnitude.end(), [](double x, double y) { return std::fabs(x) > std::fabs(y); });
  for (const char* select : {"magnitude", "largest", "smallest"}) {
    SCOPED_TRACE(select);
    auto r = solve(*m, test::quiet_options(4, "krylov", select));
    ASSERT_TRUE(r.is_ok()) << r.status().message();
    ASSERT_EQ(r->pairs(), 4);
    EXPECT_EQ(r->converged, 4);
    for (int j = 0; j < 4; ++j) {
      const std::string s = select;
      const double want = s == "magnitude" ? by_magnitude[j] : s == "largest" ? w[n - 1 - j] : w[j];
      EXPECT_NEAR(r->eigenvalues[j], want, 1e-7) << "pair " << j;
    }
    expect_certified(*m, *r);
  }
}

// The same seed gives the same eigenvalues on this rank count and on one rank
// (every rank solves the whole problem alone on MPI_COMM_SELF as well).
TEST(MethodKrylov, PartitionIndependent) {
  const std::int64_t n = 400;
  auto rule = [&](std::int64_t i, test::Entries& e) {
    e.push_back({i, 1.0 + 3.0 / static_cast<double>(i + 1)});
    for (int k = 0; k < 3; ++k) {
      auto j = static_cast<std::int64_t>(io::hashed_uniform(41, static_cast<std::uint64_t>(i), k) * static_cast<double>(n));
      e.push_back({j, 0.3 * (io::hashed_uniform(42, static_cast<std::uint64_t>(i), k) - 0.5)});
    }
  };
  auto world = test::build_aij(MPI_COMM_WORLD, n, false, rule);
  auto self = test::build_aij(MPI_COMM_SELF, n, false, rule);
  ASSERT_TRUE(world.is_ok() && self.is_ok());
  auto a = solve(*world, test::quiet_options(4, "krylov", "magnitude"));
  auto b = solve(*self, test::quiet_options(4, "krylov", "magnitude"));
  ASSERT_TRUE(a.is_ok()) << a.status().message();
  ASSERT_TRUE(b.is_ok()) << b.status().message();
  ASSERT_EQ(a->pairs(), b->pairs());
  EXPECT_EQ(a->converged, b->converged);
  for (std::int64_t j = 0; j < a->pairs(); ++j) {
    EXPECT_NEAR(a->eigenvalues[j], b->eigenvalues[j], 1e-9) << "pair " << j;
    EXPECT_NEAR(a->eigenvalues_imag[j], b->eigenvalues_imag[j], 1e-9) << "pair " << j;
  }
  EXPECT_EQ(a->matvecs, b->matvecs);  // same decisions, same number of cycles
}

// Two cycles on this rank count, save; the state is carried by global row to one
// rank (as a checkpoint would), restored there and finished: the same answer as
// an uninterrupted run, and the closed form.
TEST(MethodKrylov, SaveHereRestoreOnOneRank) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 300;
  auto rule = laplace1d(n);
  auto world = test::build_aij(comm, n, true, rule);
  auto self = test::build_aij(MPI_COMM_SELF, n, true, rule);
  ASSERT_TRUE(world.is_ok() && self.is_ok());
  methods::Problem problem;
  problem.symmetric = true;
  problem.selection = methods::Selection::largest;
  problem.pairs = 3;
  problem.tolerance = 1e-9;
  problem.norm_estimate = 4.0;
  problem.seed = 7;
  const auto* info = methods::find_method("krylov");
  ASSERT_NE(info, nullptr);

  algebra::Operator op(world->petsc());
  auto first = info->make();
  ASSERT_TRUE(first->setup(op, problem).is_ok());
  for (int s = 0; s < 2; ++s) ASSERT_TRUE(first->step().is_ok());
  ASSERT_LT(first->converged(), 3);  // still mid-run
  methods::MethodState saved;
  ASSERT_TRUE(first->save(saved).is_ok());
  // Gather every saved block by global row onto every rank.
  std::vector<std::pair<std::string, std::vector<double>>> global;
  for (const auto& [name, block] : saved.blocks) {
    std::vector<double> g(static_cast<std::size_t>(n * block.cols()), 0.0);
    for (int c = 0; c < block.cols(); ++c)
      for (PetscInt i = 0; i < block.local_rows(); ++i)
        g[static_cast<std::size_t>(c * n + block.row_begin() + i)] = block.column(c)[i];
    MPI_Allreduce(MPI_IN_PLACE, g.data(), static_cast<int>(g.size()), MPI_DOUBLE, MPI_SUM, comm);
    global.emplace_back(name, std::move(g));
  }
  // Finish the first run here.
  while (first->converged() < 3) ASSERT_TRUE(first->step().is_ok());
  auto done = first->extract();
  ASSERT_TRUE(done.is_ok()) << done.status().message();

  // Restore on one rank.
  methods::MethodState moved;
  moved.scalars = saved.scalars;
  for (const auto& [name, g] : global) {
    const int cols = static_cast<int>(g.size() / static_cast<std::size_t>(n));
    auto b = algebra::Block::like(self->petsc(), cols);
    ASSERT_TRUE(b.is_ok());
    for (int c = 0; c < cols; ++c) std::copy(g.begin() + c * n, g.begin() + (c + 1) * n, b->column(c));
    b->changed();
    moved.blocks.emplace_back(name, std::move(*b));
  }
  algebra::Operator op1(self->petsc());
  auto second = info->make();
  ASSERT_TRUE(second->restore(op1, problem, moved).is_ok());
  EXPECT_EQ(second->iterations(), 2);
  while (second->converged() < 3) ASSERT_TRUE(second->step().is_ok());
  EXPECT_EQ(second->iterations(), first->iterations());
  auto again = second->extract();
  ASSERT_TRUE(again.is_ok()) << again.status().message();
  ASSERT_EQ(again->re.size(), done->re.size());
  for (std::size_t j = 0; j < done->re.size(); ++j) {
    EXPECT_NEAR(again->re[j], done->re[j], 1e-9) << "pair " << j;
    EXPECT_NEAR(again->re[j], lap1(n, n - static_cast<std::int64_t>(j)), 1e-7) << "pair " << j;  // closed form above
  }
  EXPECT_EQ(again->converged, 3);
}

// Once the wanted pairs have converged the saved state is a Krylov-Schur decomposition
// A V_k = V_k S_k + v b^T with [V_k v] orthonormal to rounding: checked directly
// on a well-separated walk (one Gram-Schmidt pass usually suffices there) and on
// a 1-D Laplacian (clustered, where w loses most of its norm and passes repeat).
TEST(MethodKrylov, SavedStateIsAnOrthonormalKrylovSchurDecomposition) {
  MPI_Comm comm = MPI_COMM_WORLD;
  auto walk = walk_matrix(comm, 3000, "krylov_basis_walk.h5");
  ASSERT_TRUE(walk.is_ok()) << walk.status().message();
  auto lap = test::build_aij(comm, 300, true, laplace1d(300));
  ASSERT_TRUE(lap.is_ok());
  struct Case {
    const Matrix* m;
    bool symmetric;
    methods::Selection selection;
    double norm;
  };
  for (const Case& c : {Case{&*walk, false, methods::Selection::magnitude, 1.0},
                        Case{&*lap, true, methods::Selection::largest, 4.0}}) {
    SCOPED_TRACE(c.symmetric ? "laplace1d" : "walk");
    methods::Problem problem;
    problem.symmetric = c.symmetric;
    problem.selection = c.selection;
    problem.pairs = 4;
    problem.tolerance = 1e-10;
    problem.norm_estimate = c.norm;
    problem.seed = 3;
    algebra::Operator op(c.m->petsc());
    auto method = methods::find_method("krylov")->make();
    ASSERT_TRUE(method->setup(op, problem).is_ok());
    // Until the wanted pairs have converged: then A v lies nearly in the basis for
    // the converged directions, and a single pass would leave w far from orthogonal.
    for (int s = 0; s < 400 && method->converged() < 4; ++s) ASSERT_TRUE(method->step().is_ok());
    EXPECT_EQ(method->converged(), 4) << method->iterations() << " cycles";
    methods::MethodState saved;
    ASSERT_TRUE(method->save(saved).is_ok());
    ASSERT_EQ(saved.blocks.size(), 1u);
    const algebra::Block& v = saved.blocks[0].second;
    const int k = v.cols() - 1;
    ASSERT_GT(k, 0);
    // [V_k v]^T [V_k v] = I.
    const algebra::Small g = algebra::gram(v, v);
    double worst = 0;
    for (int j = 0; j <= k; ++j)
      for (int i = 0; i <= k; ++i) worst = std::max(worst, std::fabs(g(i, j) - (i == j ? 1.0 : 0.0)));
    EXPECT_LT(worst, 1e-12);
    // A V_k - V_k S_k - v b^T = 0, column by column (S is column-major k x k).
    const auto& s = saved.scalars["krylov_s"];
    const auto& b = saved.scalars["krylov_b"];
    auto vk = algebra::Block::like(c.m->petsc(), k);
    auto av = algebra::Block::like(c.m->petsc(), k);
    ASSERT_TRUE(vk.is_ok() && av.is_ok());
    algebra::copy_columns(v, 0, *vk, 0, k);
    ASSERT_TRUE(op.apply(*vk, *av).is_ok());
    double local = 0;
    for (int j = 0; j < k; ++j) {
      for (PetscInt r = 0; r < v.local_rows(); ++r) {
        double e = av->column(j)[r] - b[static_cast<std::size_t>(j)] * v.column(k)[r];
        for (int i = 0; i < k; ++i) e -= v.column(i)[r] * s[static_cast<std::size_t>(j) * k + i];
        local = std::max(local, std::fabs(e));
      }
    }
    double global = 0;
    MPI_Allreduce(&local, &global, 1, MPI_DOUBLE, MPI_MAX, comm);
    EXPECT_LT(global, 1e-12 * c.norm);
  }
}

// On a damped random walk with well-separated communities (the benchmark's kind
// of matrix, scaled down), Krylov-Schur needs fewer products than block
// iteration for the same pairs. A count, not a timing.
TEST(MethodKrylov, FewerProductsThanBlockOnAWalk) {
  MPI_Comm comm = MPI_COMM_WORLD;
  auto m = walk_matrix(comm, 4000, "krylov_walk.h5");
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  auto options = [](const char* method) {
    auto o = test::quiet_options(4, method, "magnitude");
    o.tolerance = 1e-8;  // the benchmark's tolerance
    return o;
  };
  auto k = solve(*m, options("krylov"));
  auto b = solve(*m, options("block"));
  ASSERT_TRUE(k.is_ok()) << k.status().message();
  ASSERT_TRUE(b.is_ok()) << b.status().message();
  EXPECT_EQ(k->converged, 4);
  EXPECT_EQ(b->converged, 4);
  for (int j = 0; j < 4; ++j) {
    EXPECT_NEAR(k->eigenvalues[j], b->eigenvalues[j], 1e-7) << "pair " << j;
  }
  EXPECT_NEAR(k->eigenvalues[0], 1.0, 1e-9);  // column-stochastic: the dominant eigenvalue is 1 (generators.hpp)
  EXPECT_LT(k->matvecs, b->matvecs) << "krylov " << k->matvecs << " block " << b->matvecs;
}
