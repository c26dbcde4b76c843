// One pass over a CSR file's row_offsets that sizes the nonzero-balanced
// partition for many candidate rank counts at once.
//
// The reader (io::balanced_split) starts rank k of p at the first row r with
// offsets[r] + r >= k * (nnz + n) / p. The planner needs, for every rank count
// it considers, the heaviest part under exactly that rule — without a
// global-length array and without reading column indices or values. Each MPI
// rank of the planner streams its even slice of row_offsets in chunks; for each
// candidate p a cursor walks that p's targets, finding each boundary by binary
// search inside the chunk (weights are strictly increasing), so the cost is one
// read of row_offsets plus O(sum of candidate p * log chunk). Per candidate a
// rank keeps only its first and last boundary and the heaviest part strictly
// inside its slice; one small all-gather stitches the parts that straddle
// slices. The scan works the same on 1 rank (simulating every p) or under mpirun.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <span>
#include <string>
#include <vector>

#include "lodestone/status.hpp"
#include "plan/matrix_facts.hpp"

namespace lodestone::plan {

// The partition of one candidate rank count.
struct PartitionStats {
  int parts = 0;
  std::int64_t heaviest_rows = 0;  // rows of the part with the most nonzeros
  std::int64_t heaviest_nnz = 0;   // its nonzeros
  std::int64_t heaviest_first_row = 0;
  std::int64_t max_rows = 0;       // most rows of any part
  std::int64_t empty_parts = 0;    // parts that got no rows
};

// Streams boundaries for a set of candidate part counts over offsets delivered
// in row order, in any number of chunks. Pure (no MPI): one instance per slice.
class BoundaryScanner {
 public:
  // total = nnz + n. `begin` is the first row whose boundary events this
  // scanner owns; `prev_weight` is offsets[begin-1] + begin-1 (ignored when begin = 0).
  BoundaryScanner(std::vector<int> parts, std::int64_t n, std::int64_t nnz, std::int64_t begin,
                  std::int64_t prev_weight);
  // offsets[first_row .. first_row + chunk.size()) in row order, continuing where the last chunk ended.
  void feed(std::int64_t first_row, std::span<const std::int64_t> chunk);

  // What one scanner knows about one candidate, to be stitched with its neighbours.
  struct Local {
    std::int64_t count = 0;                 // boundaries found (including 0 and n when owned)
    std::int64_t first_row = 0, first_off = 0;
    std::int64_t last_row = 0, last_off = 0;
    std::int64_t inner_heaviest_nnz = -1, inner_heaviest_rows = 0, inner_heaviest_first = 0;
    std::int64_t inner_max_rows = 0, inner_empty = 0;
  };
  const std::vector<Local>& locals() const { return local_; }
  const std::vector<int>& parts() const { return parts_; }

 private:
  long double target(std::size_t c, std::int64_t k) const;
  void boundary(std::size_t c, std::int64_t row, std::int64_t off);
  std::vector<int> parts_;
  std::int64_t n_, nnz_;
  long double total_;
  std::vector<std::int64_t> next_k_;  // per candidate: index of the next boundary to find
  std::vector<Local> local_;
};

// Combines the scanners of consecutive slices (in row order) into the stats of
// every candidate. Pure; `slices[s]` is the s-th slice's locals().
std::vector<PartitionStats> stitch(const std::vector<int>& parts,
                                   const std::vector<std::vector<BoundaryScanner::Local>>& slices);

// Collective over comm: reads `row_offsets` of the CSR matrix opened by
// open_matrix (its header and nnz already read there) in chunks of `chunk_rows`
// and returns the stats of each candidate. Candidates larger than n are allowed
// (some parts are then empty).
Result<std::vector<PartitionStats>> scan_partitions(MPI_Comm comm, const OpenMatrix& matrix,
                                                    const std::vector<int>& parts,
                                                    std::int64_t chunk_rows = std::int64_t{1} << 20);

// The same stats for a dense matrix, whose reader splits rows evenly.
PartitionStats dense_partition(std::int64_t n, int parts);

}  // namespace lodestone::plan
