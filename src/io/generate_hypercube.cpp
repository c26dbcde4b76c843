// The hypercube generator: adjacency matrix of Q_dim (i ~ j when i XOR j is a power of two).
#include "io/generators.hpp"
#include "io/partition.hpp"
#include "support/collective.hpp"

namespace lodestone::io {

CsrRows generate_hypercube(MPI_Comm comm, int dim) {
  const std::int64_t n = std::int64_t{1} << dim;
  const RowRange mine = even_split(n, comm_rank(comm), comm_size(comm));
  CsrRows out;
  out.row_begin = mine.begin;
  out.columns.reserve(static_cast<std::size_t>(mine.size() * dim));
  out.values.reserve(static_cast<std::size_t>(mine.size() * dim));
  for (std::int64_t i = mine.begin; i < mine.end; ++i) {
    // Neighbours in increasing order: first those with a set bit cleared (high bit
    // first), then those with a clear bit set (low bit first).
    for (int b = dim - 1; b >= 0; --b)
      if (i >> b & 1) out.columns.push_back(i ^ (std::int64_t{1} << b)), out.values.push_back(1.0);
    for (int b = 0; b < dim; ++b)
      if (!(i >> b & 1)) out.columns.push_back(i ^ (std::int64_t{1} << b)), out.values.push_back(1.0);
    out.offsets.push_back(static_cast<std::int64_t>(out.columns.size()));
  }
  return out;
}

}  // namespace lodestone::io
