// `lodestone inspect CHECKPOINT.h5`: the summary printed for a checkpoint file.
#pragma once

#include <mpi.h>

#include <string>

#include "lodestone/status.hpp"

namespace lodestone::cli {

// Collective. Prints (rank 0) what the checkpoint belongs to and how far the run got.
Status inspect_checkpoint(MPI_Comm comm, const std::string& path);

}  // namespace lodestone::cli
