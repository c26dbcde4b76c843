// Matrix entries on the move: routing (row, column, value) triplets to the
// rank that owns their row, and assembling a rank's triplets into CSR rows.
//
// Used by the Matrix Market import (entries are parsed wherever their line
// falls in the file) and by generators whose entries are easiest to produce by
// column (the walk generator). Rows are owned by an even split
// (io/partition.hpp). Exchanges happen in rounds: the caller adds entries until
// a round is full, then every rank calls exchange() together, so send buffers
// stay bounded however large the matrix is.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <vector>

#include "io/matrix_writer.hpp"
#include "io/mm_parse.hpp"
#include "io/partition.hpp"

namespace lodestone::io {

// The rank that owns `row` under even_split(n, rank, parts).
int even_owner(std::int64_t n, int parts, std::int64_t row);

class EntryRouter {
 public:
  EntryRouter(MPI_Comm comm, std::int64_t n);
  EntryRouter(const EntryRouter&) = delete;
  EntryRouter& operator=(const EntryRouter&) = delete;
  ~EntryRouter();

  void add(const mm::Entry& e) {
    outgoing_[static_cast<std::size_t>(even_owner(n_, size_, e.row))].push_back(e);
    ++pending_;
  }
  // Entries added since the last exchange.
  std::int64_t pending() const { return pending_; }
  // Collective: delivers every pending entry to the owner of its row.
  void exchange();
  // Everything this rank has received so far (entries of its own rows).
  std::vector<mm::Entry>& received() { return received_; }

 private:
  MPI_Comm comm_;
  std::int64_t n_;
  int size_;
  MPI_Datatype type_ = MPI_DATATYPE_NULL;
  std::vector<std::vector<mm::Entry>> outgoing_;
  std::vector<mm::Entry> received_;
  std::int64_t pending_ = 0;
};

// The entries per rank and round to use instead of `wanted`: at least 1, and
// small enough that one rank receiving everything sent in a round (each entry
// possibly mirrored) still fits MPI's int counts.
std::int64_t bounded_round(MPI_Comm comm, std::int64_t wanted);

// Sorts the entries (all in rows [range.begin, range.end)) by row and column,
// sums duplicates, and returns them as CSR rows. Empties `entries`.
CsrRows assemble_rows(RowRange range, std::vector<mm::Entry>& entries);

}  // namespace lodestone::io
