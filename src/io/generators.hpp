// Synthetic matrices for demos, tests and benchmarks.
//
// Every generator builds this rank's block of rows (an even split) from global
// indices and a counter-based hash of the seed, never from a rank-local random
// stream, so the same arguments give the same matrix on any number of ranks.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <vector>

#include "io/matrix_writer.hpp"

namespace lodestone::io {

// 1-D Dirichlet Laplacian: tridiagonal (-1, 2, -1), n rows.
CsrRows generate_laplace1d(MPI_Comm comm, std::int64_t n);
// 2-D Dirichlet Laplacian, 5-point stencil on an nx x ny grid (row = i + nx*j).
CsrRows generate_laplace2d(MPI_Comm comm, std::int64_t nx, std::int64_t ny);

// A uniformly distributed double in [0, 1) from (seed, a, b): the counter-based
// random numbers every generator and start vector uses.
double hashed_uniform(std::uint64_t seed, std::uint64_t a, std::uint64_t b = 0);

}  // namespace lodestone::io
