// The planner's one-pass partition sizing: hand-computed small cases, chunk and
// slice independence, and agreement with the reader's io::balanced_split.
#include <gtest/gtest.h>

#include <algorithm>
#include <cmath>

#include "io/generators.hpp"
#include "io/matrix_writer.hpp"
#include "io/partition.hpp"
#include "plan/partition_scan.hpp"
#include "support/collective.hpp"
#include "test_util.hpp"

using namespace lodestone;
using plan::BoundaryScanner;
using plan::PartitionStats;

namespace {

// Row lengths 4,0,1,1,1,3: offsets 0,4,4,5,6,7,10 (n = 6, nnz = 10, n + nnz = 16).
const std::vector<std::int64_t> kOffsets = {0, 4, 4, 5, 6, 7, 10};

std::vector<PartitionStats> scan_in_slices(const std::vector<std::int64_t>& off, const std::vector<int>& parts,
                                           int slices, std::int64_t chunk) {
  const std::int64_t n = static_cast<std::int64_t>(off.size()) - 1, nnz = off.back();
  std::vector<std::vector<BoundaryScanner::Local>> locals;
  for (int s = 0; s < slices; ++s) {
    RowRange r = even_split(n, s, slices);
    const std::int64_t end = r.end + (s == slices - 1 ? 1 : 0);
    const std::int64_t prev = r.begin > 0 ? off[static_cast<std::size_t>(r.begin - 1)] + r.begin - 1 : 0;
    BoundaryScanner sc(parts, n, nnz, r.begin, prev);
    for (std::int64_t b = r.begin; b < end; b += chunk) {
      const std::int64_t e = std::min(end, b + chunk);
      sc.feed(b, std::span<const std::int64_t>(off.data() + b, static_cast<std::size_t>(e - b)));
    }
    locals.push_back(sc.locals());
  }
  return plan::stitch(parts, locals);
}

// The definition, directly: boundary k is the first row r with off[r] + r >= k (nnz + n) / p.
PartitionStats brute_force(const std::vector<std::int64_t>& off, int p) {
  const std::int64_t n = static_cast<std::int64_t>(off.size()) - 1;
  const long double total = static_cast<long double>(off.back()) + n;
  std::vector<std::int64_t> b(static_cast<std::size_t>(p) + 1);
  for (int k = 0; k <= p; ++k) {
    std::int64_t r = 0;
    while (r < n && static_cast<long double>(off[static_cast<std::size_t>(r)]) + r < total * k / p) ++r;
    b[static_cast<std::size_t>(k)] = r;
  }
  PartitionStats st;
  st.parts = p;
  std::int64_t heaviest = -1;
  for (int k = 0; k < p; ++k) {
    const std::int64_t rows = b[k + 1] - b[k], nnz = off[b[k + 1]] - off[b[k]];
    if (nnz > heaviest) heaviest = nnz, st.heaviest_nnz = nnz, st.heaviest_rows = rows, st.heaviest_first_row = b[k];
    st.max_rows = std::max(st.max_rows, rows);
    if (rows == 0) ++st.empty_parts;
  }
  return st;
}

void expect_same(const PartitionStats& a, const PartitionStats& b, const std::string& where) {
  EXPECT_EQ(a.parts, b.parts) << where;
  EXPECT_EQ(a.heaviest_nnz, b.heaviest_nnz) << where;
  EXPECT_EQ(a.heaviest_rows, b.heaviest_rows) << where;
  EXPECT_EQ(a.heaviest_first_row, b.heaviest_first_row) << where;
  EXPECT_EQ(a.max_rows, b.max_rows) << where;
  EXPECT_EQ(a.empty_parts, b.empty_parts) << where;
}

}  // namespace

TEST(PlanPartition, HandComputedSmallCase) {
  // Weights w(r) = off[r] + r: 0,5,6,8,10,12,16.
  auto st = scan_in_slices(kOffsets, {1, 2, 3, 4}, 1, 100);
  // p = 1: everything.
  EXPECT_EQ(st[0].heaviest_nnz, 10);
  EXPECT_EQ(st[0].heaviest_rows, 6);
  // p = 2: target 8 -> boundary at row 3: parts [0,3) with 5 nonzeros and [3,6) with 5.
  EXPECT_EQ(st[1].heaviest_nnz, 5);
  EXPECT_EQ(st[1].heaviest_rows, 3);
  EXPECT_EQ(st[1].heaviest_first_row, 0);
  EXPECT_EQ(st[1].max_rows, 3);
  // p = 3: targets 5.33, 10.67 -> rows 2 and 5: parts of 4, 3, 3 nonzeros and 2, 3, 1 rows.
  EXPECT_EQ(st[2].heaviest_nnz, 4);
  EXPECT_EQ(st[2].heaviest_rows, 2);
  EXPECT_EQ(st[2].max_rows, 3);
  // p = 4: targets 4, 8, 12 -> rows 1, 3, 5: parts of 4, 1, 2, 3 nonzeros and 1, 2, 2, 1 rows.
  EXPECT_EQ(st[3].heaviest_nnz, 4);
  EXPECT_EQ(st[3].heaviest_rows, 1);
  EXPECT_EQ(st[3].max_rows, 2);
  EXPECT_EQ(st[3].empty_parts, 0);
}

TEST(PlanPartition, ChunksAndSlicesDoNotChangeTheAnswer) {
  // A skewed matrix: a few very heavy rows among light ones.
  std::vector<std::int64_t> off{0};
  for (std::int64_t r = 0; r < 257; ++r)
    off.push_back(off.back() + (r % 61 == 7 ? 90 : static_cast<std::int64_t>(io::hashed_uniform(3, r) * 6)));
  std::vector<int> parts{1, 2, 3, 5, 8, 13, 64, 200, 257, 300};
  std::vector<PartitionStats> want;
  for (int p : parts) want.push_back(brute_force(off, p));
  for (int slices : {1, 2, 3, 7}) {
    for (std::int64_t chunk : {1, 2, 5, 1000}) {
      auto got = scan_in_slices(off, parts, slices, chunk);
      for (std::size_t i = 0; i < parts.size(); ++i)
        expect_same(got[i], want[i], "p=" + std::to_string(parts[i]) + " slices=" + std::to_string(slices) +
                                         " chunk=" + std::to_string(chunk));
    }
  }
}

TEST(PlanPartition, FileScanMatchesTheReadersSplit) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const int size = comm_size(comm), rank = comm_rank(comm);
  const std::int64_t n = 300;
  // Row r has 1 + (r*r mod 17) entries, row 5 has 120: skewed on purpose.
  auto len = [](std::int64_t r) { return r == 5 ? std::int64_t{120} : 1 + (r * r) % 17; };
  io::CsrRows rows;
  RowRange mine = even_split(n, rank, size);
  rows.row_begin = mine.begin;
  for (std::int64_t r = mine.begin; r < mine.end; ++r) {
    for (std::int64_t c = 0; c < len(r); ++c) rows.columns.push_back(c), rows.values.push_back(1.0);
    rows.offsets.push_back(static_cast<std::int64_t>(rows.columns.size()));
  }
  const std::string path = test::temp_path(comm, "plan-scan.h5");
  ASSERT_TRUE(io::write_csr_file(comm, path, "/matrix", n, false, rows).is_ok());

  std::vector<int> parts{1, 2, 3, 4, 6, 7, 16, size};
  auto opened = plan::open_matrix(comm, path, "/matrix");
  ASSERT_TRUE(opened.is_ok()) << opened.status().message();
  auto got = plan::scan_partitions(comm, *opened, parts, 7);
  ASSERT_TRUE(got.is_ok()) << got.status().message();

  // The reader's own split at this rank count: the heaviest rank's nonzeros.
  std::int64_t nnz = 0;
  std::vector<std::int64_t> off{0};
  for (std::int64_t r = 0; r < n; ++r) off.push_back(off.back() + len(r));  // small test: whole offsets on purpose
  nnz = off.back();
  std::vector<std::int64_t> slice(off.begin() + mine.begin, off.begin() + mine.end + 1);
  auto bounds = balanced_split(comm, mine, slice, n, nnz);
  const std::int64_t my_nnz = off[bounds[rank + 1]] - off[bounds[rank]];
  const std::int64_t heaviest = max_all(comm, my_nnz);
  EXPECT_EQ(got->back().heaviest_nnz, heaviest);
  for (std::size_t i = 0; i < parts.size(); ++i) expect_same((*got)[i], brute_force(off, parts[i]), "p=" + std::to_string(parts[i]));
}

TEST(PlanPartition, BadOffsetsAreRefusedOnEveryRank) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 20;
  io::CsrRows rows;
  RowRange mine = even_split(n, comm_rank(comm), comm_size(comm));
  rows.row_begin = mine.begin;
  for (std::int64_t r = mine.begin; r < mine.end; ++r) {
    rows.columns.push_back(r), rows.values.push_back(1.0);
    rows.offsets.push_back(static_cast<std::int64_t>(rows.columns.size()));
  }
  const std::string path = test::temp_path(comm, "plan-bad.h5");
  ASSERT_TRUE(io::write_csr_file(comm, path, "/matrix", n, false, rows).is_ok());
  // Break row_offsets in place: entry 10 jumps above nnz.
  if (comm_rank(comm) == 0) {
    hid_t f = H5Fopen(path.c_str(), H5F_ACC_RDWR, H5P_DEFAULT);
    hid_t d = H5Dopen2(f, "/matrix/row_offsets", H5P_DEFAULT);
    hsize_t start = 10, count = 1;
    hid_t fs = H5Dget_space(d);
    H5Sselect_hyperslab(fs, H5S_SELECT_SET, &start, nullptr, &count, nullptr);
    hid_t ms = H5Screate_simple(1, &count, nullptr);
    std::int64_t v = 999;
    H5Dwrite(d, H5T_NATIVE_INT64, ms, fs, H5P_DEFAULT, &v);
    H5Sclose(ms), H5Sclose(fs), H5Dclose(d), H5Fclose(f);
  }
  MPI_Barrier(comm);
  auto opened = plan::open_matrix(comm, path, "/matrix");
  ASSERT_TRUE(opened.is_ok()) << opened.status().message();
  auto got = plan::scan_partitions(comm, *opened, {1, 2, 3}, 4);
  ASSERT_FALSE(got.is_ok());
  EXPECT_NE(got.status().message().find("row_offsets"), std::string::npos) << got.status().message();
}

TEST(PlanPartition, DenseSplitsEvenly) {
  auto st = plan::dense_partition(10, 4);  // 3, 3, 2, 2 rows
  EXPECT_EQ(st.heaviest_rows, 3);
  EXPECT_EQ(st.heaviest_nnz, 30);
  EXPECT_EQ(st.max_rows, 3);
}
