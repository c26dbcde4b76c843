// Even and nonzero-balanced row partitions.
#include "io/partition.hpp"

#include <algorithm>

#include "support/collective.hpp"

namespace lodestone {

RowRange even_split(std::int64_t n, int part, int parts) {
  const std::int64_t base = n / parts, extra = n % parts;
  const std::int64_t begin = part * base + std::min<std::int64_t>(part, extra);
  return {begin, begin + base + (part < extra ? 1 : 0)};
}

std::vector<std::int64_t> balanced_split(MPI_Comm comm, RowRange range, std::span<const std::int64_t> slice,
                                         std::int64_t n, std::int64_t nnz) {
  const int p = comm_size(comm);
  const long double total = static_cast<long double>(nnz) + static_cast<long double>(n);
  std::vector<std::int64_t> found(static_cast<std::size_t>(p) + 1, n);
  for (int k = 1; k < p; ++k) {
    const long double target = total * k / p;
    // First index in this slice whose weight reaches the target (weights are
    // non-decreasing once row_offsets has been validated).
    std::int64_t lo = 0, hi = static_cast<std::int64_t>(slice.size());
    while (lo < hi) {
      const std::int64_t mid = lo + (hi - lo) / 2;
      if (static_cast<long double>(slice[static_cast<std::size_t>(mid)]) + (range.begin + mid) >= target) hi = mid;
      else lo = mid + 1;
    }
    if (lo < static_cast<std::int64_t>(slice.size()) && (lo > 0 || range.begin == 0))
      found[static_cast<std::size_t>(k)] = range.begin + lo;
  }
  std::vector<std::int64_t> bounds(found.size());
  MPI_Allreduce(found.data(), bounds.data(), p + 1, MPI_INT64_T, MPI_MIN, comm);
  bounds[0] = 0;
  bounds[static_cast<std::size_t>(p)] = n;
  for (int k = 1; k <= p; ++k) bounds[k] = std::max(bounds[k], bounds[k - 1]);
  return bounds;
}

}  // namespace lodestone
