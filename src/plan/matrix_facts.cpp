// read_facts: a matrix file's metadata, for sizing (plan/matrix_facts.hpp).
#include "plan/matrix_facts.hpp"

#include <fmt/format.h>

#include "io/h5.hpp"
#include "io/layout.hpp"
#include "io/matrix_reader.hpp"
#include "support/collective.hpp"

namespace lodestone::plan {

Result<MatrixFacts> read_facts(MPI_Comm comm, const std::string& path, const std::string& group) {
  auto file = h5::open_read(comm, path);
  if (!file) return file.status();
  auto g = h5::open_group(file->get(), group, path);
  LODESTONE_TRY(agree(comm, g.status()));
  auto header = io::read_header(g->get(), path, group);
  LODESTONE_TRY(agree(comm, header.status()));
  MatrixFacts f;
  f.layout = header->layout;
  f.rows = header->rows;
  f.symmetric = header->symmetric;
  if (f.layout == Layout::dense) {
    f.nnz = f.rows * f.rows;
    return f;
  }
  Status s;
  if (H5Lexists(g->get(), layout::kColumnIndices, H5P_DEFAULT) <= 0)
    s = Status::input(fmt::format("{}: group '{}': missing dataset '{}'", path, group, layout::kColumnIndices));
  if (s) {
    h5::Handle col(H5Dopen2(g->get(), layout::kColumnIndices, H5P_DEFAULT));
    auto shape = h5::dataset_shape(col.get());
    if (!shape || shape->dims.size() != 1)
      s = Status::input(fmt::format("{}: dataset '{}/column_indices' must be one-dimensional", path, group));
    else {
      f.nnz = shape->dims[0];
      f.file_index_bytes = static_cast<double>(shape->type_size);
    }
  }
  LODESTONE_TRY(agree(comm, s));
  return f;
}

}  // namespace lodestone::plan
