// The solve() API: refusals (a Chebyshev block without a guard vector among them), a
// stop signal that comes before the solve starts, the matvec budget, and the method
// interface's save/restore (what checkpoints will use) continuing a run to the same answer.
#include <gtest/gtest.h>

#include <cmath>
#include <csignal>

#include "algebra/operator.hpp"
#include "io/generators.hpp"
#include "methods/method.hpp"
#include "state/history_cap.hpp"
#include "state/stop_signals.hpp"
#include "test_solver_matrices.hpp"

using namespace lodestone;

namespace {
Matrix laplace1d(std::int64_t n) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string path = test::temp_path(comm, "api-lap1.h5");
  EXPECT_TRUE(io::write_csr_file(comm, path, "/matrix", n, true, io::generate_laplace1d(comm, n)).is_ok());
  auto m = Matrix::load(comm, path);
  EXPECT_TRUE(m.is_ok());
  return std::move(*m);
}
// Closed form (standard finite-difference result): eigenvalues of tridiag(-1, 2, -1).
double lap1(std::int64_t n, std::int64_t j) { return 2.0 - 2.0 * std::cos(static_cast<double>(j) * M_PI / static_cast<double>(n + 1)); }

test::RowRule nonsymmetric(std::int64_t n) {
  return [n](std::int64_t i, test::Entries& e) {
    e.push_back({i, 1.0 + static_cast<double>(i)});
    if (i + 1 < n) e.push_back({i + 1, 0.5});
  };
}
}  // namespace

TEST(SolverApi, RefusesWhatNonSymmetricInputCannotDo) {
  auto m = test::build_aij(MPI_COMM_WORLD, 8, false, nonsymmetric(8));
  ASSERT_TRUE(m.is_ok());
  auto a = solve(*m, test::quiet_options(2, "chebyshev", "magnitude"));
  ASSERT_FALSE(a.is_ok());
  EXPECT_EQ(a.status().kind(), ErrorKind::usage);
  EXPECT_NE(a.status().message().find("--method chebyshev needs a symmetric matrix"), std::string::npos);
  auto b = solve(*m, test::quiet_options(2, "block", "smallest"));
  ASSERT_FALSE(b.is_ok());
  EXPECT_EQ(b.status().kind(), ErrorKind::usage);
  EXPECT_NE(b.status().message().find("--select smallest needs a symmetric matrix"), std::string::npos);
  auto c = solve(*m, test::quiet_options(9, "block", "magnitude"));
  ASSERT_FALSE(c.is_ok());
  EXPECT_NE(c.status().message().find("exceeds the matrix order"), std::string::npos);
  // Power and block rank by |lambda + ||A|||, not by real part: largest is krylov's alone here.
  for (const char* method : {"power", "block"}) {
    auto e = solve(*m, test::quiet_options(2, method, "largest"));
    ASSERT_FALSE(e.is_ok()) << method;
    EXPECT_EQ(e.status().kind(), ErrorKind::usage);
    EXPECT_NE(e.status().message().find("--select largest on a matrix not declared symmetric needs --method krylov"),
              std::string::npos) << e.status().message();
  }
  auto f = solve(*m, test::quiet_options(2, "krylov", "sideways"));
  ASSERT_FALSE(f.is_ok());
  EXPECT_EQ(f.status().kind(), ErrorKind::usage);
  EXPECT_NE(f.status().message().find("--select 'sideways': expected magnitude, largest or smallest"),
            std::string::npos);
  // An upper triangular matrix: its eigenvalues are its diagonal, 8, 7, ... (largest real part first).
  for (const char* method : {"krylov", "auto"}) {
    auto d = solve(*m, test::quiet_options(2, method, "largest"));
    ASSERT_TRUE(d.is_ok()) << d.status().message();
    EXPECT_NEAR(d->eigenvalues[0], 8.0, 1e-7);
    EXPECT_NEAR(d->eigenvalues[1], 7.0, 1e-7);
  }
}

TEST(SolverApi, ChebyshevNeedsAGuardVector) {
  Matrix m = laplace1d(200);
  // With the block no wider than K the filter's cut would be the last wanted Ritz value,
  // and that pair would never converge: refused, for auto (which picks chebyshev) too.
  for (const char* method : {"chebyshev", "auto"}) {
    SCOPED_TRACE(method);
    auto o = test::quiet_options(4, method, "largest");
    o.block_size = 4;
    auto r = solve(m, o);
    ASSERT_FALSE(r.is_ok());
    EXPECT_EQ(r.status().kind(), ErrorKind::usage);
    EXPECT_NE(r.status().message().find("no guard vector"), std::string::npos) << r.status().message();
    o.block_size = 5;  // one guard is enough
    auto ok = solve(m, o);
    ASSERT_TRUE(ok.is_ok()) << ok.status().message();
    EXPECT_EQ(ok->converged, 4);
    for (int j = 0; j < 4; ++j) EXPECT_NEAR(ok->eigenvalues[j], lap1(200, 200 - j), 1e-7) << "pair " << j;
  }
  // The block method takes a block of exactly K.
  auto o = test::quiet_options(4, "block", "largest");
  o.block_size = 4;
  o.max_matvecs = 200000;
  auto b = solve(m, o);
  ASSERT_TRUE(b.is_ok()) << b.status().message();
  EXPECT_EQ(b->converged, 4);
  // The filter chooses its own interval: a shift is refused, not silently ignored.
  auto c = test::quiet_options(4, "chebyshev", "largest");
  c.has_shift = true;
  c.shift = 1.0;
  auto s = solve(m, c);
  ASSERT_FALSE(s.is_ok());
  EXPECT_EQ(s.status().kind(), ErrorKind::usage);
  EXPECT_NE(s.status().message().find("--method chebyshev does not take --shift"), std::string::npos)
      << s.status().message();
}

// A stop signal that comes while the matrix loads (catch_stop_signals() taken before
// the load, as `solve --checkpoint` does) is kept: the solve stops with a checkpoint at
// its first boundary. Without it, SIGUSR1's default action would end the process.
TEST(SolverApi, AStopSignalDuringTheLoadStopsAtTheFirstBoundary) {
  MPI_Comm comm = MPI_COMM_WORLD;
  catch_stop_signals();
  if (comm_rank(comm) == 0) std::raise(SIGUSR1);
  Matrix m = laplace1d(200);
  auto o = test::quiet_options(4, "block", "largest");
  o.checkpoint.path = test::temp_path(comm, "early-signal.ckpt.h5");
  auto r = solve(m, o);
  state::clear_stop_flag();
  state::restore_stop_handlers();
  ASSERT_FALSE(r.is_ok());
  EXPECT_EQ(r.status().kind(), ErrorKind::stopped) << r.status().message();
  EXPECT_TRUE(checkpoint_exists(comm, o.checkpoint.path));
}

TEST(SolverApi, HistoryCapKeepsFirstAndLastAndOrder) {
  std::vector<HistoryRecord> h;
  for (std::int64_t i = 0; i < 1000; ++i) {
    HistoryRecord r;
    r.iteration = i;
    h.push_back(r);
    state::cap_history(h, 50);
    ASSERT_LE(h.size(), 50u);
    EXPECT_EQ(h.front().iteration, 0);
    EXPECT_EQ(h.back().iteration, i);
  }
  for (std::size_t j = 1; j < h.size(); ++j) EXPECT_LT(h[j - 1].iteration, h[j].iteration);
  EXPECT_GE(h.size(), 25u);  // thinning halves, no more
}

// A one-vector method records thousands of boundaries a second; the history (on
// every rank, and in every checkpoint) stays within its cap and still ends at the end.
TEST(SolverApi, LongRunsKeepABoundedHistory) {
  Matrix m = laplace1d(200);
  auto o = test::quiet_options(1, "power", "largest");
  o.max_matvecs = 3 * static_cast<std::int64_t>(state::kHistoryCap);
  auto r = solve(m, o);
  ASSERT_TRUE(r.is_ok()) << r.status().message();
  ASSERT_GT(r->iterations, static_cast<std::int64_t>(state::kHistoryCap));
  EXPECT_LE(r->history.size(), state::kHistoryCap);
  EXPECT_EQ(r->history.front().iteration, 0);
  EXPECT_EQ(r->history.back().iteration, r->iterations);
  EXPECT_GE(r->history.back().matvecs, o.max_matvecs);  // the last record is where the budget ran out
  EXPECT_LE(r->history.back().matvecs, r->matvecs);     // (the result adds extraction's products)
}

TEST(SolverApi, BudgetKeepsConvergedPairs) {
  auto m = laplace1d(30);
  auto o = test::quiet_options(4, "block", "largest");
  o.max_matvecs = 40;
  auto r = solve(m, o);
  ASSERT_TRUE(r.is_ok()) << r.status().message();
  EXPECT_LT(r->converged, 4);
  EXPECT_GE(r->matvecs, 40);
  EXPECT_EQ(r->pairs(), 4);  // converged pairs first, then the best approximations to the rest
  for (std::int64_t j = 0; j < r->converged; ++j) EXPECT_LE(r->residual_norms[j], r->tolerance * r->norm_estimate);
  for (std::int64_t j = r->converged; j < r->pairs(); ++j) EXPECT_GT(r->residual_norms[j], r->tolerance * r->norm_estimate);
}

TEST(SolverApi, SaveAndRestoreContinueToTheSameAnswer) {
  for (const char* name : {"chebyshev", "block", "power", "krylov"}) {
    SCOPED_TRACE(name);
    // Single-vector steps converge at the ratio of neighbouring eigenvalues: a shorter rod.
    const std::int64_t n = std::string(name) == "power" ? 10 : 50;
    auto m = laplace1d(n);
    methods::Problem p;
    p.symmetric = true;
    p.selection = methods::Selection::largest;
    p.pairs = std::string(name) == "power" ? 2 : 4;
    p.tolerance = 1e-9;
    p.norm_estimate = 4.0;
    p.seed = 5;
    const auto* info = methods::find_method(name);
    ASSERT_NE(info, nullptr);
    algebra::Operator op(m.petsc());
    auto first = info->make();
    ASSERT_TRUE(first->setup(op, p).is_ok());
    for (int k = 0; k < 3 && first->converged() < p.pairs; ++k) ASSERT_TRUE(first->step().is_ok());
    methods::MethodState state;
    ASSERT_TRUE(first->save(state).is_ok());
    first.reset();  // nothing of the first object survives but the saved state
    auto second = info->make();
    algebra::Operator op2(m.petsc());
    ASSERT_TRUE(second->restore(op2, p, state).is_ok());
    EXPECT_GE(second->iterations(), 1);
    int guard = 0;
    while (second->converged() < p.pairs && guard++ < 100000) ASSERT_TRUE(second->step().is_ok());
    auto pairs = second->extract();
    ASSERT_TRUE(pairs.is_ok()) << pairs.status().message();
    EXPECT_EQ(pairs->converged, p.pairs);
    for (int j = 0; j < p.pairs; ++j) EXPECT_NEAR(pairs->re[j], lap1(n, n - j), 1e-8) << "pair " << j;
  }
}
