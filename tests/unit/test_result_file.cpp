// The results file: written collectively, read back on any row ranges and rank counts.
#include <gtest/gtest.h>
#include <hdf5.h>
#include <petscmat.h>

#include <cmath>
#include <filesystem>

#include "io/generators.hpp"
#include "io/matrix_writer.hpp"
#include "io/partition.hpp"
#include "io/result_file.hpp"
#include "laplace_result.hpp"
#include "lodestone/matrix.hpp"
#include "lodestone/result.hpp"
#include "support/collective.hpp"
#include "test_util.hpp"

using namespace lodestone;

namespace {

constexpr std::int64_t kN = 23;
constexpr std::int64_t kK = 4;

// Writes the Laplacian and returns the loaded matrix.
Matrix laplace(MPI_Comm comm, const std::string& path) {
  auto rows = io::generate_laplace1d(comm, kN);
  EXPECT_TRUE(io::write_csr_file(comm, path, "/matrix", kN, true, rows).is_ok());
  auto m = Matrix::load(comm, path);
  EXPECT_TRUE(m.is_ok()) << m.status().message();
  return std::move(m).value();
}

void expect_same_facts(const SolveResult& a, const SolveResult& b) {
  EXPECT_EQ(a.eigenvalues, b.eigenvalues);
  EXPECT_EQ(a.eigenvalues_imag, b.eigenvalues_imag);
  EXPECT_EQ(a.residual_norms, b.residual_norms);
  EXPECT_EQ(a.rows, b.rows);
  EXPECT_EQ(a.converged, b.converged);
  EXPECT_EQ(a.method, b.method);
  EXPECT_EQ(a.selection, b.selection);
  EXPECT_EQ(a.tolerance, b.tolerance);
  EXPECT_EQ(a.norm_estimate, b.norm_estimate);
  EXPECT_EQ(a.matvecs, b.matvecs);
  EXPECT_EQ(a.iterations, b.iterations);
  EXPECT_EQ(a.ranks, b.ranks);
  EXPECT_EQ(a.matrix_fingerprint, b.matrix_fingerprint);
  EXPECT_EQ(a.elapsed_seconds, b.elapsed_seconds);
  ASSERT_EQ(a.history.size(), b.history.size());
  for (std::size_t h = 0; h < a.history.size(); ++h) {
    const auto &x = a.history[h], &y = b.history[h];
    EXPECT_EQ(x.iteration, y.iteration);
    EXPECT_EQ(x.matvecs, y.matvecs);
    EXPECT_EQ(x.seconds, y.seconds);
    EXPECT_EQ(x.converged, y.converged);
    ASSERT_EQ(x.estimates.size(), y.estimates.size());
    for (std::size_t p = 0; p < x.estimates.size(); ++p) {
      // NaN marks locked pairs and must survive the round trip.
      EXPECT_EQ(std::isnan(x.estimates[p]), std::isnan(y.estimates[p]));
      EXPECT_EQ(std::isnan(x.residuals[p]), std::isnan(y.residuals[p]));
      if (!std::isnan(x.residuals[p])) {
        EXPECT_EQ(x.residuals[p], y.residuals[p]);
      }
      if (!std::isnan(x.estimates[p])) {
        EXPECT_EQ(x.estimates[p], y.estimates[p]);
      }
    }
  }
}

// Checks this rank's rows of a read result against the closed form, entry by entry.
void expect_closed_form_rows(const SolveResult& r) {
  ASSERT_EQ(static_cast<std::int64_t>(r.vectors.size()), r.local_rows() * kK);
  for (std::int64_t p = 0; p < kK; ++p)
    for (std::int64_t i = 0; i < r.local_rows(); ++i)
      EXPECT_EQ(r.vectors[static_cast<std::size_t>(p * r.local_rows() + i)],
                test::laplace1d_vector(kN, kN - p, r.row_begin + i))
          << "pair " << p << " row " << r.row_begin + i;
}

}  // namespace

TEST(ResultFile, ClosedFormPairsAreEigenpairsOfTheGeneratedMatrix) {
  // Guards the fixture itself: A v = lambda v for the closed-form pairs, with PETSc's product.
  MPI_Comm comm = MPI_COMM_WORLD;
  Matrix a = laplace(comm, test::temp_path(comm, "lap1d.h5"));
  const auto& info = a.info();
  auto r = test::laplace1d_result(comm, kN, kK, info.row_begin, info.row_end, info.fingerprint);
  Vec x, y;
  MatCreateVecs(a.petsc(), &x, &y);
  for (std::int64_t p = 0; p < kK; ++p) {
    PetscScalar* xv = nullptr;
    VecGetArray(x, &xv);
    for (std::int64_t i = 0; i < r.local_rows(); ++i) xv[i] = r.vectors[static_cast<std::size_t>(p * r.local_rows() + i)];
    VecRestoreArray(x, &xv);
    MatMult(a.petsc(), x, y);
    VecAXPY(y, -r.eigenvalues[static_cast<std::size_t>(p)], x);
    PetscReal res = 0, norm = 0;
    VecNorm(y, NORM_2, &res);
    VecNorm(x, NORM_2, &norm);
    EXPECT_LT(res, 1e-13);
    EXPECT_NEAR(norm, 1.0, 1e-14);
  }
  VecDestroy(&x);
  VecDestroy(&y);
}

TEST(ResultFile, RoundTripOnTheMatrixRows) {
  MPI_Comm comm = MPI_COMM_WORLD;
  Matrix a = laplace(comm, test::temp_path(comm, "lap1d.h5"));
  const auto& info = a.info();
  auto written = test::laplace1d_result(comm, kN, kK, info.row_begin, info.row_end, info.fingerprint);
  ASSERT_GT(written.history.size(), 2u);
  std::string path = test::temp_path(comm, "result.h5");
  Status s = write_result(comm, path, written);
  ASSERT_TRUE(s.is_ok()) << s.message();
  EXPECT_TRUE(io::is_result_file(comm, path));
  auto read = read_result(comm, path, info.row_begin, info.row_end);
  ASSERT_TRUE(read.is_ok()) << read.status().message();
  expect_same_facts(written, *read);
  EXPECT_EQ(read->vectors, written.vectors);
  expect_closed_form_rows(*read);
}

TEST(ResultFile, WrittenByOneRankReadByAll) {
  // Rank 0 writes alone (a one-rank job); every rank then reads its own even
  // slice, and separately one rank reads every row while the others read none.
  MPI_Comm comm = MPI_COMM_WORLD;
  const int rank = comm_rank(comm), size = comm_size(comm);
  std::string path = test::temp_path(comm, "result-one-rank.h5");
  SolveResult written;
  if (rank == 0) {
    written = test::laplace1d_result(MPI_COMM_SELF, kN, kK, 0, kN, 0x0123456789abcdefULL);
    Status s = write_result(MPI_COMM_SELF, path, written);
    EXPECT_TRUE(s.is_ok()) << s.message();
  }
  MPI_Barrier(comm);
  written = test::laplace1d_result(MPI_COMM_SELF, kN, kK, 0, 0, 0x0123456789abcdefULL);
  written.ranks = 1;

  RowRange mine = even_split(kN, rank, size);
  auto read = read_result(comm, path, mine.begin, mine.end);
  ASSERT_TRUE(read.is_ok()) << read.status().message();
  expect_same_facts(written, *read);
  expect_closed_form_rows(*read);

  const int last = size - 1;
  auto all = read_result(comm, path, rank == last ? 0 : 0, rank == last ? kN : 0);
  ASSERT_TRUE(all.is_ok()) << all.status().message();
  EXPECT_EQ(all->local_rows(), rank == last ? kN : 0);
  expect_closed_form_rows(*all);
}

TEST(ResultFile, ComplexPairAndPartialResultRoundTrip) {
  // Non-zero imaginary parts, fewer converged than returned, and an empty history.
  MPI_Comm comm = MPI_COMM_WORLD;
  RowRange mine = even_split(kN, comm_rank(comm), comm_size(comm));
  auto r = test::laplace1d_result(comm, kN, kK, mine.begin, mine.end, 42);
  r.eigenvalues_imag = {0.0, 0.5, -0.5, 0.0};
  r.eigenvalues[2] = r.eigenvalues[1];
  r.converged = 2;
  r.history.clear();
  std::string path = test::temp_path(comm, "result-complex.h5");
  Status s = write_result(comm, path, r);
  ASSERT_TRUE(s.is_ok()) << s.message();
  auto read = read_result(comm, path, mine.begin, mine.end);
  ASSERT_TRUE(read.is_ok()) << read.status().message();
  expect_same_facts(r, *read);
  EXPECT_EQ(read->vectors, r.vectors);
}

TEST(ResultFile, EmptyImaginaryPartsAreWrittenAsZeros) {
  MPI_Comm comm = MPI_COMM_WORLD;
  RowRange mine = even_split(kN, comm_rank(comm), comm_size(comm));
  auto r = test::laplace1d_result(comm, kN, kK, mine.begin, mine.end, 7);
  r.eigenvalues_imag.clear();
  std::string path = test::temp_path(comm, "result-noimag.h5");
  ASSERT_TRUE(write_result(comm, path, r).is_ok());
  auto read = read_result(comm, path, mine.begin, mine.end);
  ASSERT_TRUE(read.is_ok()) << read.status().message();
  EXPECT_EQ(read->eigenvalues_imag, std::vector<double>(kK, 0.0));
}

TEST(ResultFile, RefusesToOverwriteAnInput) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string matrix = test::temp_path(comm, "lap1d-input.h5");
  Matrix a = laplace(comm, matrix);
  auto r = test::laplace1d_result(comm, kN, kK, a.info().row_begin, a.info().row_end, a.info().fingerprint);
  Status s = write_result(comm, matrix, r, {matrix});
  ASSERT_FALSE(s.is_ok());
  EXPECT_NE(s.message().find("overwrite an input"), std::string::npos) << s.message();
  // The input is untouched: it still loads as the same matrix.
  auto again = Matrix::load(comm, matrix);
  ASSERT_TRUE(again.is_ok()) << again.status().message();
  EXPECT_EQ(again->info().fingerprint, a.info().fingerprint);
}

TEST(ResultFile, RejectsInconsistentResultToWrite) {
  MPI_Comm comm = MPI_COMM_WORLD;
  RowRange mine = even_split(kN, comm_rank(comm), comm_size(comm));
  std::string path = test::temp_path(comm, "result-bad.h5");
  auto r = test::laplace1d_result(comm, kN, kK, mine.begin, mine.end, 1);
  if (comm_rank(comm) == comm_size(comm) - 1) r.vectors.pop_back();  // one rank is short of an entry
  Status s = write_result(comm, path, r);
  ASSERT_FALSE(s.is_ok());  // every rank gets the same failure
  EXPECT_NE(s.message().find("vector entries"), std::string::npos) << s.message();
  EXPECT_FALSE(std::filesystem::exists(path));

  auto gap = test::laplace1d_result(comm, kN, kK, mine.begin, mine.end, 1);
  gap.rows = kN + 1;  // rows no rank holds
  s = write_result(comm, path, gap);
  ASSERT_FALSE(s.is_ok());
  EXPECT_FALSE(std::filesystem::exists(path));
}

TEST(ResultFile, ReadErrorsAreClear) {
  MPI_Comm comm = MPI_COMM_WORLD;
  auto missing = read_result(comm, test::temp_path(comm, "nothing-here.h5"), 0, 0);
  ASSERT_FALSE(missing.is_ok());
  EXPECT_NE(missing.status().message().find("no such file"), std::string::npos) << missing.status().message();

  std::string matrix = test::temp_path(comm, "lap1d-notresult.h5");
  Matrix a = laplace(comm, matrix);
  EXPECT_FALSE(io::is_result_file(comm, matrix));
  auto wrong = read_result(comm, matrix, 0, 0);
  ASSERT_FALSE(wrong.is_ok());
  EXPECT_NE(wrong.status().message().find("not a Lodestone results file"), std::string::npos)
      << wrong.status().message();

  std::string path = test::temp_path(comm, "result-range.h5");
  auto r = test::laplace1d_result(comm, kN, kK, a.info().row_begin, a.info().row_end, a.info().fingerprint);
  ASSERT_TRUE(write_result(comm, path, r).is_ok());
  // Only the last rank asks for rows past the end; all ranks get the same answer.
  const bool last = comm_rank(comm) == comm_size(comm) - 1;
  auto beyond = read_result(comm, path, last ? kN - 1 : 0, last ? kN + 5 : 0);
  ASSERT_FALSE(beyond.is_ok());
  EXPECT_NE(beyond.status().message().find("rows"), std::string::npos) << beyond.status().message();
}

TEST(ResultFile, NoPairsAtAll) {
  // A run that returns nothing (K = 0) still writes a well-formed file.
  MPI_Comm comm = MPI_COMM_WORLD;
  RowRange mine = even_split(kN, comm_rank(comm), comm_size(comm));
  SolveResult r;
  r.rows = kN;
  r.row_begin = mine.begin;
  r.row_end = mine.end;
  r.method = "power";
  r.selection = "magnitude";
  r.history.resize(2);
  r.history[1].iteration = 1;
  std::string path = test::temp_path(comm, "result-empty.h5");
  Status s = write_result(comm, path, r);
  ASSERT_TRUE(s.is_ok()) << s.message();
  auto read = read_result(comm, path, mine.begin, mine.end);
  ASSERT_TRUE(read.is_ok()) << read.status().message();
  EXPECT_EQ(read->pairs(), 0);
  EXPECT_TRUE(read->vectors.empty());
  ASSERT_EQ(read->history.size(), 2u);
  EXPECT_EQ(read->history[1].iteration, 1);
  EXPECT_EQ(read->ranks, comm_size(comm));  // 0 in the SolveResult means "the writing communicator's size"
}

TEST(ResultFile, EigenvectorsMoveInPieces) {
  // Pieces of 9 values (2 rows of 4 pairs): many collective transfers per rank,
  // with ranks holding different numbers of pieces. Written and read in pieces
  // of different sizes, the vectors must come back exactly.
  MPI_Comm comm = MPI_COMM_WORLD;
  const int rank = comm_rank(comm), size = comm_size(comm);
  // Uneven blocks: the last rank holds most rows.
  const std::int64_t per = kN / (2 * size);
  const std::int64_t begin = rank * per, end = rank == size - 1 ? kN : (rank + 1) * per;
  auto r = test::laplace1d_result(comm, kN, kK, begin, end, 99);
  std::string path = test::temp_path(comm, "result-pieces.h5");
  Status s = io::write_result_file(comm, path, r, {}, 9);
  ASSERT_TRUE(s.is_ok()) << s.message();
  RowRange mine = even_split(kN, rank, size);
  auto read = io::read_result_file(comm, path, mine.begin, mine.end, 5);
  ASSERT_TRUE(read.is_ok()) << read.status().message();
  expect_closed_form_rows(*read);
}

TEST(ResultFile, RankZeroFactsAreWritten) {
  // A fact measured on each rank may differ between ranks; the file holds rank 0's.
  MPI_Comm comm = MPI_COMM_WORLD;
  RowRange mine = even_split(kN, comm_rank(comm), comm_size(comm));
  auto r = test::laplace1d_result(comm, kN, kK, mine.begin, mine.end, 5);
  r.elapsed_seconds = 1.5 + comm_rank(comm);
  if (comm_rank(comm) != 0) r.method = "different";
  std::string path = test::temp_path(comm, "result-facts.h5");
  Status s = write_result(comm, path, r);
  ASSERT_TRUE(s.is_ok()) << s.message();
  auto read = read_result(comm, path, mine.begin, mine.end);
  ASSERT_TRUE(read.is_ok()) << read.status().message();
  EXPECT_EQ(read->elapsed_seconds, 1.5);
  EXPECT_EQ(read->method, "block");
}

namespace {

// Rank 0 swaps datasets of a written results file for ones that declare the
// given shapes but store nothing (a file of a few kilobytes claiming terabytes).
void declare_shapes(MPI_Comm comm, const std::string& path,
                    const std::vector<std::pair<std::string, std::vector<hsize_t>>>& shapes) {
  if (comm_rank(comm) == 0) {
    hid_t f = H5Fopen(path.c_str(), H5F_ACC_RDWR, H5P_DEFAULT);
    ASSERT_GE(f, 0);
    for (const auto& [name, dims] : shapes) {
      ASSERT_GE(H5Ldelete(f, name.c_str(), H5P_DEFAULT), 0) << name;
      hid_t space = H5Screate_simple(static_cast<int>(dims.size()), dims.data(), nullptr);
      hid_t dcpl = H5Pcreate(H5P_DATASET_CREATE);
      std::vector<hsize_t> chunk(dims.size(), 1);
      H5Pset_chunk(dcpl, static_cast<int>(chunk.size()), chunk.data());
      const bool ints = name.find("iteration") != std::string::npos || name.find("matvecs") != std::string::npos ||
                        name.find("converged") != std::string::npos;
      hid_t ds = H5Dcreate2(f, name.c_str(), ints ? H5T_STD_I64LE : H5T_IEEE_F64LE, space, H5P_DEFAULT, dcpl,
                            H5P_DEFAULT);
      ASSERT_GE(ds, 0) << name;
      H5Dclose(ds);
      H5Pclose(dcpl);
      H5Sclose(space);
    }
    H5Fclose(f);
  }
  MPI_Barrier(comm);
}

// Both readers refuse the file with the same message on every rank.
void expect_refused(MPI_Comm comm, const std::string& path, const std::string& part) {
  auto header = io::read_result_header(comm, path);
  ASSERT_FALSE(header.is_ok());
  EXPECT_NE(header.status().message().find(part), std::string::npos) << header.status().message();
  EXPECT_EQ(header.status().exit_code(), 1);
  RowRange mine = even_split(kN, comm_rank(comm), comm_size(comm));
  auto full = read_result(comm, path, mine.begin, mine.end);
  ASSERT_FALSE(full.is_ok());
  EXPECT_EQ(full.status().message(), header.status().message());
  EXPECT_EQ(min_all(comm, static_cast<std::int64_t>(full.status().message().size())),
            max_all(comm, static_cast<std::int64_t>(full.status().message().size())));
}

}  // namespace

TEST(ResultFile, DeclaredSizesAreCheckedBeforeAnythingIsAllocated) {
  MPI_Comm comm = MPI_COMM_WORLD;
  RowRange mine = even_split(kN, comm_rank(comm), comm_size(comm));
  const hsize_t huge = hsize_t{1} << 40;
  auto fresh = [&](const std::string& name) {
    std::string path = test::temp_path(comm, name);
    auto r = test::laplace1d_result(comm, kN, kK, mine.begin, mine.end, 7);
    EXPECT_TRUE(write_result(comm, path, r).is_ok());
    return path;
  };

  // 2^40 pairs (every per-pair array says so) for 23 rows.
  std::string path = fresh("result-huge-pairs.h5");
  declare_shapes(comm, path,
                 {{"/eigenvalues", {huge}}, {"/eigenvalues_imag", {huge}}, {"/residual_norms", {huge}},
                  {"/eigenvectors", {kN, huge}}, {"/history/estimates", {1, huge}}, {"/history/residuals", {1, huge}}});
  expect_refused(comm, path, "'eigenvalues' has 1099511627776 entries but 'eigenvectors' has 23 rows");

  // 2^40 rows and pairs: one pair per row, but no matrix is that large.
  path = fresh("result-huge-both.h5");
  declare_shapes(comm, path,
                 {{"/eigenvalues", {huge}}, {"/eigenvalues_imag", {huge}}, {"/residual_norms", {huge}},
                  {"/eigenvectors", {huge, huge}}, {"/history/estimates", {1, huge}}, {"/history/residuals", {1, huge}}});
  expect_refused(comm, path, "'eigenvectors' is 1099511627776 x 1099511627776, too large");

  // 2^40 history records.
  path = fresh("result-huge-history.h5");
  declare_shapes(comm, path,
                 {{"/history/iteration", {huge}}, {"/history/matvecs", {huge}}, {"/history/seconds", {huge}},
                  {"/history/converged", {huge}}, {"/history/estimates", {huge, kK}},
                  {"/history/residuals", {huge, kK}}});
  expect_refused(comm, path, "'/history' has 1099511627776 records; a results file holds at most 4096");
}
