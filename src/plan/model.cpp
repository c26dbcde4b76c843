// Memory and time of one rank under the planner's model (plan/model.hpp).
#include "plan/model.hpp"

#include <algorithm>
#include <cmath>

#include "io/matrix_reader.hpp"

namespace lodestone::plan {

std::int64_t log2_ceil(std::int64_t p) {
  std::int64_t k = 0;
  while ((std::int64_t{1} << k) < p) ++k;
  return k;
}

std::int64_t default_block(const std::string& method, std::int64_t pairs) {
  if (method == "chebyshev") return pairs + std::max<std::int64_t>(4, pairs / 2);
  return pairs + std::max<std::int64_t>(2, (pairs + 1) / 2);
}

MethodShape method_shape(const std::string& method, std::int64_t pairs, std::int64_t block) {
  MethodShape s;
  s.name = method;
  s.pairs = pairs;
  if (method == "power") {
    // x, A x, the residual and a restart vector; one global sum for the
    // projections against the locked vectors, one norm, one Rayleigh quotient.
    s.block = 1;
    s.blocks_held = 4;
    s.passes_per_iteration = 1;
    s.reductions_per_iteration = 3;
    s.dense_flops_per_row = 4.0 * static_cast<double>(pairs);  // project out locked vectors, twice
    s.default_matvecs_per_pair_low = 100;
    s.default_matvecs_per_pair_high = 1000;
    s.checkpoint_vectors = pairs + 1;
    return s;
  }
  if (method == "krylov") {
    // One vector per product (src/methods/krylov_method.cpp): a basis of m + 1 vectors,
    // m = max(2K+1, K+16) or --block-size (at least K+1), and nothing beside it (the
    // products go from column to column of the basis, the restart rotates it in place).
    const std::int64_t m = block > 0 ? std::max(block, pairs + 1) : std::max(2 * pairs + 1, pairs + 16);
    const std::int64_t keep = std::min(m - 1, pairs + (m - pairs) / 2);
    s.block = 1;
    s.blocks_held = m + 1;
    s.held_at_end = m + 1;  // the basis, beside which the extraction makes its blocks
    s.passes_per_iteration = 1;
    // Classical Gram-Schmidt, one sum a pass; a second pass when the first removed more
    // than half of w's squared norm. The model counts two (a converging run needs them).
    s.reductions_per_iteration = 2;
    // Per product: two passes of V^T w and w - V c over about m columns (8m flops a row),
    // and the restart's rotation V U (2 m keep a row) shared by the m - keep products of a cycle.
    const double md = static_cast<double>(m), kd = static_cast<double>(keep);
    s.dense_flops_per_row = 8.0 * md + 2.0 * md * kd / std::max(1.0, md - kd);
    s.default_matvecs_per_pair_low = 15;
    s.default_matvecs_per_pair_high = 1500;
    s.checkpoint_vectors = keep + 1;
    return s;
  }
  s.block = block > 0 ? block : default_block(method, pairs);
  const double b = static_cast<double>(s.block);
  // Orthonormalize the block twice and rotate it by the Ritz vectors: ~6 b^2 flops per row.
  s.dense_flops_per_row = 6.0 * b * b;
  s.reductions_per_iteration = 4;  // Gram matrix (twice), projected matrix, residual norms
  s.checkpoint_vectors = s.block + pairs;
  if (method == "chebyshev") {
    s.passes_per_iteration = 10;     // filter degree: the solver starts at 10 and adapts it (4 to 400)
    // The subspace (X and A X), the filter's recurrence (two more; one for a sparse matrix,
    // whose products fold the recurrence's update into the pass) and the Rayleigh-Ritz
    // temporaries (two more): 6, from the measured peak of whole solves (docs/performance-model.md);
    // for a sparse matrix one block generous (measured 1.05-1.13 x the peak).
    s.blocks_held = 6;
    s.startup_matvecs = 24;          // Lanczos run bounding the unwanted interval
    s.default_matvecs_per_pair_low = 60;
    s.default_matvecs_per_pair_high = 600;
  } else {
    s.passes_per_iteration = 1;
    s.blocks_held = 3;               // X, A X and a workspace
    s.default_matvecs_per_pair_low = 150;
    s.default_matvecs_per_pair_high = 1500;
  }
  return s;
}

std::int64_t ghost_estimate(bool dense, std::int64_t n, const PartitionStats& part) {
  if (part.parts <= 1) return 0;
  if (dense) return n - part.heaviest_rows;
  return std::min(n - part.heaviest_rows, part.heaviest_nnz);
}

MemoryBreakdown rank_memory(const MachineModel& m, const MethodShape& s, bool dense, bool symmetric, std::int64_t n,
                            const PartitionStats& part, std::int64_t ghosts) {
  MemoryBreakdown out;
  const double rows = static_cast<double>(part.heaviest_rows);
  const double nnz = static_cast<double>(part.heaviest_nnz);
  const double vrows = static_cast<double>(std::max(part.max_rows, part.heaviest_rows));
  // Values, column indices and three index arrays per row (row pointers, lengths, diagonal/off-diagonal split).
  out.matrix = dense ? 8.0 * rows * static_cast<double>(n) : nnz * (8.0 + m.index_bytes) + rows * 3.0 * m.index_bytes;
  // Working blocks, or at the end, when the pairs are extracted, X and A X (krylov: its
  // basis) with three K-wide blocks beside them: the eigenvectors, their product with A (the certified
  // residuals) and the copy in the reported order. For power (one vector) and block
  // the end is the larger: a 2M-row walk with power, K = 4, peaked there at 1.6x the
  // working-block figure.
  const double working = static_cast<double>(s.blocks_held * s.block);
  const double held = s.held_at_end >= 0 ? static_cast<double>(s.held_at_end) : 2.0 * static_cast<double>(s.block);
  const double finishing = held + 3.0 * static_cast<double>(s.pairs);
  out.vectors = 8.0 * vrows * std::max(working, finishing);
  out.locked = 8.0 * vrows * static_cast<double>(s.pairs);
  // Ghost values of one block product are received into one buffer and the rows others need are
  // packed into another of about the same size: two buffers of b values per ghost row, and its index.
  // Besides, the matrix keeps its own ghost bookkeeping for the whole solve: per ghost
  // column its global index, a global-to-local hash entry, a slot in the ghost vector
  // and the scatter's index lists on the receiving and the owning rank. 8 + 10 i bytes
  // a ghost fits the measured peaks (a 10^6-row walk at 2 and 4 ranks, block and krylov;
  // docs/performance-model.md).
  out.halo = static_cast<double>(ghosts) * (16.0 * static_cast<double>(s.block) + m.index_bytes) +
             static_cast<double>(ghosts) * (8.0 + 10.0 * m.index_bytes);
  if (!dense) {
    // csr_reader: a chunk of int64 columns, double values and PETSc columns; offsets and two count arrays.
    const double chunk = static_cast<double>(std::min<std::int64_t>(m.read_chunk_entries, std::max<std::int64_t>(part.heaviest_nnz, 1)));
    out.read_buffers = chunk * (8.0 + 8.0 + m.index_bytes) + (rows + 1) * 8.0 + rows * 2.0 * m.index_bytes;
  }
  // Matrix::load checks a matrix declared symmetric. Sparse: a transpose and a difference,
  // two more copies (the difference of two patterns is a new matrix). Dense: in place
  // (io/symmetry_check.cpp), with one value per row and, on p > 1 ranks, one piece of
  // another rank's columns at a time (at most io::kSymmetryPieceValues values).
  if (symmetric) {
    if (dense) {
      const double piece = part.parts > 1 ? std::min(static_cast<double>(io::kSymmetryPieceValues), rows * rows) : 0.0;
      out.symmetry_check = 8.0 * (rows + piece);
    } else {
      out.symmetry_check = 2.0 * out.matrix;
    }
  }
  out.library = m.library_overhead;
  out.margin = m.safety_fraction * out.peak();
  return out;
}

IterationTime iteration_time(const MachineModel& m, const MethodShape& s, bool dense, std::int64_t n,
                             const PartitionStats& part, std::int64_t ghosts) {
  IterationTime t;
  const double rows = static_cast<double>(part.heaviest_rows);
  const double nnz = static_cast<double>(part.heaviest_nnz);
  const double b = static_cast<double>(s.block);
  const double g = static_cast<double>(ghosts);
  const double passes = static_cast<double>(s.passes_per_iteration);
  double pass = 0;
  if (m.seconds_per_nonzero > 0) {
    pass = b * nnz * m.seconds_per_nonzero;
  } else {
    // Values + column indices + row offsets, once per pass; then the block: read
    // x (own and ghost rows), write y.
    const double matrix_bytes = dense ? 8.0 * nnz : nnz * (8.0 + m.index_bytes) + (rows + 1) * m.index_bytes;
    const double vector_bytes = 8.0 * b * ((rows + g) + rows);
    pass = (matrix_bytes + vector_bytes) / m.memory_bandwidth;
  }
  t.matrix_passes = passes * pass;
  const std::int64_t p = part.parts;
  if (p > 1) {
    const double messages = dense ? static_cast<double>(log2_ceil(p))  // a dense product gathers all of x
                                  : static_cast<double>(std::min<std::int64_t>(p - 1, m.halo_neighbours));
    t.halo = passes * (messages * m.message_latency + 8.0 * b * g / m.network_bandwidth);
    t.reductions = static_cast<double>(s.reductions_per_iteration * log2_ceil(p)) * m.reduction_latency;
  }
  t.dense = s.dense_flops_per_row * std::max(rows, static_cast<double>(part.max_rows)) / m.flop_rate;
  return t;
}

double load_time(const MachineModel& m, bool dense, std::int64_t n, std::int64_t nnz) {
  const double bytes = dense ? 8.0 * static_cast<double>(n) * static_cast<double>(n)
                             : static_cast<double>(nnz) * (8.0 + 2.0 * m.file_index_bytes) +
                                   2.0 * 8.0 * static_cast<double>(n + 1);
  return bytes / m.read_bandwidth;
}

}  // namespace lodestone::plan
