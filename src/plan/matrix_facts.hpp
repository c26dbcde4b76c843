// What the planner and the calibration read of a matrix file without loading it:
// its layout, size, symmetric flag, stored entries and the width of its column indices,
// and the file kept open for the planner's one pass over row_offsets.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <string>

#include "io/h5.hpp"
#include "lodestone/matrix.hpp"
#include "lodestone/status.hpp"

namespace lodestone::plan {

struct MatrixFacts {
  Layout layout = Layout::csr;
  std::int64_t rows = 0, nnz = 0;
  bool symmetric = false;
  double file_index_bytes = 8;  // bytes of one stored column index (CSR)
};

// A matrix file opened once: its facts and the open group, so that a later pass
// (plan::scan_partitions) reads row_offsets without opening the file or reading
// its header again. The group closes before the file (declaration order).
struct OpenMatrix {
  std::string path, group;
  h5::Handle file, group_handle;
  MatrixFacts facts;
};

// Collective: opens the file, reads the group's attributes and the length of column_indices.
Result<OpenMatrix> open_matrix(MPI_Comm comm, const std::string& path, const std::string& group);
// The same facts, the file closed again.
Result<MatrixFacts> read_facts(MPI_Comm comm, const std::string& path, const std::string& group);

}  // namespace lodestone::plan
