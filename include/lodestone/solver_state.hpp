// SolverState: everything a method needs to continue where it stopped.
//
// A method exports its state as named distributed blocks (tall vectors stored by
// global row, like the matrix: this rank holds rows [row_begin, row_end)),
// named small replicated arrays, and named integer counters. The checkpoint
// layer stores these generically, by global row, so a state written by p ranks
// can be read back by any other number of ranks; it never needs to know which
// method wrote it.
#pragma once

#include <cstdint>
#include <map>
#include <string>
#include <vector>

namespace lodestone {

// A tall block of `columns` vectors: this rank's rows, column by column
// (local[j * local_rows + i]).
struct StateBlock {
  std::int64_t columns = 0;
  std::vector<double> local;
};

struct SolverState {
  std::string method;                                   // the method that wrote it
  std::int64_t rows = 0;                                // global length of every block
  std::int64_t row_begin = 0;                           // this rank's rows
  std::int64_t row_end = 0;
  std::map<std::string, StateBlock> blocks;             // distributed
  std::map<std::string, std::vector<double>> arrays;    // replicated, small
  std::map<std::string, std::int64_t> counters;         // replicated
  std::int64_t local_rows() const { return row_end - row_begin; }
};

}  // namespace lodestone
