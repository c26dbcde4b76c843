// The synthetic matrix generators (io/generators.hpp): closed-form checks of
// each kind and the same matrix on every rank count.
#include <gtest/gtest.h>

#include <bit>
#include <cmath>
#include <functional>
#include <vector>

#include "io/fingerprint.hpp"
#include "io/generators.hpp"
#include "io/matrix_writer.hpp"
#include "lodestone/matrix.hpp"
#include "support/collective.hpp"
#include "test_util.hpp"

using namespace lodestone;

namespace {
std::uint64_t fingerprint(MPI_Comm comm, const io::CsrRows& rows, std::int64_t n) {
  FingerprintAccumulator acc;
  for (std::int64_t i = 0; i < rows.local_rows(); ++i)
    for (auto k = rows.offsets[i]; k < rows.offsets[i + 1]; ++k) acc.add(rows.row_begin + i, rows.columns[k], rows.values[k]);
  return acc.finish(comm, n, n);
}

// Runs `make` on sub-communicators of 1..p ranks; every fingerprint must agree.
void expect_same_on_every_rank_count(const std::function<std::uint64_t(MPI_Comm)>& make, const char* what) {
  MPI_Comm world = MPI_COMM_WORLD;
  const int p = comm_size(world), rank = comm_rank(world);
  std::vector<std::uint64_t> prints;
  for (int q = 1; q <= p; ++q) {
    MPI_Comm sub;
    MPI_Comm_split(world, rank < q ? 0 : MPI_UNDEFINED, rank, &sub);
    std::uint64_t fp = 0;
    if (sub != MPI_COMM_NULL) {
      fp = make(sub);
      MPI_Comm_free(&sub);
    }
    MPI_Bcast(&fp, 1, MPI_UINT64_T, 0, world);
    prints.push_back(fp);
  }
  for (int q = 1; q <= p; ++q) EXPECT_EQ(prints[q - 1], prints[0]) << what << " on " << q << " ranks";
}
}  // namespace

TEST(Generators, Laplace2dNonzerosClosedForm) {
  MPI_Comm comm = MPI_COMM_WORLD;
  for (auto [nx, ny] : {std::pair<std::int64_t, std::int64_t>{1, 1}, {1, 7}, {6, 1}, {5, 4}, {13, 11}}) {
    auto rows = io::generate_laplace2d(comm, nx, ny);
    // 5-point stencil: 5*nx*ny - 2*nx - 2*ny nonzeros (closed form, common practice).
    EXPECT_EQ(sum_all(comm, rows.offsets.back()), 5 * nx * ny - 2 * nx - 2 * ny) << nx << " x " << ny;
  }
}

TEST(Generators, WalkColumnsSumToOne) {
  MPI_Comm comm = MPI_COMM_WORLD;
  io::WalkOptions o;
  o.n = 57;
  o.degree = 5;
  o.damping = 0.85;
  o.seed = 3;
  o.round_entries = 7;
  auto rows = io::generate_walk(comm, o);
  // Column sums and the ring edge j -> j+1, gathered over this small test matrix.
  std::vector<double> sums(static_cast<std::size_t>(o.n), 0.0), ring(static_cast<std::size_t>(o.n), 0.0);
  std::vector<double> diag(static_cast<std::size_t>(o.n), 0.0);
  for (std::int64_t i = 0; i < rows.local_rows(); ++i) {
    const std::int64_t row = rows.row_begin + i;
    for (auto k = rows.offsets[i]; k < rows.offsets[i + 1]; ++k) {
      const std::int64_t col = rows.columns[k];
      EXPECT_GT(rows.values[k], 0.0);
      sums[col] += rows.values[k];
      if (row == (col + 1) % o.n) ring[col] = 1;
      if (row == col) diag[col] = rows.values[k];
      if (k > rows.offsets[i]) { EXPECT_LT(rows.columns[k - 1], col); }
    }
  }
  MPI_Allreduce(MPI_IN_PLACE, sums.data(), static_cast<int>(o.n), MPI_DOUBLE, MPI_SUM, comm);
  MPI_Allreduce(MPI_IN_PLACE, ring.data(), static_cast<int>(o.n), MPI_DOUBLE, MPI_SUM, comm);
  MPI_Allreduce(MPI_IN_PLACE, diag.data(), static_cast<int>(o.n), MPI_DOUBLE, MPI_SUM, comm);
  double mean_degree = 0;
  for (std::int64_t j = 0; j < o.n; ++j) {
    EXPECT_NEAR(sums[j], 1.0, 1e-14) << "column " << j;
    EXPECT_EQ(ring[j], 1.0) << "ring edge out of " << j;
    EXPECT_GE(diag[j], 1.0 - o.damping - 1e-15) << "the damped mass stays on the diagonal";
    mean_degree += static_cast<double>(io::walk_out_degree(o, j)) / static_cast<double>(o.n);
  }
  EXPECT_NEAR(mean_degree, static_cast<double>(o.degree), 1.5) << "out-degrees are drawn around the mean";
}

TEST(Generators, WalkSameOnEveryRankCount) {
  io::WalkOptions o;
  o.n = 101;
  o.seed = 11;
  o.round_entries = 13;
  expect_same_on_every_rank_count([&](MPI_Comm c) { return fingerprint(c, io::generate_walk(c, o), o.n); }, "walk");
  io::WalkOptions other = o;
  other.seed = 12;
  MPI_Comm w = MPI_COMM_WORLD;
  EXPECT_NE(fingerprint(w, io::generate_walk(w, o), o.n), fingerprint(w, io::generate_walk(w, other), o.n))
      << "the seed must matter";
}

TEST(Generators, WalkCommunitiesSameOnEveryRankCount) {
  io::WalkOptions o;
  o.n = 103;
  o.seed = 5;
  o.communities = 4;
  o.mixing = 0.2;
  o.round_entries = 11;
  expect_same_on_every_rank_count([&](MPI_Comm c) { return fingerprint(c, io::generate_walk(c, o), o.n); },
                                  "walk with communities");
  MPI_Comm w = MPI_COMM_WORLD;
  io::WalkOptions plain = o;
  plain.communities = 1;
  EXPECT_NE(fingerprint(w, io::generate_walk(w, o), o.n), fingerprint(w, io::generate_walk(w, plain), o.n))
      << "communities must change the graph";
  io::WalkOptions other_mixing = plain;
  other_mixing.mixing = 0.9;
  EXPECT_EQ(fingerprint(w, io::generate_walk(w, plain), o.n), fingerprint(w, io::generate_walk(w, other_mixing), o.n))
      << "with one community the mixing has nowhere to lead: the plain walk";
}

TEST(Generators, WalkCommunitiesKeepMostEdgesInside) {
  MPI_Comm comm = MPI_COMM_WORLD;
  io::WalkOptions o;
  o.n = 400;
  o.degree = 8;
  o.seed = 2;
  o.communities = 4;
  o.mixing = 0.2;
  auto rows = io::generate_walk(comm, o);
  // Hashed edges (not the ring, not the diagonal) that cross between communities, per source community.
  std::vector<double> crossing(4, 0.0), total(4, 0.0);
  for (std::int64_t i = 0; i < rows.local_rows(); ++i) {
    const std::int64_t row = rows.row_begin + i;
    for (auto k = rows.offsets[i]; k < rows.offsets[i + 1]; ++k) {
      const std::int64_t col = rows.columns[k];
      if (row == col || row == (col + 1) % o.n) continue;
      const auto c = static_cast<std::size_t>(col / 100);
      total[c] += 1;
      if (row / 100 != col / 100) crossing[c] += 1;
    }
  }
  MPI_Allreduce(MPI_IN_PLACE, crossing.data(), 4, MPI_DOUBLE, MPI_SUM, comm);
  MPI_Allreduce(MPI_IN_PLACE, total.data(), 4, MPI_DOUBLE, MPI_SUM, comm);
  for (std::size_t c = 0; c < 4; ++c) {
    // An edge leaves with probability 0.2 (c+1)/4 and then lands outside with probability 3/4.
    const double expected = 0.2 * static_cast<double>(c + 1) / 4.0 * 0.75;
    EXPECT_NEAR(crossing[c] / total[c], expected, 0.06) << "community " << c;
  }
  EXPECT_LT(crossing[0] / total[0], crossing[3] / total[3]) << "later communities leak more";
}

TEST(Generators, DenseSpectrumKeepsTraceAndFrobeniusNorm) {
  // Orthogonal similarity keeps trace = sum(lambda) and ||A||_F^2 = sum(lambda^2).
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 31;
  for (auto s : {io::Spectrum::linear, io::Spectrum::geometric}) {
    auto d = io::generate_dense_spectrum(comm, n, s, 0.8, 5);
    double trace = 0, frob = 0, want_trace = 0, want_frob = 0;
    for (std::int64_t i = 0; i < d.local_rows; ++i) {
      trace += d.values[static_cast<std::size_t>(i * n + d.row_begin + i)];
      for (std::int64_t j = 0; j < n; ++j) frob += d.values[static_cast<std::size_t>(i * n + j)] * d.values[static_cast<std::size_t>(i * n + j)];
    }
    for (std::int64_t k = 0; k < n; ++k) {
      const double l = io::spectrum_value(s, n, 0.8, k);
      want_trace += l;
      want_frob += l * l;
    }
    EXPECT_NEAR(sum_all(comm, trace), want_trace, 1e-12 * want_frob);
    EXPECT_NEAR(sum_all(comm, frob), want_frob, 1e-12 * want_frob);
  }
  EXPECT_EQ(io::spectrum_value(io::Spectrum::linear, 10, 0, 0), 10.0);
  EXPECT_EQ(io::spectrum_value(io::Spectrum::linear, 10, 0, 9), 1.0);
  EXPECT_DOUBLE_EQ(io::spectrum_value(io::Spectrum::geometric, 10, 0.5, 3), 0.125);
}

TEST(Generators, DenseSpectrumSymmetricAndSameOnEveryRankCount) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 17;
  auto d = io::generate_dense_spectrum(comm, n, io::Spectrum::geometric, 0.9, 2);
  std::string path = test::temp_path(comm, "dense.h5");
  ASSERT_TRUE(io::write_dense_file(comm, path, "/matrix", n, true, d.row_begin, d.local_rows, d.values).is_ok());
  LoadOptions strict;
  strict.symmetry_tolerance = 1e-14;
  auto m = Matrix::load(comm, path, strict);
  ASSERT_TRUE(m.is_ok()) << m.status().message();
  expect_same_on_every_rank_count(
      [&](MPI_Comm c) {
        auto x = io::generate_dense_spectrum(c, n, io::Spectrum::geometric, 0.9, 2);
        FingerprintAccumulator acc;
        for (std::int64_t i = 0; i < x.local_rows; ++i)
          for (std::int64_t j = 0; j < n; ++j) acc.add(x.row_begin + i, j, x.values[static_cast<std::size_t>(i * n + j)]);
        return acc.finish(c, n, n);
      },
      "dense-spectrum");
}

TEST(Generators, HypercubeIsRegularAndSymmetric) {
  MPI_Comm comm = MPI_COMM_WORLD;
  for (int dim : {1, 3, 6}) {
    const std::int64_t n = std::int64_t{1} << dim;
    auto rows = io::generate_hypercube(comm, dim);
    for (std::int64_t i = 0; i < rows.local_rows(); ++i) {
      const std::int64_t row = rows.row_begin + i;
      EXPECT_EQ(rows.offsets[i + 1] - rows.offsets[i], dim) << "degree of node " << row;
      for (auto k = rows.offsets[i]; k < rows.offsets[i + 1]; ++k) {
        EXPECT_EQ(std::popcount(static_cast<std::uint64_t>(row ^ rows.columns[k])), 1);
        EXPECT_EQ(rows.values[k], 1.0);
        if (k > rows.offsets[i]) { EXPECT_LT(rows.columns[k - 1], rows.columns[k]); }
      }
    }
    std::string path = test::temp_path(comm, "cube.h5");
    ASSERT_TRUE(io::write_csr_file(comm, path, "/matrix", n, true, rows).is_ok());
    auto m = Matrix::load(comm, path);  // checks the declared symmetry
    ASSERT_TRUE(m.is_ok()) << m.status().message();
    EXPECT_EQ(m->info().nnz, n * dim);
  }
  expect_same_on_every_rank_count([](MPI_Comm c) { return fingerprint(c, io::generate_hypercube(c, 7), 128); },
                                  "hypercube");
  expect_same_on_every_rank_count([](MPI_Comm c) { return fingerprint(c, io::generate_laplace2d(c, 9, 7), 63); },
                                  "laplace2d");
}
