// Parallel Matrix Market import (io/mm_import.hpp): the entries each rank
// gets, their independence of rank count, chunk and round sizes, and defects
// reported with the right line number on every rank.
#include <gtest/gtest.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include <fmt/format.h>

#include "io/fingerprint.hpp"
#include "io/generators.hpp"
#include "io/mm_import.hpp"
#include "lodestone/matrix.hpp"
#include "support/collective.hpp"
#include "test_util.hpp"

using namespace lodestone;
using Dense = std::vector<std::vector<double>>;

namespace {
std::string write_text(MPI_Comm comm, const std::string& name, const std::string& text) {
  std::string path = test::temp_path(comm, name);
  if (comm_rank(comm) == 0) std::ofstream(path, std::ios::binary) << text;
  MPI_Barrier(comm);
  return path;
}

// Tiny chunks and rounds so lines straddle reads and entries need many exchanges.
io::ImportOptions tiny() {
  io::ImportOptions o;
  o.chunk_bytes = 7;
  o.round_entries = 2;
  return o;
}

// This rank's rows must equal the same rows of `want`, with sorted unique columns.
void expect_rows(const io::CsrRows& rows, const Dense& want) {
  const std::int64_t n = static_cast<std::int64_t>(want.size());
  for (std::int64_t i = 0; i < rows.local_rows(); ++i) {
    const std::int64_t row = rows.row_begin + i;
    std::vector<double> got(static_cast<std::size_t>(n), 0.0);
    for (auto k = rows.offsets[i]; k < rows.offsets[i + 1]; ++k) {
      if (k > rows.offsets[i]) { EXPECT_LT(rows.columns[k - 1], rows.columns[k]) << "row " << row; }
      got[static_cast<std::size_t>(rows.columns[k])] = rows.values[k];
    }
    for (std::int64_t j = 0; j < n; ++j) EXPECT_DOUBLE_EQ(got[j], want[row][j]) << "entry (" << row << ", " << j << ")";
  }
}

std::uint64_t fingerprint(MPI_Comm comm, const io::CsrRows& rows, std::int64_t n) {
  FingerprintAccumulator acc;
  for (std::int64_t i = 0; i < rows.local_rows(); ++i)
    for (auto k = rows.offsets[i]; k < rows.offsets[i + 1]; ++k) acc.add(rows.row_begin + i, rows.columns[k], rows.values[k]);
  return acc.finish(comm, n, n);
}

Result<io::MatrixMarketRows> read_text(MPI_Comm comm, const std::string& name, const std::string& text,
                                       const io::ImportOptions& o = tiny()) {
  return io::read_matrix_market(comm, write_text(comm, name, text), o);
}
}  // namespace

// The example file in the Matrix Market format specification (NIST, "The
// Matrix Market Exchange Formats: Initial Design"), recalled from memory.
const char* kSpecExample =
    "%%MatrixMarket matrix coordinate real general\n"
    "%=================================================================================\n"
    "%\n"
    "% This ASCII file represents a sparse MxN matrix with L\n"
    "% nonzeros in the following Matrix Market format:\n"
    "%\n"
    "% Indices are 1-based, i.e. A(1,1) is the first element.\n"
    "%\n"
    "%=================================================================================\n"
    "  5  5  8\n"
    "    1     1   1.000e+00\n"
    "    2     2   1.050e+01\n"
    "    3     3   1.500e-02\n"
    "    1     4   6.000e+00\n"
    "    4     2   2.505e+02\n"
    "    4     4  -2.800e+02\n"
    "    4     5   3.332e+01\n"
    "    5     5   1.200e+01\n";

TEST(MmImport, SpecificationExample) {
  MPI_Comm comm = MPI_COMM_WORLD;
  for (const auto& o : {tiny(), io::ImportOptions{}}) {
    auto m = read_text(comm, "spec.mtx", kSpecExample, o);
    ASSERT_TRUE(m.is_ok()) << m.status().message();
    EXPECT_EQ(m->n, 5);
    EXPECT_EQ(m->file_entries, 8);
    EXPECT_FALSE(m->symmetric);
    const Dense want = {{1, 0, 0, 6, 0}, {0, 10.5, 0, 0, 0}, {0, 0, 0.015, 0, 0}, {0, 250.5, 0, -280, 33.32},
                        {0, 0, 0, 0, 12}};
    expect_rows(m->rows, want);
    EXPECT_EQ(sum_all(comm, m->rows.offsets.back()), 8);
  }
}

TEST(MmImport, SymmetricKindsExpandToBothTriangles) {
  MPI_Comm comm = MPI_COMM_WORLD;
  auto sym = read_text(comm, "sym.mtx",
                       "%%MatrixMarket matrix coordinate real symmetric\n3 3 4\n1 1 2\n2 1 -1\n% inside\n\n3 2 -1\n3 3 2\n");
  ASSERT_TRUE(sym.is_ok()) << sym.status().message();
  EXPECT_TRUE(sym->symmetric);
  expect_rows(sym->rows, {{2, -1, 0}, {-1, 0, -1}, {0, -1, 2}});

  auto skew = read_text(comm, "skew.mtx", "%%MatrixMarket matrix coordinate integer skew-symmetric\r\n3 3 2\r\n2 1 5\r\n3 1 -7\r\n");
  ASSERT_TRUE(skew.is_ok()) << skew.status().message();
  EXPECT_FALSE(skew->symmetric) << "only `symmetric` sets the symmetric attribute";
  expect_rows(skew->rows, {{0, -5, 7}, {5, 0, 0}, {-7, 0, 0}});

  auto pat = read_text(comm, "pattern.mtx", "%%MatrixMarket matrix coordinate pattern symmetric\n3 3 2\n2 1\n3 3\n");
  ASSERT_TRUE(pat.is_ok()) << pat.status().message();
  expect_rows(pat->rows, {{0, 1, 0}, {1, 0, 0}, {0, 0, 1}});
}

TEST(MmImport, DuplicatesAreSummed) {
  MPI_Comm comm = MPI_COMM_WORLD;
  auto m = read_text(comm, "dup.mtx",
                     "%%MatrixMarket matrix coordinate real general\n2 2 5\n1 2 1.5\n2 2 1\n1 2 2.5\n2 2 -1\n1 1 3\n");
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  expect_rows(m->rows, {{3, 4}, {0, 0}});
  // (2,2) sums to an exact zero and stays stored: the file named that position.
  EXPECT_EQ(sum_all(comm, m->rows.offsets.back()), 3);
}

TEST(MmImport, DuplicatesSumTheSameInAnyOrder) {
  MPI_Comm comm = MPI_COMM_WORLD;
  // 1e16 + 1 rounds back to 1e16 (the doubles there are 2 apart), so the three entries
  // sum to 0 or 1 by the order they are added in. The order must not come from the
  // file, the rank count or the exchange rounds: every order gives the same bits.
  std::vector<std::string> lines = {"1 1 1e16\n", "1 1 1\n", "1 1 -1e16\n"};
  std::vector<int> order = {0, 1, 2};
  std::vector<double> sums;
  do {
    std::string text = "%%MatrixMarket matrix coordinate real general\n1 1 3\n";
    for (int k : order) text += lines[static_cast<std::size_t>(k)];
    for (const auto& o : {tiny(), io::ImportOptions{}}) {
      auto m = read_text(comm, "dup-order.mtx", text, o);
      ASSERT_TRUE(m.is_ok()) << m.status().message();
      double mine = m->rows.local_rows() > 0 ? m->rows.values.at(0) : 0.0, sum = 0;
      MPI_Allreduce(&mine, &sum, 1, MPI_DOUBLE, MPI_SUM, comm);
      sums.push_back(sum);
    }
  } while (std::next_permutation(order.begin(), order.end()));
  for (double v : sums) EXPECT_EQ(v, sums.front());
}

TEST(MmImport, ArrayFormats) {
  MPI_Comm comm = MPI_COMM_WORLD;
  // Column-major: the first column is 1, 2, 3.
  auto gen = read_text(comm, "arr.mtx", "%%MatrixMarket matrix array real general\n% c\n3 3\n1\n2\n3\n4\n0\n6\n7\n8\n9\n");
  ASSERT_TRUE(gen.is_ok()) << gen.status().message();
  expect_rows(gen->rows, {{1, 4, 7}, {2, 0, 8}, {3, 6, 9}});
  EXPECT_EQ(sum_all(comm, gen->rows.offsets.back()), 8) << "exact zeros of an array are not stored";

  auto sym = read_text(comm, "arrsym.mtx", "%%MatrixMarket matrix array real symmetric\n3 3\n1\n2\n3\n4\n5\n6\n");
  ASSERT_TRUE(sym.is_ok()) << sym.status().message();
  EXPECT_TRUE(sym->symmetric);
  expect_rows(sym->rows, {{1, 2, 3}, {2, 4, 5}, {3, 5, 6}});

  auto skew = read_text(comm, "arrskew.mtx", "%%MatrixMarket matrix array integer skew-symmetric\n3 3\n1\n2\n3\n");
  ASSERT_TRUE(skew.is_ok()) << skew.status().message();
  expect_rows(skew->rows, {{0, -1, -2}, {1, 0, -3}, {2, 3, 0}});
}

// A larger file with comments, blank lines and duplicates, from hashed numbers.
std::string random_file(std::int64_t n, std::int64_t entries, const char* symmetry) {
  std::string text = fmt::format("%%MatrixMarket matrix coordinate real {}\n% made by the test\n{} {} {}\n",
                                 symmetry, n, n, entries);
  for (std::int64_t k = 0; k < entries; ++k) {
    auto i = static_cast<std::int64_t>(io::hashed_uniform(9, k, 1) * n), j = static_cast<std::int64_t>(io::hashed_uniform(9, k, 2) * n);
    if (std::string(symmetry) != "general" && j > i) std::swap(i, j);
    text += fmt::format("{} {} {:.17g}\n", i + 1, j + 1, io::hashed_uniform(9, k, 3) - 0.5);
    if (k % 17 == 0) text += "% a comment between entries\n\n";
  }
  return text;
}

TEST(MmImport, SameMatrixOnEveryRankCountChunkAndRound) {
  MPI_Comm world = MPI_COMM_WORLD;
  const int p = comm_size(world), rank = comm_rank(world);
  for (const char* symmetry : {"general", "symmetric"}) {
    std::string path = write_text(world, "random.mtx", random_file(37, 400, symmetry));
    std::vector<std::uint64_t> prints;
    for (int q = 1; q <= p; ++q) {
      MPI_Comm sub;
      MPI_Comm_split(world, rank < q ? 0 : MPI_UNDEFINED, rank, &sub);
      std::uint64_t fp[2] = {0, 0};
      if (sub != MPI_COMM_NULL) {
        io::ImportOptions small = tiny();
        small.chunk_bytes = 13;
        small.round_entries = 5;
        int idx = 0;
        for (const auto& o : {small, io::ImportOptions{}}) {
          auto m = io::read_matrix_market(sub, path, o);
          ASSERT_TRUE(m.is_ok()) << m.status().message();
          fp[idx++] = fingerprint(sub, m->rows, 37);
        }
        MPI_Comm_free(&sub);
      }
      MPI_Bcast(fp, 2, MPI_UINT64_T, 0, world);
      EXPECT_EQ(fp[0], fp[1]) << symmetry << " on " << q << " ranks";
      prints.push_back(fp[0]);
    }
    for (auto f : prints) EXPECT_EQ(f, prints[0]) << symmetry;
  }
}

TEST(MmImport, DefectLineNumbersAreGlobalAndAgreed) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::string head = "%%MatrixMarket matrix coordinate real general\n% comment\n6 6 30\n";
  for (int bad : {1, 2, 15, 29, 30}) {
    std::string text = head;
    for (int k = 1; k <= 30; ++k) {
      text += k == bad ? "7 1 1.0\n" : fmt::format("{} {} {}\n", k % 6 + 1, k % 5 + 1, k);
      if (k % 4 == 0) text += "%\n";
    }
    // Line of data entry `bad`: 3 header lines, plus one comment per 4 entries before it.
    const int line = 3 + bad + (bad - 1) / 4;
    auto m = read_text(comm, "bad.mtx", text);
    ASSERT_FALSE(m.is_ok());
    EXPECT_NE(m.status().message().find(fmt::format(": line {}: row index 7 is out of range 1..6", line)), std::string::npos)
        << m.status().message();
    // Every rank holds the same message.
    std::string first = m.status().message();
    int len = static_cast<int>(first.size());
    MPI_Bcast(&len, 1, MPI_INT, 0, comm);
    first.resize(static_cast<std::size_t>(len));
    MPI_Bcast(first.data(), len, MPI_CHAR, 0, comm);
    EXPECT_EQ(first, m.status().message());
  }
}

// Two defects: the earlier one deep in an early rank's share (reached only in a late
// round of entries), the later one at the start of a later rank's share (reached in
// its first round). The message names the earlier one on every rank count, as one
// rank reading the whole file would.
TEST(MmImport, FirstDefectInTheFileIsNamedOnAnyRankCount) {
  MPI_Comm world = MPI_COMM_WORLD;
  const int p = comm_size(world), rank = comm_rank(world);
  std::string text = "%%MatrixMarket matrix coordinate real general\n6 6 60\n";
  for (int k = 1; k <= 60; ++k)
    text += k == 25 ? "7 1 1.0\n" : k == 33 ? "1 9 1.0\n" : fmt::format("{} {} {}\n", k % 6 + 1, k % 5 + 1, k);
  const std::string path = write_text(world, "two-defects.mtx", text);
  for (int q = 1; q <= p; ++q) {
    MPI_Comm sub;
    MPI_Comm_split(world, rank < q ? 0 : MPI_UNDEFINED, rank, &sub);
    if (sub == MPI_COMM_NULL) continue;
    auto m = io::read_matrix_market(sub, path, tiny());
    ASSERT_FALSE(m.is_ok());
    // Data entry 25 is on line 2 + 25.
    EXPECT_NE(m.status().message().find(": line 27: row index 7 is out of range 1..6"), std::string::npos)
        << "on " << q << " ranks: " << m.status().message();
    MPI_Comm_free(&sub);
  }
}

TEST(MmImport, WritesAFileThatLoadsWithTheSameFingerprint) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string in = write_text(comm, "w.mtx", random_file(23, 90, "symmetric"));
  std::string out = test::temp_path(comm, "w.h5");
  auto m = io::import_matrix_market(comm, in, out, tiny());
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  auto loaded = Matrix::load(comm, out);
  ASSERT_TRUE(loaded.is_ok()) << loaded.status().message();
  EXPECT_TRUE(loaded->info().symmetric);
  EXPECT_EQ(loaded->info().fingerprint, fingerprint(comm, m->rows, 23));
}

TEST(MmImport, FailureLeavesNoOutput) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string in = write_text(comm, "short.mtx", "%%MatrixMarket matrix coordinate real general\n2 2 3\n1 1 1\n2 2 1\n");
  std::string out = test::temp_path(comm, "short.h5");
  auto m = io::import_matrix_market(comm, in, out, tiny());
  ASSERT_FALSE(m.is_ok());
  EXPECT_NE(m.status().message().find("line 2: the size line declares 3 entries, but the file holds 2"), std::string::npos)
      << m.status().message();
  EXPECT_FALSE(std::filesystem::exists(out));
  auto same = io::import_matrix_market(comm, in, in, tiny());
  ASSERT_FALSE(same.is_ok());
  EXPECT_NE(same.status().message().find("overwrite an input"), std::string::npos);
}

TEST(MmImport, OverLongLineIsRefusedOnEveryRank) {
  // A cap of 48 bytes (the banner has 45) stands in for the 1 MiB one. On one rank the line is
  // named; on more, a share boundary may fall inside it first.
  MPI_Comm comm = MPI_COMM_WORLD;
  io::ImportOptions o = tiny();
  o.max_line_bytes = 48;
  const std::string text =
      "%%MatrixMarket matrix coordinate real general\n3 3 3\n1 1 1\n" + std::string(64, '2') + "\n3 3 1\n";
  auto m = read_text(comm, "long.mtx", text, o);
  ASSERT_FALSE(m.is_ok());
  const std::string msg = m.status().message();
  EXPECT_NE(msg.find("longer than 48 bytes (a file with CR-only line ends, or not a text file?)"), std::string::npos)
      << msg;
  if (comm_size(comm) == 1) {
    EXPECT_NE(msg.find(": line 4: longer than 48 bytes"), std::string::npos) << msg;
  }
  // A banner line over the cap is line 1.
  auto first = read_text(comm, "long-banner.mtx", std::string(60, '%') + "\n", o);
  ASSERT_FALSE(first.is_ok());
  EXPECT_NE(first.status().message().find(": line 1: longer than 48 bytes"), std::string::npos)
      << first.status().message();
}

TEST(MmImport, ArrayLineWithSeveralValuesIsNamed) {
  // Whether the count then comes out wrong or right, the message names the line.
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::string head = "%%MatrixMarket matrix array real general\n2 2\n";
  for (const std::string& body : {std::string("1 2\n3 4\n"), std::string("1\n% c\n2\n3 5\n"),
                                  std::string("1\n2 5\n3\n4\n")}) {
    auto m = read_text(comm, "several.mtx", head + body);
    ASSERT_FALSE(m.is_ok());
    const int line = body[1] == ' ' ? 3 : body[1] == '\n' && body[2] == '%' ? 6 : 4;
    EXPECT_NE(m.status().message().find(fmt::format(": line {}: expected one value per line (array format), found '",
                                                    line)),
              std::string::npos)
        << m.status().message();
  }
}

TEST(MmImport, CompressedFileIsRefusedAsSuch) {
  MPI_Comm comm = MPI_COMM_WORLD;
  auto m = read_text(comm, "packed.mtx.gz", std::string("\x1f\x8b\x08\x00\x00\x00\x00\x00\x00\x03\n", 11));
  ASSERT_FALSE(m.is_ok());
  EXPECT_NE(m.status().message().find("packed.mtx.gz: the file is compressed (gzip); decompress it first"),
            std::string::npos)
      << m.status().message();
}
