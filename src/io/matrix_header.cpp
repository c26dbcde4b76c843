// Reading and checking the group attributes of a matrix file.
#include <fmt/format.h>
#include <petscsys.h>
#include <unistd.h>

#include <algorithm>
#include <limits>

#include "io/h5.hpp"
#include "io/layout.hpp"
#include "io/matrix_reader.hpp"
#include "support/format.hpp"

namespace lodestone::io {

std::int64_t max_index() { return static_cast<std::int64_t>(PETSC_MAX_INT); }

int ranks_on_node(MPI_Comm comm) {
  MPI_Comm node = MPI_COMM_NULL;
  int n = 1;
  if (MPI_Comm_split_type(comm, MPI_COMM_TYPE_SHARED, 0, MPI_INFO_NULL, &node) == MPI_SUCCESS) {
    MPI_Comm_size(node, &n);
    MPI_Comm_free(&node);
  }
  return n;
}

Status fits_in_memory(const MatrixHeader& h, double bytes, int node_ranks) {
  const long pages = sysconf(_SC_PHYS_PAGES), page = sysconf(_SC_PAGESIZE);
  const double node = pages > 0 && page > 0 ? static_cast<double>(pages) * static_cast<double>(page)
                                            : std::numeric_limits<double>::infinity();
  const double limit = node / std::max(1, node_ranks);
  if (bytes <= limit) return Status::ok();
  return Status::input(fmt::format("{}: group '{}': loading needs about {} per rank, more than this node's {} of memory "
                                   "shared by {} rank(s) allows; use more nodes",
                                   h.file, h.group, human_bytes(bytes), human_bytes(node), node_ranks));
}

Result<MatrixHeader> read_header(hid_t group, const std::string& file, const std::string& group_path) {
  MatrixHeader h;
  h.file = file;
  h.group = group_path;
  auto where = [&](const std::string& what) { return fmt::format("{}: group '{}': {}", file, group_path, what); };

  auto version = h5::read_int_attribute(group, layout::kFormat);
  if (!version) return Status::input(where(version.status().message()));
  if (*version != layout::kFormatVersion)
    return Status::input(where(fmt::format("format_version is {}; this Lodestone reads version {}", *version,
                                           layout::kFormatVersion)));

  auto kind = h5::read_string_attribute(group, layout::kLayout);
  if (!kind) return Status::input(where(kind.status().message()));
  if (*kind == "csr") h.layout = Layout::csr;
  else if (*kind == "dense") h.layout = Layout::dense;
  else return Status::input(where(fmt::format("layout is '{}'; expected 'csr' or 'dense'", *kind)));

  auto rows = h5::read_int_attribute(group, layout::kRows);
  if (!rows) return Status::input(where(rows.status().message()));
  auto cols = h5::read_int_attribute(group, layout::kCols);
  if (!cols) return Status::input(where(cols.status().message()));
  h.rows = *rows;
  h.cols = *cols;
  if (h.rows <= 0 || h.cols <= 0)
    return Status::input(where(fmt::format("rows and cols must be positive (rows={}, cols={})", h.rows, h.cols)));
  if (h.rows != h.cols)
    return Status::input(where(fmt::format("the matrix is {} x {}; eigenpairs need a square matrix", h.rows, h.cols)));
  if (h.rows > max_index())
    return Status::input(where(fmt::format("{} rows exceed this build's index range ({} with {}-bit PETSc indices); "
                                           "rebuild against petsc64",
                                           h.rows, max_index(), 8 * sizeof(PetscInt))));

  if (h5::has_attribute(group, layout::kSymmetric)) {
    auto sym = h5::read_int_attribute(group, layout::kSymmetric);
    if (!sym) return Status::input(where(sym.status().message()));
    if (*sym != 0 && *sym != 1) return Status::input(where(fmt::format("symmetric is {}; expected 0 or 1", *sym)));
    h.symmetric = (*sym == 1);
  }
  return h;
}

}  // namespace lodestone::io
