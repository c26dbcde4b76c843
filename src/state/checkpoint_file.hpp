// Writing and reading the checkpoint file (the work behind include/lodestone/checkpoint.hpp).
#pragma once

#include <mpi.h>

#include <string>
#include <vector>

#include "lodestone/checkpoint.hpp"

namespace lodestone::ckpt {

Status write(MPI_Comm comm, const std::string& path, const Checkpoint& ckpt, const std::vector<std::string>& inputs);

// One generation only, no fallback. `damaged` tells the caller whether the
// failure means the file is missing, truncated or corrupt (so an older
// generation may serve) rather than a file of the wrong kind or version.
struct ReadOutcome {
  Status status;
  bool damaged = false;
};
ReadOutcome read_one(MPI_Comm comm, const std::string& path, std::int64_t row_begin, std::int64_t row_end,
                     bool read_blocks, Checkpoint& out);

Result<Checkpoint> read(MPI_Comm comm, const std::string& path, std::int64_t row_begin, std::int64_t row_end,
                        const CheckpointReadOptions& options);

Status check_identity(const Checkpoint& ckpt, const RunIdentity& expected, const std::string& path);

}  // namespace lodestone::ckpt
