// Internals of reading a matrix in the file layout: shared between the CSR and
// dense readers and the load entry point (api/matrix.cpp).
#pragma once

#include <hdf5.h>
#include <mpi.h>

#include <new>
#include <string>

#include "lodestone/matrix.hpp"

namespace lodestone::io {

// The validated group attributes of a matrix.
struct MatrixHeader {
  Layout layout = Layout::csr;
  std::int64_t rows = 0;
  std::int64_t cols = 0;
  bool symmetric = false;
  std::string file;   // for messages
  std::string group;  // for messages
};

// Reads and checks the attributes of the group (same result on every rank).
Result<MatrixHeader> read_header(hid_t group, const std::string& file, const std::string& group_path);

// Collective readers; each validates its datasets and builds the PETSc matrix.
Result<Matrix> read_csr(MPI_Comm comm, hid_t group, const MatrixHeader& header, const LoadOptions& options);
Result<Matrix> read_dense(MPI_Comm comm, hid_t group, const MatrixHeader& header, const LoadOptions& options);

// Collective. Checks |a_ij - a_ji| <= tol * max|a| and names the first failing row.
// Sparse: with a transpose and a difference (two more matrices of about A's size).
// Dense: without a copy, other ranks' columns received at most piece_values values
// (16 MiB by default) at a time.
inline constexpr std::int64_t kSymmetryPieceValues = std::int64_t{1} << 21;
Status check_symmetric(Mat a, double tolerance, const std::string& where,
                       std::int64_t piece_values = kSymmetryPieceValues);

// The largest row or column count this build's PETSc index type can hold.
std::int64_t max_index();

// Collective: how many ranks of comm share this rank's node (and its memory).
int ranks_on_node(MPI_Comm comm);
// Refuses, before anything is allocated, a rank share of `bytes` larger than this
// node's physical memory divided by the ranks on it (a damaged or hostile
// header, or far too few ranks). Local; the caller agrees on the result.
Status fits_in_memory(const MatrixHeader& h, double bytes, int node_ranks);

// Runs an allocation, turning std::bad_alloc into a Status the ranks can agree
// on (a lone rank throwing would leave the others waiting in a collective call).
template <class F>
Status allocate(const MatrixHeader& h, F&& f) {
  try {
    f();
    return Status::ok();
  } catch (const std::bad_alloc&) {
    return Status::input(h.file + ": group '" + h.group + "': out of memory while loading; use more ranks");
  }
}

}  // namespace lodestone::io
