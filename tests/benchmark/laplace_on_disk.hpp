// The 2-D Laplacian the kernel benchmarks (bench_micro, bench_paired) run on: generated,
// written to an HDF5 file and loaded back through the public Matrix API, so its
// storage is what a solve gets. One rank.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <memory>
#include <string>

#include "io/generators.hpp"
#include "io/matrix_writer.hpp"
#include "lodestone/matrix.hpp"

namespace lodestone::bench {

// nx x ny grid points, one row each; nullptr if the file could not be written or read.
inline std::unique_ptr<Matrix> laplace_on_disk(std::int64_t nx, std::int64_t ny, const std::string& path) {
  auto rows = io::generate_laplace2d(MPI_COMM_WORLD, nx, ny);
  if (!io::write_csr_file(MPI_COMM_WORLD, path, "/matrix", nx * ny, true, rows).ok()) return nullptr;
  auto m = Matrix::load(MPI_COMM_WORLD, path);
  if (!m) return nullptr;
  return std::make_unique<Matrix>(std::move(*m));
}

// Bytes one step of the filter's fused product moves on `cols` columns (the suite's
// formula for a fused update): the matrix (values, column indices, row offsets), X
// read, the old Y read and Y written.
inline double shifted_rows_bytes(double rows, double stored, int cols) {
  return stored * 12.0 + (rows + 1) * 4.0 + rows * cols * 24.0;
}

}  // namespace lodestone::bench
