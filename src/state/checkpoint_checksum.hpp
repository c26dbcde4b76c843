// Checksums that let a reader tell a damaged checkpoint from a good one.
//
// A distributed block's checksum is the sum, modulo 2^64, of a hash of every
// (block name, global row, column, value bits): it does not depend on how rows
// are split over ranks, so a reader on any rank count recomputes it from the
// rows it read and one reduction. Everything small (identity, counters,
// arrays, history) is hashed in a fixed order, identically on every rank.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <string>

#include "lodestone/checkpoint.hpp"

namespace lodestone::ckpt {

// Collective: checksum of `block` whose local rows start at global row_begin.
std::uint64_t block_checksum(MPI_Comm comm, const std::string& name, const StateBlock& block, std::int64_t row_begin,
                             std::int64_t local_rows);

// Local, same on every rank: everything in ckpt except the distributed blocks
// and the facts of writing (time, rank count).
std::uint64_t small_checksum(const Checkpoint& ckpt);

}  // namespace lodestone::ckpt
