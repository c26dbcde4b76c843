// Splitting rows over ranks.
//
// even_split divides n items into near-equal contiguous parts. balanced_split
// chooses row boundaries so that every rank gets about the same weight, where
// row r weighs (its nonzeros + 1): rank k starts at the first row r with
// offsets[r] + r >= k * (nnz + n) / p. Each rank looks only at its own even
// slice of row_offsets and the boundaries are combined with one reduction, so no
// rank ever sees the whole offsets array.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <span>
#include <vector>

namespace lodestone {

struct RowRange {
  std::int64_t begin = 0;
  std::int64_t end = 0;
  std::int64_t size() const { return end - begin; }
};

RowRange even_split(std::int64_t n, int part, int parts);

// Collective. `slice` holds offsets[range.begin .. range.end] inclusive, where
// range is this rank's even_split of n rows. Returns p+1 boundaries.
std::vector<std::int64_t> balanced_split(MPI_Comm comm, RowRange range, std::span<const std::int64_t> slice,
                                         std::int64_t n, std::int64_t nnz);

}  // namespace lodestone
