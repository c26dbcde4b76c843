// Agreeing on failure across ranks.
//
// A rank that fails alone while the others enter a collective call hangs the
// whole job. Every collective step in Lodestone therefore ends with agree():
// each rank offers its local Status, and all ranks leave with the same one —
// the failure of the lowest-numbered failing rank, or success.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <string_view>

#include "lodestone/status.hpp"

namespace lodestone {

// Collective over comm. Returns the first failing rank's Status on every rank.
Status agree(MPI_Comm comm, const Status& local);

int comm_rank(MPI_Comm comm);
int comm_size(MPI_Comm comm);

// Small collective helpers on 64-bit integers and doubles.
std::int64_t sum_all(MPI_Comm comm, std::int64_t v);
std::int64_t max_all(MPI_Comm comm, std::int64_t v);
std::int64_t min_all(MPI_Comm comm, std::int64_t v);
std::uint64_t sum_all_u64(MPI_Comm comm, std::uint64_t v);
double sum_all(MPI_Comm comm, double v);
double max_all(MPI_Comm comm, double v);
std::int64_t exclusive_prefix_sum(MPI_Comm comm, std::int64_t v);

// Collective. Checks that the ranks' row blocks [row_begin, row_begin + local_rows)
// are contiguous, in rank order and cover exactly 0..rows; counts that add up are
// not enough, since overlapping ranges would leave rows unwritten. Returns the
// agreed Status; `what` opens the message ("checkpoint", say).
Status check_row_blocks(MPI_Comm comm, std::int64_t row_begin, std::int64_t local_rows, std::int64_t rows,
                        std::string_view what);

}  // namespace lodestone
