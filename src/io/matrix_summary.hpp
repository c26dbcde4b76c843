// A cheap summary of a matrix file: its attributes and row statistics, read
// from row_offsets in even slices (the entries themselves are not read).
#pragma once

#include <mpi.h>

#include <cstdint>
#include <string>

#include "lodestone/matrix.hpp"

namespace lodestone::io {

struct MatrixSummary {
  Layout layout = Layout::csr;
  std::int64_t rows = 0;
  std::int64_t nnz = 0;
  bool symmetric = false;
  std::int64_t row_nnz_min = 0;
  std::int64_t row_nnz_max = 0;
  double row_nnz_mean = 0;
  std::string value_type;      // "float64" or "float32"
  std::string index_type;      // "int32" or "int64" (csr)
  double bytes_in_memory = 0;  // to hold it as a PETSc matrix, all ranks together
};

// Collective.
Result<MatrixSummary> summarize_matrix(MPI_Comm comm, const std::string& path, const std::string& group);

// Bytes PETSc needs for a matrix of this shape (values, indices, row pointers).
double matrix_bytes(Layout layout, std::int64_t rows, std::int64_t nnz);

}  // namespace lodestone::io
