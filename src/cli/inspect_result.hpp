// The results-file branch of `lodestone inspect`: the pairs table and the run facts.
#pragma once

#include <mpi.h>

#include <string>

#include "lodestone/status.hpp"

namespace lodestone::cli {

// Collective. Prints (on rank 0) the summary of a results file.
Status inspect_result(MPI_Comm comm, const std::string& path);

}  // namespace lodestone::cli
