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
#include <cstring>

namespace lodestone {

// The splitmix64 finaliser: a bijective 64-bit mixer. Inline, because the
// fingerprint and the checkpoint checksums call it a few times per value.
inline std::uint64_t mix64(std::uint64_t x) {
  x += 0x9e3779b97f4a7c15ULL;
  x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9ULL;
  x = (x ^ (x >> 27)) * 0x94d049bb133111ebULL;
  return x ^ (x >> 31);
}

class FingerprintAccumulator {
 public:
  void add(std::int64_t row, std::int64_t col, double value) {
    if (value == 0.0) return;  // also folds -0.0
    std::uint64_t bits = 0;
    std::memcpy(&bits, &value, sizeof bits);
    const std::uint64_t h =
        mix64(static_cast<std::uint64_t>(row) * 0x100000001b3ULL ^ mix64(static_cast<std::uint64_t>(col)));
    sum_ += mix64(h ^ mix64(bits + 0x632be59bd9b4e019ULL));
  }
  // Collective: combines all ranks' partial sums with the matrix size.
  std::uint64_t finish(MPI_Comm comm, std::int64_t rows, std::int64_t cols) const;

 private:
  std::uint64_t sum_ = 0;
};

}  // namespace lodestone
