// The matrix fingerprint: an order- and partition-independent 64-bit hash.
//
// Each nonzero entry (row, column, value) is hashed on its own and the hashes
// are summed modulo 2^64, so the result does not depend on the order entries are
// visited or on how rows are split over ranks. Exact zeros are skipped, so a
// matrix stored densely and the same matrix stored as CSR share a fingerprint.
// The size is mixed in at the end.
#pragma once

#include <mpi.h>

#include <cstdint>

namespace lodestone {

std::uint64_t mix64(std::uint64_t x);

class FingerprintAccumulator {
 public:
  void add(std::int64_t row, std::int64_t col, double value);
  // Collective: combines all ranks' partial sums with the matrix size.
  std::uint64_t finish(MPI_Comm comm, std::int64_t rows, std::int64_t cols) const;

 private:
  std::uint64_t sum_ = 0;
};

}  // namespace lodestone
