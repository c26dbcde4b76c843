// Order- and partition-independent matrix fingerprint.
#include "io/fingerprint.hpp"

#include "support/collective.hpp"

namespace lodestone {

std::uint64_t FingerprintAccumulator::finish(MPI_Comm comm, std::int64_t rows, std::int64_t cols) const {
  std::uint64_t total = sum_all_u64(comm, sum_);
  return mix64(total ^ mix64(static_cast<std::uint64_t>(rows) * 31 + static_cast<std::uint64_t>(cols)));
}

}  // namespace lodestone
