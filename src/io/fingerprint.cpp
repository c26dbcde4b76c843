// Order- and partition-independent matrix fingerprint.
#include "io/fingerprint.hpp"

#include <cstring>

#include "support/collective.hpp"

namespace lodestone {

std::uint64_t mix64(std::uint64_t x) {
  // The splitmix64 finaliser: a bijective 64-bit mixer.
  x += 0x9e3779b97f4a7c15ULL;
  x = (x ^ (x >> 30)) * 0xbf58476d1ce4e5b9ULL;
  x = (x ^ (x >> 27)) * 0x94d049bb133111ebULL;
  return x ^ (x >> 31);
}

void FingerprintAccumulator::add(std::int64_t row, std::int64_t col, double value) {
  if (value == 0.0) return;  // also folds -0.0
  std::uint64_t bits = 0;
  std::memcpy(&bits, &value, sizeof bits);
  std::uint64_t h = mix64(static_cast<std::uint64_t>(row) * 0x100000001b3ULL ^ mix64(static_cast<std::uint64_t>(col)));
  sum_ += mix64(h ^ mix64(bits + 0x632be59bd9b4e019ULL));
}

std::uint64_t FingerprintAccumulator::finish(MPI_Comm comm, std::int64_t rows, std::int64_t cols) const {
  std::uint64_t total = sum_all_u64(comm, sum_);
  return mix64(total ^ mix64(static_cast<std::uint64_t>(rows) * 31 + static_cast<std::uint64_t>(cols)));
}

}  // namespace lodestone
