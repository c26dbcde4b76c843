// Matrix file summary for `lodestone inspect` and the planner.
#include "io/matrix_summary.hpp"

#include <fmt/format.h>
#include <petscsys.h>

#include <algorithm>
#include <vector>

#include "io/h5.hpp"
#include "io/layout.hpp"
#include "io/matrix_reader.hpp"
#include "io/partition.hpp"
#include "support/collective.hpp"

namespace lodestone::io {

double matrix_bytes(Layout layout, std::int64_t rows, std::int64_t nnz) {
  if (layout == Layout::dense) return 8.0 * static_cast<double>(rows) * static_cast<double>(rows);
  return static_cast<double>(nnz) * (8.0 + sizeof(PetscInt)) + static_cast<double>(rows) * 3.0 * sizeof(PetscInt);
}

static std::string type_name(hid_t ds) {
  h5::Handle t(H5Dget_type(ds));
  auto cls = H5Tget_class(t.get());
  std::size_t size = H5Tget_size(t.get());
  return fmt::format("{}{}", cls == H5T_FLOAT ? "float" : cls == H5T_INTEGER ? "int" : "other", 8 * size);
}

Result<MatrixSummary> summarize_matrix(MPI_Comm comm, const std::string& path, const std::string& group_path) {
  auto file = h5::open_read(comm, path);
  if (!file) return file.status();
  auto group = h5::open_group(file->get(), group_path, path);
  LODESTONE_TRY(agree(comm, group.status()));
  auto header = read_header(group->get(), path, group_path);
  LODESTONE_TRY(agree(comm, header.status()));
  MatrixSummary out;
  out.layout = header->layout;
  out.rows = header->rows;
  out.symmetric = header->symmetric;
  const std::int64_t n = header->rows;
  if (header->layout == Layout::dense) {
    out.nnz = n * n;
    out.row_nnz_min = out.row_nnz_max = n;
    out.row_nnz_mean = static_cast<double>(n);
    if (H5Lexists(group->get(), layout::kValues, H5P_DEFAULT) > 0) {
      h5::Handle v(H5Dopen2(group->get(), layout::kValues, H5P_DEFAULT));
      out.value_type = type_name(v.get());
    }
    out.bytes_in_memory = matrix_bytes(out.layout, n, out.nnz);
    return out;
  }
  Status s;
  h5::Handle off, col, val;
  for (const char* name : {layout::kRowOffsets, layout::kColumnIndices, layout::kValues})
    if (s && H5Lexists(group->get(), name, H5P_DEFAULT) <= 0)
      s = Status::input(fmt::format("{}: group '{}': missing dataset '{}'", path, group_path, name));
  if (s) {
    off = h5::Handle(H5Dopen2(group->get(), layout::kRowOffsets, H5P_DEFAULT));
    col = h5::Handle(H5Dopen2(group->get(), layout::kColumnIndices, H5P_DEFAULT));
    val = h5::Handle(H5Dopen2(group->get(), layout::kValues, H5P_DEFAULT));
    auto shape = h5::dataset_shape(off.get());
    auto bad = [&](const std::string& what) {
      return Status::input(fmt::format("{}: dataset '{}/row_offsets': {}", path, group_path, what));
    };
    if (!off.valid() || !col.valid() || !val.valid() || !shape)
      s = Status::input(fmt::format("{}: group '{}': cannot open the CSR datasets", path, group_path));
    else if (shape->type_class != H5T_INTEGER) s = bad("must hold integers");
    else if (shape->dims.size() != 1) s = bad("must be one-dimensional");
    else if (shape->dims[0] != n + 1)
      s = bad(fmt::format("has length {}, expected rows+1 = {}", shape->dims[0], n + 1));
  }
  LODESTONE_TRY(agree(comm, s));
  out.value_type = type_name(val.get());
  out.index_type = type_name(col.get());
  RowRange even = even_split(n, comm_rank(comm), comm_size(comm));
  std::int64_t lo = INT64_MAX, hi = 0;
  // Read the slice in pieces to keep memory small.
  const std::int64_t piece = 1 << 20;
  const std::int64_t rounds = max_all(comm, (even.size() + piece - 1) / piece);
  std::vector<std::int64_t> buf;
  for (std::int64_t k = 0; k < rounds; ++k) {
    const std::int64_t b = even.begin + k * piece;
    const std::int64_t count = std::clamp<std::int64_t>(even.end - b, 0, piece);
    buf.resize(static_cast<std::size_t>(count + 1));
    Status rs = h5::read_range(off.get(), H5T_NATIVE_INT64, count ? b : 0, count ? count + 1 : 0, buf.data());
    if (!rs) rs = Status::input(fmt::format("{}: {}", path, rs.message()));
    LODESTONE_TRY(agree(comm, rs));
    for (std::int64_t i = 0; i < count; ++i) {
      const std::int64_t len = buf[static_cast<std::size_t>(i) + 1] - buf[static_cast<std::size_t>(i)];
      lo = std::min(lo, len);
      hi = std::max(hi, len);
    }
  }
  out.row_nnz_min = min_all(comm, lo);
  out.row_nnz_max = max_all(comm, hi);
  auto cshape = h5::dataset_shape(col.get());
  out.nnz = cshape && !cshape->dims.empty() ? cshape->dims[0] : 0;
  out.row_nnz_mean = static_cast<double>(out.nnz) / static_cast<double>(n);
  out.bytes_in_memory = matrix_bytes(out.layout, n, out.nnz);
  return out;
}

}  // namespace lodestone::io
