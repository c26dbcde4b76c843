// Parallel, streaming import of a Matrix Market file into CSR rows.
//
// Rank 0 reads the banner and size line and shares them. Then every rank
// parses its own line-aligned share of the file's bytes (io/mm_lines.hpp) and
// routes the entries to the owners of their rows (an even row split) in
// bounded rounds (io/mm_entries.hpp); symmetric and skew-symmetric files are
// expanded to both triangles on the way. Each rank finally sorts its entries
// and sums duplicates. Array files are read in two passes: the first counts
// data lines so that each rank knows, by a prefix sum, the ordinal (and so the
// matrix position) of its first value. Exact zeros of array files are not
// stored. No rank holds the whole file or an array of global length.
//
// Every defect is reported as "FILE: line L: what is wrong" and agreed across
// ranks; all ranks take part in every collective call whatever happens.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <string>

#include "io/matrix_writer.hpp"
#include "io/mm_lines.hpp"
#include "io/mm_parse.hpp"

namespace lodestone::io {

struct ImportOptions {
  std::string group = "/matrix";
  // Bytes read from the file at a time by each rank.
  std::size_t chunk_bytes = std::size_t{8} << 20;
  // Entries a rank parses before all ranks exchange what they have.
  std::int64_t round_entries = std::int64_t{1} << 20;
  // The longest line accepted (tests pass a small one).
  std::size_t max_line_bytes = mm::kMaxLineBytes;
};

struct MatrixMarketRows {
  mm::Banner banner;
  std::int64_t n = 0;
  std::int64_t file_entries = 0;  // data lines in the file
  bool symmetric = false;         // true for the `symmetric` symmetry only
  CsrRows rows;                   // this rank's rows of an even split
};

// Collective. Reads and checks the whole file; this rank gets its rows.
Result<MatrixMarketRows> read_matrix_market(MPI_Comm comm, const std::string& path, const ImportOptions& options = {});

// Collective. read_matrix_market, then an atomic write of the matrix file.
Result<MatrixMarketRows> import_matrix_market(MPI_Comm comm, const std::string& input, const std::string& output,
                                              const ImportOptions& options = {});

}  // namespace lodestone::io
