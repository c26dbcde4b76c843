// open_matrix / read_facts: a matrix file's metadata, for sizing (plan/matrix_facts.hpp).
#include "plan/matrix_facts.hpp"

#include <fmt/format.h>

#include "io/h5.hpp"
#include "io/layout.hpp"
#include "io/matrix_reader.hpp"
#include "support/collective.hpp"

namespace lodestone::plan {

Result<OpenMatrix> open_matrix(MPI_Comm comm, const std::string& path, const std::string& group) {
  OpenMatrix m;
  m.path = path;
  m.group = group;
  auto file = h5::open_read(comm, path);
  if (!file) return file.status();
  m.file = std::move(*file);
  auto g = h5::open_group(m.file.get(), group, path);
  LODESTONE_TRY(agree(comm, g.status()));
  m.group_handle = std::move(*g);
  auto header = io::read_header(m.group_handle.get(), path, group);
  LODESTONE_TRY(agree(comm, header.status()));
  MatrixFacts& f = m.facts;
  f.layout = header->layout;
  f.rows = header->rows;
  f.symmetric = header->symmetric;
  if (f.layout == Layout::dense) {
    f.nnz = f.rows * f.rows;
    return m;
  }
  Status s;
  if (H5Lexists(m.group_handle.get(), layout::kColumnIndices, H5P_DEFAULT) <= 0)
    s = Status::input(fmt::format("{}: group '{}': missing dataset '{}'", path, group, layout::kColumnIndices));
  if (s) {
    h5::Handle col(H5Dopen2(m.group_handle.get(), layout::kColumnIndices, H5P_DEFAULT));
    auto shape = h5::dataset_shape(col.get());
    if (!shape || shape->dims.size() != 1)
      s = Status::input(fmt::format("{}: dataset '{}/column_indices' must be one-dimensional", path, group));
    else {
      f.nnz = shape->dims[0];
      f.file_index_bytes = static_cast<double>(shape->type_size);
    }
  }
  LODESTONE_TRY(agree(comm, s));
  return m;
}

Result<MatrixFacts> read_facts(MPI_Comm comm, const std::string& path, const std::string& group) {
  auto m = open_matrix(comm, path, group);
  if (!m) return m.status();
  return m->facts;
}

}  // namespace lodestone::plan
