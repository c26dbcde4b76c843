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

// The walk matrix of a generated directed graph: A = d*P + (1-d)*I, where P is
// column-stochastic (P_ij = edges j->i / out-degree of j) and d the damping.
// Node j links to j+1 (mod n), so the graph is strongly connected, and to
// extra targets drawn from a hash of (seed, j): their count is uniform in
// 0..2*(degree-1), so the mean out-degree is `degree`. A is column-stochastic
// with the simple, strictly dominant eigenvalue 1; its eigenvector is the
// stationary distribution. The damped mass stays in place instead of being
// spread over all nodes, which keeps A sparse.
//
// With communities C > 1 the nodes fall into C contiguous ranges of equal size
// (within one node: node j is in community floor(j C / n)), and a
// hashed edge of a node in community c (from 0) leads anywhere with probability
// mixing * (c + 1) / C, else to a node of its own community. Such a walk has C
// eigenvalues near 1, one per community and each different (the communities
// leak at different rates), well apart from the rest of the spectrum. C = 1
// gives exactly the matrix without communities.
struct WalkOptions {
  std::int64_t n = 1000;
  std::int64_t degree = 8;
  double damping = 0.85;
  std::int64_t communities = 1;
  double mixing = 0.1;
  std::uint64_t seed = 1;
  // Entries a rank generates before all ranks exchange them.
  std::int64_t round_entries = std::int64_t{1} << 20;
};
CsrRows generate_walk(MPI_Comm comm, const WalkOptions& options);
// Out-degree of node j of the walk graph (a function of (seed, j) alone).
std::int64_t walk_out_degree(const WalkOptions& options, std::int64_t j);

// A dense symmetric matrix with a prescribed spectrum: A = H diag(lambda) H,
// where H = I - 2 v v^T / (v^T v) is the Householder reflector of a hashed v.
enum class Spectrum { linear, geometric };
// Eigenvalue k (0-based, in decreasing order): linear k -> n - k (so n, n-1,
// ..., 1); geometric k -> ratio^k.
double spectrum_value(Spectrum spectrum, std::int64_t n, double ratio, std::int64_t k);
struct DenseRows {
  std::int64_t row_begin = 0;
  std::int64_t local_rows = 0;
  std::vector<double> values;  // local_rows x n, row-major
};
DenseRows generate_dense_spectrum(MPI_Comm comm, std::int64_t n, Spectrum spectrum, double ratio,
                                  std::uint64_t seed);

// Adjacency matrix of the hypercube graph Q_dim: n = 2^dim nodes, i ~ j when
// they differ in exactly one bit. Symmetric, every node of degree dim.
CsrRows generate_hypercube(MPI_Comm comm, int dim);

// A uniformly distributed double in [0, 1) from (seed, a, b): the counter-based
// random numbers every generator and start vector uses.
double hashed_uniform(std::uint64_t seed, std::uint64_t a, std::uint64_t b = 0);

}  // namespace lodestone::io
