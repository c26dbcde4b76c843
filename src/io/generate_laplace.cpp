// Discrete Dirichlet Laplacians in one and two dimensions.
#include "io/fingerprint.hpp"
#include "io/generators.hpp"
#include "io/partition.hpp"
#include "support/collective.hpp"

namespace lodestone::io {

double hashed_uniform(std::uint64_t seed, std::uint64_t a, std::uint64_t b) {
  std::uint64_t h = mix64(mix64(seed ^ 0x5851f42d4c957f2dULL) ^ mix64(a) * 3 ^ mix64(b + 0x2545f4914f6cdd1dULL));
  return static_cast<double>(h >> 11) * 0x1.0p-53;
}

CsrRows generate_laplace1d(MPI_Comm comm, std::int64_t n) {
  RowRange r = even_split(n, comm_rank(comm), comm_size(comm));
  CsrRows out;
  out.row_begin = r.begin;
  for (std::int64_t i = r.begin; i < r.end; ++i) {
    if (i > 0) out.columns.push_back(i - 1), out.values.push_back(-1.0);
    out.columns.push_back(i), out.values.push_back(2.0);
    if (i + 1 < n) out.columns.push_back(i + 1), out.values.push_back(-1.0);
    out.offsets.push_back(static_cast<std::int64_t>(out.columns.size()));
  }
  return out;
}

CsrRows generate_laplace2d(MPI_Comm comm, std::int64_t nx, std::int64_t ny) {
  const std::int64_t n = nx * ny;
  RowRange r = even_split(n, comm_rank(comm), comm_size(comm));
  CsrRows out;
  out.row_begin = r.begin;
  out.columns.reserve(static_cast<std::size_t>(5 * r.size()));
  out.values.reserve(static_cast<std::size_t>(5 * r.size()));
  auto add = [&](std::int64_t c, double v) {
    out.columns.push_back(c);
    out.values.push_back(v);
  };
  for (std::int64_t row = r.begin; row < r.end; ++row) {
    const std::int64_t i = row % nx, j = row / nx;
    if (j > 0) add(row - nx, -1.0);
    if (i > 0) add(row - 1, -1.0);
    add(row, 4.0);
    if (i + 1 < nx) add(row + 1, -1.0);
    if (j + 1 < ny) add(row + nx, -1.0);
    out.offsets.push_back(static_cast<std::int64_t>(out.columns.size()));
  }
  return out;
}

}  // namespace lodestone::io
