// Reading matrices back from the file layout on any rank count.
#include <fmt/format.h>
#include <gtest/gtest.h>
#include <petscmat.h>

#include <cmath>
#include <filesystem>
#include <vector>

#include "io/generators.hpp"
#include "io/partition.hpp"
#include "io/matrix_reader.hpp"
#include "io/matrix_writer.hpp"
#include "lodestone/matrix.hpp"
#include "support/collective.hpp"
#include "test_util.hpp"

using namespace lodestone;

TEST(MatrixRead, Laplace2dRoundTrip) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t nx = 7, ny = 5, n = nx * ny;
  std::string path = test::temp_path(comm, "lap2d.h5");
  auto rows = io::generate_laplace2d(comm, nx, ny);
  ASSERT_TRUE(io::write_csr_file(comm, path, "/matrix", n, true, rows).is_ok());
  auto m = Matrix::load(comm, path);
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  // 5-point stencil on an nx x ny grid: 5*nx*ny - 2*nx - 2*ny nonzeros
  // (closed form: every interior link counted from both ends; common practice).
  EXPECT_EQ(m->info().nnz, 5 * nx * ny - 2 * nx - 2 * ny);
  EXPECT_EQ(m->info().rows, n);
  EXPECT_TRUE(m->info().symmetric);
  // A times the all-ones vector: 4 minus the number of neighbours of each point.
  Vec x, y;
  MatCreateVecs(m->petsc(), &x, &y);
  VecSet(x, 1.0);
  MatMult(m->petsc(), x, y);
  PetscReal sum = 0;
  VecSum(y, &sum);
  // Sum over the grid of (4 - neighbours) = number of boundary links = 2*nx + 2*ny.
  EXPECT_DOUBLE_EQ(sum, 2.0 * nx + 2.0 * ny);
  VecDestroy(&x);
  VecDestroy(&y);
}

TEST(MatrixRead, PartitionBalancesNonzeros) {
  // Row 0 holds half the nonzeros: a power-law-like first row.
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 400;
  io::CsrRows rows;
  auto r = even_split(n, comm_rank(comm), comm_size(comm));
  rows.row_begin = r.begin;
  for (std::int64_t i = r.begin; i < r.end; ++i) {
    if (i == 0)
      for (std::int64_t c = 0; c < n; ++c) rows.columns.push_back(c), rows.values.push_back(1.0);
    else
      rows.columns.push_back(i), rows.values.push_back(2.0);
    rows.offsets.push_back(static_cast<std::int64_t>(rows.columns.size()));
  }
  std::string path = test::temp_path(comm, "heavy.h5");
  ASSERT_TRUE(io::write_csr_file(comm, path, "/matrix", n, false, rows).is_ok());
  auto m = Matrix::load(comm, path);
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  const std::int64_t mine = m->info().row_end - m->info().row_begin;
  const int p = comm_size(comm);
  if (p > 1 && comm_rank(comm) == 0) {
    // Rank 0 holds the heavy row, so it gets far fewer rows than n/p.
    EXPECT_LT(mine, n / p);
  }
  EXPECT_EQ(sum_all(comm, mine), n);
}

TEST(MatrixRead, DenseMatchesCsrFingerprint) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 12;
  auto csr = io::generate_laplace1d(comm, n);
  std::string a = test::temp_path(comm, "l1.h5"), b = test::temp_path(comm, "l1dense.h5");
  ASSERT_TRUE(io::write_csr_file(comm, a, "/matrix", n, true, csr).is_ok());
  std::vector<double> dense(static_cast<std::size_t>(csr.local_rows() * n), 0.0);
  for (std::int64_t i = 0; i < csr.local_rows(); ++i)
    for (auto k = csr.offsets[i]; k < csr.offsets[i + 1]; ++k)
      dense[static_cast<std::size_t>(i * n + csr.columns[k])] = csr.values[k];
  ASSERT_TRUE(io::write_dense_file(comm, b, "/matrix", n, true, csr.row_begin, csr.local_rows(), dense).is_ok());
  auto ma = Matrix::load(comm, a);
  auto mb = Matrix::load(comm, b);
  ASSERT_TRUE(ma.is_ok()) << ma.status().message();
  ASSERT_TRUE(mb.is_ok()) << mb.status().message();
  EXPECT_EQ(mb->info().layout, Layout::dense);
  EXPECT_EQ(ma->info().fingerprint, mb->info().fingerprint);
  auto wrapped = Matrix::wrap(mb->petsc(), true);
  ASSERT_TRUE(wrapped.is_ok()) << wrapped.status().message();
  EXPECT_EQ(wrapped->info().fingerprint, ma->info().fingerprint);
}

TEST(MatrixRead, SmallChunksGiveTheSameMatrix) {
  MPI_Comm comm = MPI_COMM_WORLD;
  auto rows = io::generate_laplace2d(comm, 9, 4);
  std::string path = test::temp_path(comm, "chunks.h5");
  ASSERT_TRUE(io::write_csr_file(comm, path, "/matrix", 36, true, rows).is_ok());
  LoadOptions small;
  small.chunk_entries = 7;  // forces rows to straddle chunk boundaries
  auto a = Matrix::load(comm, path);
  auto b = Matrix::load(comm, path, small);
  ASSERT_TRUE(a.is_ok() && b.is_ok());
  EXPECT_EQ(a->info().fingerprint, b->info().fingerprint);
  PetscBool eq = PETSC_FALSE;
  MatEqual(a->petsc(), b->petsc(), &eq);
  EXPECT_TRUE(eq);
}

TEST(MatrixRead, OutputNeverOverwritesInput) {
  MPI_Comm comm = MPI_COMM_WORLD;
  auto rows = io::generate_laplace1d(comm, 10);
  std::string path = test::temp_path(comm, "keep.h5");
  ASSERT_TRUE(io::write_csr_file(comm, path, "/matrix", 10, true, rows).is_ok());
  Status s = io::write_csr_file(comm, path, "/matrix", 10, true, rows, {path});
  EXPECT_FALSE(s.is_ok());
  EXPECT_NE(s.message().find("overwrite an input"), std::string::npos);
  EXPECT_TRUE(Matrix::load(comm, path).is_ok());
}

TEST(MatrixRead, AllZeroMatrixWritesAndReads) {
  // No stored entries at all: empty datasets must be written and read without error.
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 5;
  io::CsrRows rows;
  auto r = even_split(n, comm_rank(comm), comm_size(comm));
  rows.row_begin = r.begin;
  for (std::int64_t i = r.begin; i < r.end; ++i) rows.offsets.push_back(0);
  std::string path = test::temp_path(comm, "zero.h5");
  Status s = io::write_csr_file(comm, path, "/matrix", n, true, rows);
  ASSERT_TRUE(s.is_ok()) << s.message();
  auto m = Matrix::load(comm, path);
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  EXPECT_EQ(m->info().nnz, 0);
  EXPECT_EQ(m->info().rows, n);
}

// A dense matrix of uneven row blocks (rank r holds 5 + 3 r rows), symmetric:
// a_ij = 1 / (1 + i + j), or with a_pq raised by `bump` (p and q on the last and
// the first rank). pad > 0: the rows live in the caller's array, pad values apart
// from one column to the next beyond the local rows (a leading dimension of m + pad).
static Mat uneven_dense(MPI_Comm comm, std::int64_t p, std::int64_t q, double bump, PetscInt pad,
                        std::vector<double>& storage) {
  const int rank = comm_rank(comm), size = comm_size(comm);
  const PetscInt mine = 5 + 3 * rank;
  PetscInt n = 0;
  for (int r = 0; r < size; ++r) n += 5 + 3 * r;
  Mat a = nullptr;
  MatCreate(comm, &a);
  MatSetSizes(a, mine, PETSC_DECIDE, n, n);
  MatSetType(a, MATDENSE);
  if (pad > 0) {
    storage.assign(static_cast<std::size_t>((mine + pad) * n), -7.0);  // the padding must never be read
    MatDenseSetLDA(a, mine + pad);
    MatSeqDenseSetPreallocation(a, storage.data());
    MatMPIDenseSetPreallocation(a, storage.data());
  } else {
    MatSetUp(a);
  }
  PetscInt lo = 0, hi = 0;
  MatGetOwnershipRange(a, &lo, &hi);
  for (PetscInt i = lo; i < hi; ++i)
    for (PetscInt j = 0; j < n; ++j) {
      const double v = 1.0 / (1.0 + static_cast<double>(i + j)) + (i == p && j == q ? bump : 0.0);
      MatSetValue(a, i, j, v, INSERT_VALUES);
    }
  MatAssemblyBegin(a, MAT_FINAL_ASSEMBLY);
  MatAssemblyEnd(a, MAT_FINAL_ASSEMBLY);
  return a;
}

TEST(MatrixRead, DenseSymmetryCheckedAcrossRanksInPieces) {
  MPI_Comm comm = MPI_COMM_WORLD;
  PetscInt n = 0;
  for (int r = 0; r < comm_size(comm); ++r) n += 5 + 3 * r;
  const std::int64_t p = n - 2, q = 1;
  std::vector<double> storage;
  // PETSc's own storage and the caller's with a wider leading dimension; whole blocks at
  // once, and pieces of one column, of a few columns and of columns that do not divide the blocks.
  for (PetscInt pad : {0, 3})
    for (std::int64_t piece : {io::kSymmetryPieceValues, std::int64_t{1}, std::int64_t{7}, std::int64_t{40}}) {
      Mat good = uneven_dense(comm, p, q, 0.0, pad, storage);
      PetscInt lda = 0;
      MatDenseGetLDA(good, &lda);
      EXPECT_EQ(lda, 5 + 3 * comm_rank(comm) + pad);
      EXPECT_TRUE(io::check_symmetric(good, 1e-14, "good", piece).is_ok()) << "piece " << piece << " pad " << pad;
      MatDestroy(&good);
      Mat bad = uneven_dense(comm, p, q, 0.25, pad, storage);
      Status s = io::check_symmetric(bad, 1e-12, "bad", piece);
      ASSERT_FALSE(s.is_ok()) << "piece " << piece << " pad " << pad;
      // Rows p and q both differ from their columns; the first is named. max|a| = a_00 = 1.
      EXPECT_NE(s.message().find("row 1 differs from its column by up to 0.25"), std::string::npos) << s.message();
      EXPECT_TRUE(io::check_symmetric(bad, 0.3, "bad, loose", piece).is_ok()) << "piece " << piece << " pad " << pad;
      MatDestroy(&bad);
    }
}

// A caller's matrix with a value that is not a finite number is refused on every rank,
// the entry named, dense (declared symmetric: the symmetry check never sees the NaN) or sparse.
TEST(MatrixRead, WrapRefusesValuesThatAreNotFinite) {
  MPI_Comm comm = MPI_COMM_WORLD;
  PetscInt n = 0;
  for (int r = 0; r < comm_size(comm); ++r) n += 5 + 3 * r;
  std::vector<double> storage;
  Mat dense = uneven_dense(comm, n - 2, 1, std::nan(""), 0, storage);
  auto d = Matrix::wrap(dense, true);
  ASSERT_FALSE(d.is_ok());
  EXPECT_EQ(d.status().message(), fmt::format("the caller's matrix: NaN in row {}, column 1", n - 2));
  MatDestroy(&dense);

  Mat sparse = nullptr;
  MatCreateAIJ(comm, PETSC_DECIDE, PETSC_DECIDE, 6, 6, 2, nullptr, 2, nullptr, &sparse);
  PetscInt lo = 0, hi = 0;
  MatGetOwnershipRange(sparse, &lo, &hi);
  for (PetscInt i = lo; i < hi; ++i) {
    MatSetValue(sparse, i, i, 2.0, INSERT_VALUES);
    if (i == 4) MatSetValue(sparse, i, 3, -HUGE_VAL, INSERT_VALUES);
  }
  MatAssemblyBegin(sparse, MAT_FINAL_ASSEMBLY);
  MatAssemblyEnd(sparse, MAT_FINAL_ASSEMBLY);
  auto s = Matrix::wrap(sparse, false);
  ASSERT_FALSE(s.is_ok());
  EXPECT_EQ(s.status().message(), "the caller's matrix: infinity in row 4, column 3");
  MatDestroy(&sparse);
}
