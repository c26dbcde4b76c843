// Keeping a solve's history to a fixed size (state/history_cap.hpp).
#include "state/history_cap.hpp"

#include <utility>

namespace lodestone::state {

void cap_history(std::vector<HistoryRecord>& history, std::size_t cap) {
  if (cap < 3 || history.size() <= cap) return;
  const std::size_t n = history.size();
  std::size_t kept = 1;  // record 0 stays
  for (std::size_t i = 2; i + 1 < n; i += 2) history[kept++] = std::move(history[i]);
  history[kept++] = std::move(history[n - 1]);
  history.resize(kept);
}

}  // namespace lodestone::state
