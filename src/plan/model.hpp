// The performance and memory model behind `lodestone plan` (docs/performance-model.md).
//
// Everything here is a pure function of a few counts — rows and nonzeros of the
// heaviest rank, ghost values, block width, rank count — and of a MachineModel
// whose defaults are stated (and marked "common practice" where they are not
// measured) and which a calibration file overrides. Pure, so unit tests check
// every number against a hand computation.
#pragma once

#include <cstdint>
#include <string>

#include "lodestone/plan.hpp"
#include "plan/partition_scan.hpp"

namespace lodestone::plan {

struct MachineModel {
  // Memory traffic one rank sustains while every core of the node streams
  // (common practice: a node's STREAM bandwidth shared by its cores, 2-5 GB/s each).
  double memory_bandwidth = 4e9;
  // From a calibration: seconds per stored nonzero per single-vector product on
  // one rank; when > 0 it replaces the bandwidth estimate of a matrix pass.
  double seconds_per_nonzero = 0;
  double flop_rate = 2e9;            // dense kernel flop/s per rank (common practice)
  double reduction_latency = 5e-6;   // seconds per log2(p) stage of a global sum (common practice)
  double message_latency = 5e-6;     // seconds per halo message (common practice)
  double network_bandwidth = 5e9;    // halo bytes/s per rank (common practice)
  std::int64_t halo_neighbours = 6;  // messages per halo exchange, at most p-1 (common practice: 3-D stencil)
  double read_bandwidth = 1e9;       // file system bytes/s for the whole job, loading the matrix (common practice)
  double checkpoint_bandwidth = 1e9; // file system bytes/s for the whole job, writing checkpoints (common practice)
  // Bytes per rank for MPI + PETSc + HDF5: 45 MiB measured here (peak RSS of `inspect --check` on a
  // 100-row matrix, 1 and 2 ranks, shared-memory transport); 64 MiB leaves room for network buffers.
  double library_overhead = 64.0 * 1024 * 1024;
  double safety_fraction = 0.2;      // margin on the per-rank estimate (common practice)
  double node_reserve_fraction = 0.05;  // share of node memory left to the system (common practice)
  double index_bytes = 4;            // bytes of a PETSc index in this build (set from PetscInt)
  double file_index_bytes = 8;       // bytes of a column index in the file
  std::int64_t read_chunk_entries = std::int64_t{1} << 22;  // LoadOptions::chunk_entries
  // Matvecs each pair needs, low and high (common practice; a calibration replaces them).
  double matvecs_per_pair_low = 0, matvecs_per_pair_high = 0;  // 0: the method's default
  std::string calibrated_method;     // the method a calibration's convergence figures came from
  std::string speed_source = "defaults (common practice, not measured here)";
  std::string convergence_source = "defaults (common practice, not measured here)";
};

// How a method uses memory and time, per iteration.
struct MethodShape {
  std::string name;                       // power | block | chebyshev | krylov
  std::int64_t pairs = 1;
  std::int64_t block = 1;                 // vectors multiplied together in one pass
  std::int64_t passes_per_iteration = 1;  // matrix passes (Chebyshev: the filter degree)
  std::int64_t blocks_held = 4;           // working blocks of `block` vectors each
  std::int64_t held_at_end = -1;          // vectors still held while the pairs are extracted (-1: X and A X)
  std::int64_t reductions_per_iteration = 3;
  double dense_flops_per_row = 0;         // per iteration, per local row
  std::int64_t startup_matvecs = 0;       // e.g. the Lanczos run that bounds the spectrum
  double default_matvecs_per_pair_low = 0, default_matvecs_per_pair_high = 0;
  std::int64_t checkpoint_vectors = 0;    // vectors a checkpoint must keep
  std::int64_t matvecs_per_iteration() const { return block * passes_per_iteration; }
};

// The block width a method uses by default for K pairs (K plus a few guard vectors),
// as the solver chooses it: block K + max(2, ceil(K/2)), chebyshev K + max(4, floor(K/2)).
std::int64_t default_block(const std::string& method, std::int64_t pairs);
// `block` = 0 picks the default. Method names are power, block, chebyshev, krylov
// (for krylov `block` is its basis size; it multiplies one vector at a time).
MethodShape method_shape(const std::string& method, std::int64_t pairs, std::int64_t block);

// Ghost values the heaviest rank receives per vector: none on one rank; for a
// dense matrix every other row; for CSR the bound min(n - rows, nnz) (the
// column indices are never read, so the true count is not known).
std::int64_t ghost_estimate(bool dense, std::int64_t n, const PartitionStats& part);

MemoryBreakdown rank_memory(const MachineModel& m, const MethodShape& s, bool dense, bool symmetric, std::int64_t n,
                            const PartitionStats& part, std::int64_t ghosts);

IterationTime iteration_time(const MachineModel& m, const MethodShape& s, bool dense, std::int64_t n,
                             const PartitionStats& part, std::int64_t ghosts);

// Seconds to read the matrix file (the reader passes over the column indices twice).
double load_time(const MachineModel& m, bool dense, std::int64_t n, std::int64_t nnz);

// ceil(log2(p)), 0 for p <= 1.
std::int64_t log2_ceil(std::int64_t p);

}  // namespace lodestone::plan
