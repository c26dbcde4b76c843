// Lodestone's own sparse x block product (algebra/sparse_product.hpp): the plain
// product, the fused shift-and-update, by columns and interlaced, against PETSc's
// MatMult column by column, at every rank count and for block widths that take one,
// two and three passes over the matrix (and the leftover columns of each vector width).
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>
#include <vector>

#include "algebra/block.hpp"
#include "algebra/operator.hpp"
#include "algebra/sparse_product.hpp"
#include "io/generators.hpp"
#include "test_solver_matrices.hpp"

using namespace lodestone;
using algebra::Block;

namespace {

// Non-symmetric, 41 rows: each row holds its diagonal and a few hashed columns
// anywhere, so every rank has ghost columns from every other rank (and a few rows
// have none at all).
Result<Matrix> scattered_matrix() {
  const std::int64_t n = 41;
  return test::build_file(MPI_COMM_WORLD, n, false, false, [&](std::int64_t i, test::Entries& e) {
    const auto u = static_cast<std::uint64_t>(i);
    e.push_back({i, 1.5 + io::hashed_uniform(20, u, 0)});
    if (i % 7 == 3) return;
    for (std::uint64_t k = 1; k < 5; ++k) {
      const auto j = static_cast<std::int64_t>(io::hashed_uniform(21, u, k) * static_cast<double>(n)) % n;
      if (j != i) e.push_back({j, io::hashed_uniform(22, u, k) - 0.5});
    }
  });
}

// Column j of A x, by MatMult.
std::vector<double> reference_column(Mat a, const Block& x, int j) {
  Vec u = nullptr, v = nullptr;
  MatCreateVecs(a, &u, &v);
  PetscScalar* pu = nullptr;
  VecGetArray(u, &pu);
  for (PetscInt i = 0; i < x.local_rows(); ++i) pu[i] = x.column(j)[i];
  VecRestoreArray(u, &pu);
  MatMult(a, u, v);
  const PetscScalar* pv = nullptr;
  VecGetArrayRead(v, &pv);
  std::vector<double> out(pv, pv + x.local_rows());
  VecRestoreArrayRead(v, &pv);
  VecDestroy(&u);
  VecDestroy(&v);
  return out;
}

}  // namespace

TEST(SparseProduct, TakesAijMatricesOnly) {
  auto sparse = scattered_matrix();
  ASSERT_TRUE(sparse.is_ok()) << sparse.status().message();
  EXPECT_TRUE(algebra::SparseProduct::handles(sparse->petsc()));
  algebra::Operator op(sparse->petsc());
  EXPECT_TRUE(op.fuses());
  auto dense = test::build_file(MPI_COMM_WORLD, 9, true, true, [](std::int64_t i, test::Entries& e) {
    for (std::int64_t j = 0; j < 9; ++j) e.push_back({j, i == j ? 2.0 : 0.1});
  });
  ASSERT_TRUE(dense.is_ok()) << dense.status().message();
  EXPECT_FALSE(algebra::SparseProduct::handles(dense->petsc()));
  algebra::Operator dense_op(dense->petsc());
  EXPECT_FALSE(dense_op.fuses());
}

TEST(SparseProduct, MatchesMatMultForEveryWidthAndLayout) {
  auto m = scattered_matrix();
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  Mat a = m->petsc();
  for (int cols : {1, 2, 3, 5, 6, 7, 8, 11, 12, 13, 25}) {
    SCOPED_TRACE(cols);
    algebra::Operator op(a);
    auto x = Block::like(a, cols), y = Block::like(a, cols), y0 = Block::like(a, cols);
    ASSERT_TRUE(x.is_ok() && y.is_ok() && y0.is_ok());
    algebra::fill_random(*x, 31, 0);
    algebra::fill_random(*y0, 32, 0);
    const PetscInt rows = x->local_rows();
    std::vector<std::vector<double>> ax;
    for (int j = 0; j < cols; ++j) ax.push_back(reference_column(a, *x, j));
    const double alpha = 0.7, shift = 0.3;
    for (double beta : {0.0, -0.4}) {
      SCOPED_TRACE(beta);
      // By columns.
      algebra::copy_columns(*y0, 0, *y, 0, cols);
      ASSERT_TRUE(op.apply_shifted(*x, *y, alpha, shift, beta).is_ok());
      // Interlaced.
      std::vector<double> xr(static_cast<std::size_t>(rows * cols)), yr(xr.size());
      algebra::to_rows(*x, xr.data());
      algebra::to_rows(*y0, yr.data());
      ASSERT_TRUE(op.apply_shifted_rows(cols, xr.data(), yr.data(), alpha, shift, beta).is_ok());
      for (int j = 0; j < cols; ++j) {
        for (PetscInt i = 0; i < rows; ++i) {
          const double want = alpha * (ax[j][i] - shift * x->column(j)[i]) + beta * y0->column(j)[i];
          EXPECT_NEAR(y->column(j)[i], want, 1e-13 * (1.0 + std::fabs(want))) << "row " << i << " column " << j;
          EXPECT_NEAR(yr[static_cast<std::size_t>(i * cols + j)], want, 1e-13 * (1.0 + std::fabs(want)))
              << "interlaced, row " << i << " column " << j;
        }
      }
    }
    // The plain product (one column goes through MatMult on the block's storage, or through
    // this kernel when the pattern is scattered).
    ASSERT_TRUE(op.apply(*x, *y).is_ok());
    for (int j = 0; j < cols; ++j)
      for (PetscInt i = 0; i < rows; ++i) EXPECT_NEAR(y->column(j)[i], ax[j][i], 1e-13 * (1.0 + std::fabs(ax[j][i])));
    EXPECT_EQ(op.matvecs(), 5 * cols);
  }
}

// The pattern test that picks the kernel for one- and two-column products: a band
// (each row continues the columns of the row before) is regular, a matrix whose
// entries are hashed anywhere in 3000 columns is scattered; every rank gets the same
// answer. On the scattered one, blocks of 1, 2, 3 and 5 columns (two columns per pass,
// prefetched; one column in this kernel instead of MatMult), plain and fused, still
// equal MatMult.
TEST(SparseProduct, TellsScatteredPatternsFromBands) {
  const std::int64_t n = 3000;
  auto band = test::build_file(MPI_COMM_WORLD, n, true, false, [&](std::int64_t i, test::Entries& e) {
    for (std::int64_t j = std::max<std::int64_t>(0, i - 2); j <= std::min(n - 1, i + 2); ++j)
      e.push_back({j, i == j ? 4.0 : -1.0});
  });
  ASSERT_TRUE(band.is_ok()) << band.status().message();
  algebra::SparseProduct band_product;
  auto regular = band_product.scattered(band->petsc());
  ASSERT_TRUE(regular.is_ok());
  EXPECT_FALSE(*regular);

  auto wide = test::build_file(MPI_COMM_WORLD, n, false, false, [&](std::int64_t i, test::Entries& e) {
    const auto u = static_cast<std::uint64_t>(i);
    e.push_back({i, 2.0 + io::hashed_uniform(23, u, 0)});
    for (std::uint64_t k = 1; k < 6; ++k) {
      const auto j = static_cast<std::int64_t>(io::hashed_uniform(24, u, k) * static_cast<double>(n)) % n;
      if (j != i) e.push_back({j, io::hashed_uniform(25, u, k) - 0.5});
    }
  });
  ASSERT_TRUE(wide.is_ok()) << wide.status().message();
  Mat a = wide->petsc();
  algebra::SparseProduct wide_product;
  auto scattered = wide_product.scattered(a);
  ASSERT_TRUE(scattered.is_ok());
  EXPECT_TRUE(*scattered);

  for (int cols : {1, 2, 3, 5}) {
    SCOPED_TRACE(cols);
    algebra::Operator op(a);
    auto x = Block::like(a, cols), y = Block::like(a, cols), z = Block::like(a, cols);
    ASSERT_TRUE(x.is_ok() && y.is_ok() && z.is_ok());
    algebra::fill_random(*x, 34, 0);
    algebra::fill_random(*z, 35, 0);
    std::vector<std::vector<double>> z0;
    for (int j = 0; j < cols; ++j) z0.emplace_back(z->column(j), z->column(j) + z->local_rows());
    ASSERT_TRUE(op.apply(*x, *y).is_ok());
    ASSERT_TRUE(op.apply_shifted(*x, *z, 0.7, 0.3, -0.4).is_ok());
    for (int j = 0; j < cols; ++j) {
      const auto want = reference_column(a, *x, j);
      for (PetscInt i = 0; i < x->local_rows(); ++i) {
        EXPECT_NEAR(y->column(j)[i], want[i], 1e-13 * (1.0 + std::fabs(want[i]))) << "row " << i << " column " << j;
        const double fused = 0.7 * (want[i] - 0.3 * x->column(j)[i]) - 0.4 * z0[j][i];
        EXPECT_NEAR(z->column(j)[i], fused, 1e-13 * (1.0 + std::fabs(fused))) << "fused, row " << i << " column " << j;
      }
    }
  }
}

// to_rows and from_rows are each other's inverse, and interlace row by row.
TEST(SparseProduct, InterlacingRoundTrips) {
  auto m = scattered_matrix();
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  auto x = Block::like(m->petsc(), 3), back = Block::like(m->petsc(), 3);
  algebra::fill_random(*x, 33, 0);
  const PetscInt rows = x->local_rows();
  std::vector<double> r(static_cast<std::size_t>(rows * 3));
  algebra::to_rows(*x, r.data());
  for (PetscInt i = 0; i < rows; ++i)
    for (int j = 0; j < 3; ++j) EXPECT_EQ(r[static_cast<std::size_t>(i * 3 + j)], x->column(j)[i]);
  algebra::from_rows(r.data(), *back);
  for (int j = 0; j < 3; ++j)
    for (PetscInt i = 0; i < rows; ++i) EXPECT_EQ(back->column(j)[i], x->column(j)[i]);
}

// Interlaced products on more than one rank multiply the rows that need no ghost values
// while those values travel, then the rest. On a band of half-width 3 split into row
// blocks, each rank's rows with ghost entries are its first and last three (a middle rank
// has both runs): the result still equals MatMult, for one and for two passes over the
// matrix, and again on a second product with the same object (the runs found once). The
// scattered matrix, whose rows nearly all have ghost entries, keeps the plain order.
TEST(SparseProduct, InterlacedOverlapsTheExchangeOnBands) {
  int ranks = 1;
  MPI_Comm_size(MPI_COMM_WORLD, &ranks);
  const std::int64_t n = 600;
  auto band = test::build_file(MPI_COMM_WORLD, n, false, false, [&](std::int64_t i, test::Entries& e) {
    const auto u = static_cast<std::uint64_t>(i);
    for (std::int64_t j = std::max<std::int64_t>(0, i - 3); j <= std::min(n - 1, i + 3); ++j)
      e.push_back({j, i == j ? 4.0 : io::hashed_uniform(26, u, static_cast<std::uint64_t>(j - i + 3)) - 0.5});
  });
  ASSERT_TRUE(band.is_ok()) << band.status().message();
  Mat a = band->petsc();
  for (int cols : {5, 12, 17}) {
    SCOPED_TRACE(cols);
    algebra::SparseProduct product;
    auto x = Block::like(a, cols), y0 = Block::like(a, cols);
    ASSERT_TRUE(x.is_ok() && y0.is_ok());
    algebra::fill_random(*x, 36, 0);
    algebra::fill_random(*y0, 37, 0);
    const PetscInt rows = x->local_rows();
    std::vector<double> xr(static_cast<std::size_t>(rows * cols)), yr(xr.size());
    algebra::to_rows(*x, xr.data());
    std::vector<std::vector<double>> ax;
    for (int j = 0; j < cols; ++j) ax.push_back(reference_column(a, *x, j));
    for (int round = 0; round < 2; ++round) {
      SCOPED_TRACE(round);
      algebra::to_rows(*y0, yr.data());
      ASSERT_TRUE(product.apply_rows(a, cols, xr.data(), yr.data(), 0.7, 0.3, -0.4).is_ok());
      EXPECT_EQ(product.overlapped(), ranks > 1);
      for (int j = 0; j < cols; ++j) {
        for (PetscInt i = 0; i < rows; ++i) {
          const double want = 0.7 * (ax[j][i] - 0.3 * x->column(j)[i]) - 0.4 * y0->column(j)[i];
          EXPECT_NEAR(yr[static_cast<std::size_t>(i * cols + j)], want, 1e-13 * (1.0 + std::fabs(want)))
              << "row " << i << " column " << j;
        }
      }
    }
  }
  auto scattered = scattered_matrix();
  ASSERT_TRUE(scattered.is_ok()) << scattered.status().message();
  algebra::SparseProduct product;
  std::vector<double> xr(static_cast<std::size_t>(41 * 4), 1.0), yr(xr.size());
  ASSERT_TRUE(product.apply_rows(scattered->petsc(), 4, xr.data(), yr.data(), 1.0, 0.0, 0.0).is_ok());
  EXPECT_FALSE(product.overlapped());
}
