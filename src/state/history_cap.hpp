// A solve's history kept to a fixed size. The history is replicated on every rank
// and written into every checkpoint, and a one-vector method can take thousands of
// iterations a second: recorded at every boundary, it would grow without bound.
#pragma once

#include <cstddef>
#include <vector>

#include "io/result_file.hpp"
#include "lodestone/result.hpp"

namespace lodestone::state {

// Records a history keeps at most: about 1 MiB with K = 16. A results file
// holds the whole history, and its reader refuses more than this.
inline constexpr std::size_t kHistoryCap = static_cast<std::size_t>(io::result_layout::kMaxHistoryRecords);

// With more than `cap` records (cap >= 3), drops every second record between the
// first and the last, which both stay. Applied after every new record, the history
// stays within cap, dense near the end of the run and thinner further back.
void cap_history(std::vector<HistoryRecord>& history, std::size_t cap = kHistoryCap);

}  // namespace lodestone::state
