// Writing a matrix in the file layout, collectively, each rank its own rows.
//
// The caller supplies each rank's contiguous block of rows; ranks' blocks must
// be in rank order and together cover all rows. The writer computes every
// rank's place in the global arrays with one prefix sum and writes with
// collective hyperslab selections. Use it inside an AtomicOutput.
#pragma once

#include <hdf5.h>
#include <mpi.h>

#include <cstdint>
#include <string>
#include <vector>

#include "lodestone/status.hpp"

namespace lodestone::io {

struct CsrRows {
  std::int64_t row_begin = 0;
  std::vector<std::int64_t> offsets{0};  // local, offsets[0] == 0, size local_rows+1
  std::vector<std::int64_t> columns;     // global column of each entry
  std::vector<double> values;
  std::int64_t local_rows() const { return static_cast<std::int64_t>(offsets.size()) - 1; }
};

// Writes the attributes shared by every layout.
Status write_matrix_attributes(hid_t group, const char* layout, std::int64_t n, bool symmetric);

Status write_csr(MPI_Comm comm, hid_t file, const std::string& group, std::int64_t n, bool symmetric,
                 const CsrRows& rows);

// `values` holds this rank's rows [row_begin, row_begin+local_rows), row-major, n columns.
Status write_dense(MPI_Comm comm, hid_t file, const std::string& group, std::int64_t n, bool symmetric,
                   std::int64_t row_begin, std::int64_t local_rows, const std::vector<double>& values);

// Convenience: create `path` atomically (refusing to overwrite `inputs`) and write the CSR rows.
Status write_csr_file(MPI_Comm comm, const std::string& path, const std::string& group, std::int64_t n,
                      bool symmetric, const CsrRows& rows, const std::vector<std::string>& inputs = {});
Status write_dense_file(MPI_Comm comm, const std::string& path, const std::string& group, std::int64_t n,
                        bool symmetric, std::int64_t row_begin, std::int64_t local_rows,
                        const std::vector<double>& values, const std::vector<std::string>& inputs = {});

}  // namespace lodestone::io
