// Refusing to resume a checkpoint of another matrix or with other options
// (state/checkpoint_file.hpp).
#include <fmt/format.h>

#include <set>

#include "state/checkpoint_file.hpp"

namespace lodestone::ckpt {

Status check_identity(const Checkpoint& c, const RunIdentity& want, const std::string& path) {
  const RunIdentity& have = c.identity;
  if (have.rows != want.rows)
    return Status::input(fmt::format("{}: the checkpoint belongs to a different matrix: it has {} rows, this matrix "
                                     "has {} rows (checkpoint fingerprint {:016x}, this matrix {:016x})",
                                     path, have.rows, want.rows, have.matrix_fingerprint, want.matrix_fingerprint));
  if (have.matrix_fingerprint != want.matrix_fingerprint)
    return Status::input(fmt::format("{}: the checkpoint belongs to a different matrix: fingerprint {:016x} in the "
                                     "checkpoint, {:016x} for this matrix (same size, {} rows, different entries)",
                                     path, have.matrix_fingerprint, want.matrix_fingerprint, want.rows));
  std::set<std::string> keys;
  for (const auto& [k, v] : have.options) keys.insert(k);
  for (const auto& [k, v] : want.options) keys.insert(k);
  std::string diffs;
  for (const auto& k : keys) {
    auto a = have.options.find(k), b = want.options.find(k);
    const std::string was = a == have.options.end() ? "not set" : a->second;
    const std::string now = b == want.options.end() ? "not set" : b->second;
    if (was != now) diffs += fmt::format("{}option '{}' was {} in the checkpoint but is {} now", diffs.empty() ? "" : "; ", k, was, now);
  }
  if (!diffs.empty())
    return Status::input(fmt::format("{}: cannot resume with different options: {} (resume with the options the "
                                     "checkpoint was written with, or start afresh with another checkpoint file)",
                                     path, diffs));
  return Status::ok();
}

}  // namespace lodestone::ckpt
