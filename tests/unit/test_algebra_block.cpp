// The distributed block layer: products, Gram matrices, orthonormalization,
// projection and hashed start vectors, at every rank count; a failed allocation
// on one rank is every rank's failure.
#include <gtest/gtest.h>

#include <cmath>

#include "algebra/block.hpp"
#include "algebra/operator.hpp"
#include "algebra/small_eigen.hpp"
#include "io/generators.hpp"
#include "test_solver_matrices.hpp"

using namespace lodestone;
using algebra::Block;

namespace {
// tridiag(-1, 2, -1)
void lap_rule(std::int64_t n, std::int64_t i, test::Entries& e) {
  if (i > 0) e.push_back({i - 1, -1.0});
  e.push_back({i, 2.0});
  if (i + 1 < n) e.push_back({i + 1, -1.0});
}
}  // namespace

namespace {
// Products through Operator::apply against PETSc's MatMult, column by column.
void check_repeated_products(const Matrix* m) {
  algebra::Operator op(m->petsc());
  auto x = Block::like(m->petsc(), 3), y = Block::like(m->petsc(), 3), z = Block::like(m->petsc(), 3);
  algebra::fill_random(*x, 7, 1);
  // Alternate inputs into the same output and iterate in place: every product must be fresh.
  for (int round = 0; round < 4; ++round) {
    ASSERT_TRUE(op.apply(*x, *y).is_ok());
    ASSERT_TRUE(op.apply(*y, *z).is_ok());
    // Reference with MatMult, column by column.
    for (int j = 0; j < 3; ++j) {
      Vec u, v;
      MatCreateVecs(m->petsc(), &u, &v);
      PetscScalar* pu;
      VecGetArray(u, &pu);
      for (PetscInt i = 0; i < x->local_rows(); ++i) pu[i] = x->column(j)[i];
      VecRestoreArray(u, &pu);
      MatMult(m->petsc(), u, v);
      MatMult(m->petsc(), v, u);
      const PetscScalar* pv;
      VecGetArrayRead(u, &pv);
      for (PetscInt i = 0; i < x->local_rows(); ++i) EXPECT_NEAR(z->column(j)[i], pv[i], 1e-12 * (1.0 + std::fabs(pv[i])));
      VecRestoreArrayRead(u, &pv);
      VecDestroy(&u);
      VecDestroy(&v);
    }
    algebra::copy_columns(*z, 0, *x, 0, 3);
    auto norms = algebra::column_norms(*x);
    for (int j = 0; j < 3; ++j) {
      double* p = x->column(j);
      for (PetscInt i = 0; i < x->local_rows(); ++i) p[i] /= norms[j];
    }
    x->changed();
  }
  EXPECT_EQ(op.matvecs(), 4 * 2 * 3);
}
}  // namespace

TEST(AlgebraBlock, RepeatedProductsMatchMatMult) {
  const std::int64_t n = 23;
  auto m = test::build_aij(MPI_COMM_WORLD, n, true, [&](std::int64_t i, test::Entries& e) { lap_rule(n, i, e); });
  ASSERT_TRUE(m.is_ok());
  check_repeated_products(&*m);
}

// A dense matrix on more than one rank takes the operator's own path (gather the
// block, one BLAS-3 product per owning rank's piece): it must agree with PETSc's
// dense MatMult, with every rank count's uneven row split (23 rows).
TEST(AlgebraBlock, DenseProductsMatchMatMult) {
  const std::int64_t n = 23;
  auto m = test::build_file(MPI_COMM_WORLD, n, false, true, [&](std::int64_t i, test::Entries& e) {
    for (std::int64_t j = 0; j < n; ++j) e.push_back({j, io::hashed_uniform(3, static_cast<std::uint64_t>(i), static_cast<std::uint64_t>(j)) - 0.5});
  });
  ASSERT_TRUE(m.is_ok());
  check_repeated_products(&*m);
}

// The norm estimate sqrt(||A||_1 ||A||_inf) sums the columns of a distributed sparse
// matrix itself (its ghost columns' sums sent to their owners): it must agree with
// PETSc's own MatNorm on a non-symmetric matrix whose columns are spread over every
// rank (row i holds a few hashed columns with signed values, column 5 is heavy).
TEST(AlgebraBlock, NormEstimateMatchesPetscNorms) {
  const std::int64_t n = 41;
  auto m = test::build_file(MPI_COMM_WORLD, n, false, false, [&](std::int64_t i, test::Entries& e) {
    const auto u = static_cast<std::uint64_t>(i);
    for (std::uint64_t k = 0; k < 4; ++k) {
      const auto j = static_cast<std::int64_t>(io::hashed_uniform(11, u, k) * static_cast<double>(n)) % n;
      e.push_back({j, io::hashed_uniform(12, u, k) - 0.5});
    }
    e.push_back({5, 2.0});  // entries in one column add up: at least 1.5 each
  });
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  PetscReal n1 = 0, ninf = 0;
  ASSERT_EQ(MatNorm(m->petsc(), NORM_1, &n1), 0);
  ASSERT_EQ(MatNorm(m->petsc(), NORM_INFINITY, &ninf), 0);
  auto est = algebra::norm_estimate(m->petsc());
  ASSERT_TRUE(est.is_ok()) << est.status().message();
  EXPECT_GE(n1, 41 * 1.5);  // column 5 alone
  EXPECT_NEAR(*est, std::sqrt(static_cast<double>(n1) * static_cast<double>(ninf)), 1e-12 * *est);
}

// The in-place rotation of leading columns (the Krylov restart) against the
// out-of-place BLAS product, on more rows than one of its row blocks (2500 local
// rows at most, blocks of 1024) and for k > n, k = n, k < n and k = 0.
TEST(AlgebraBlock, LeadingColumnsTimesSmallInPlace) {
  const std::int64_t n = 2500;
  auto m = test::build_aij(MPI_COMM_WORLD, n, true, [&](std::int64_t i, test::Entries& e) { lap_rule(n, i, e); });
  ASSERT_TRUE(m.is_ok());
  for (auto [k, cols] : {std::pair{7, 3}, {5, 5}, {2, 6}, {0, 2}}) {
    SCOPED_TRACE(testing::Message() << "k " << k << " cols " << cols);
    auto x = Block::like(m->petsc(), 8), want = Block::like(m->petsc(), cols);
    ASSERT_TRUE(x.is_ok() && want.is_ok());
    algebra::fill_random(*x, 11, 2);
    algebra::Small s(k, cols);
    for (int j = 0; j < cols; ++j)
      for (int i = 0; i < k; ++i) s(i, j) = io::hashed_uniform(5, static_cast<std::uint64_t>(i), static_cast<std::uint64_t>(j)) - 0.5;
    auto lead = Block::like(m->petsc(), std::max(k, 1));
    ASSERT_TRUE(lead.is_ok());
    algebra::copy_columns(*x, 0, *lead, 0, std::max(k, 1));
    algebra::Small s_lead = k > 0 ? s : algebra::Small(1, cols);  // k = 0: the product is zero either way
    algebra::times_small(*lead, s_lead, *want);
    auto untouched = Block::like(m->petsc(), 8 - cols);
    ASSERT_TRUE(untouched.is_ok());
    algebra::copy_columns(*x, cols, *untouched, 0, 8 - cols);
    algebra::times_small_leading(*x, s);
    double worst = 0;
    for (int j = 0; j < cols; ++j)
      for (PetscInt r = 0; r < x->local_rows(); ++r) worst = std::max(worst, std::fabs(x->column(j)[r] - want->column(j)[r]));
    EXPECT_LT(worst, 1e-14);
    for (int j = cols; j < 8; ++j)
      for (PetscInt r = 0; r < x->local_rows(); ++r) ASSERT_EQ(x->column(j)[r], untouched->column(j - cols)[r]);
  }
}

TEST(AlgebraBlock, AFailedAllocationIsAgreedByEveryRank) {
  MPI_Comm comm = MPI_COMM_WORLD;
  if (comm_size(comm) < 2) GTEST_SKIP() << "needs a rank with rows and one without";
  // With 64-bit indices the block below is a real 800-GB request, which the
  // sanitizers' allocator refuses by stopping the program; with 32-bit indices PETSc
  // refuses it as a size overflow first.
  if (sizeof(PetscInt) > 4) GTEST_SKIP() << "needs 32-bit PETSc indices";
  // Rank 0 owns no rows, so only the other ranks' part of a wide block is too large
  // for PETSc (100 rows x 2^30 columns). Every rank must leave with the failure:
  // a rank that carried on into the next collective would wait there for ever.
  const PetscInt mine = comm_rank(comm) == 0 ? 0 : 100;
  Mat a = nullptr;
  ASSERT_EQ(MatCreateAIJ(comm, mine, mine, PETSC_DETERMINE, PETSC_DETERMINE, 1, nullptr, 0, nullptr, &a), 0);
  ASSERT_EQ(MatAssemblyBegin(a, MAT_FINAL_ASSEMBLY), 0);
  ASSERT_EQ(MatAssemblyEnd(a, MAT_FINAL_ASSEMBLY), 0);
  auto b = Block::like(a, 1 << 30);
  EXPECT_FALSE(b.is_ok()) << "rank " << comm_rank(comm);
  MatDestroy(&a);
}
