// What the planner and the calibration read of a matrix file without loading it:
// its layout, size, symmetric flag, stored entries and the width of its column indices.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <string>

#include "lodestone/matrix.hpp"
#include "lodestone/status.hpp"

namespace lodestone::plan {

struct MatrixFacts {
  Layout layout = Layout::csr;
  std::int64_t rows = 0, nnz = 0;
  bool symmetric = false;
  double file_index_bytes = 8;  // bytes of one stored column index (CSR)
};

// Collective: reads the group's attributes and the length of column_indices.
Result<MatrixFacts> read_facts(MPI_Comm comm, const std::string& path, const std::string& group);

}  // namespace lodestone::plan
