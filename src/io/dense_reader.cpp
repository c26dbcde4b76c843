// Row-partitioned parallel read of a dense matrix into a PETSc dense matrix.
//
// Rows are split evenly (every row costs the same). Each rank reads its rows in
// chunks of whole rows (row-major in the file) and transposes them straight
// into PETSc's column-major local array, so no second full copy is made.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <vector>

#include "io/fingerprint.hpp"
#include "io/h5.hpp"
#include "io/layout.hpp"
#include "io/matrix_reader.hpp"
#include "io/partition.hpp"
#include "support/collective.hpp"
#include "support/petsc_status.hpp"

namespace lodestone::io {

Result<Matrix> read_dense(MPI_Comm comm, hid_t group, const MatrixHeader& h, const LoadOptions& options) {
  const int rank = comm_rank(comm), size = comm_size(comm);
  const std::int64_t n = h.rows;
  auto bad = [&](const std::string& what) {
    return Status::input(fmt::format("{}: dataset '{}/values': {}", h.file, h.group, what));
  };
  h5::Handle values;
  Status s = [&]() -> Status {
    if (H5Lexists(group, layout::kValues, H5P_DEFAULT) <= 0)
      return Status::input(fmt::format("{}: group '{}': missing dataset 'values'", h.file, h.group));
    values = h5::Handle(H5Dopen2(group, layout::kValues, H5P_DEFAULT));
    if (!values.valid()) return bad("not a dataset");
    auto shape = h5::dataset_shape(values.get());
    if (!shape) return bad("cannot read its shape");
    if (shape->type_class != H5T_FLOAT) return bad("must hold floating-point numbers (float64 or float32)");
    if (shape->dims.size() != 2 || shape->dims[0] != h.rows || shape->dims[1] != h.cols) {
      std::string got;
      for (auto d : shape->dims) got += (got.empty() ? "" : " x ") + std::to_string(d);
      return bad(fmt::format("has shape [{}], expected [{} x {}] for layout 'dense'", got, h.rows, h.cols));
    }
    return Status::ok();
  }();
  LODESTONE_TRY(agree(comm, s));

  const RowRange mine = even_split(n, rank, size);
  const std::int64_t m = mine.size();
  const std::int64_t rows_per_chunk = std::max<std::int64_t>(1, options.chunk_entries / std::max<std::int64_t>(1, n));
  const std::int64_t buffered_rows = std::min(rows_per_chunk, std::max<std::int64_t>(m, 1));
  // This rank's rows in PETSc plus one chunk of rows read from the file.
  s = fits_in_memory(h, 8.0 * static_cast<double>(m + buffered_rows) * static_cast<double>(n), ranks_on_node(comm));
  std::vector<double> buf;
  if (s) s = allocate(h, [&] { buf.resize(static_cast<std::size_t>(buffered_rows * n)); });
  LODESTONE_TRY(agree(comm, s));
  Mat a = nullptr;
  s = [&]() -> Status {
    LODESTONE_PETSC(MatCreateDense(comm, static_cast<PetscInt>(m), static_cast<PetscInt>(m), static_cast<PetscInt>(n),
                                   static_cast<PetscInt>(n), nullptr, &a));
    return Status::ok();
  }();
  s = agree(comm, s);
  if (!s) {
    if (a) MatDestroy(&a);
    return s;
  }

  PetscScalar* local = nullptr;
  PetscInt lda = 0;
  MatDenseGetArray(a, &local);
  MatDenseGetLDA(a, &lda);
  const std::int64_t rounds = max_all(comm, (m + rows_per_chunk - 1) / rows_per_chunk);
  FingerprintAccumulator fp;
  Status rs;
  for (std::int64_t round = 0; round < rounds; ++round) {
    const std::int64_t r0 = round * rows_per_chunk;
    const std::int64_t count = std::clamp<std::int64_t>(m - r0, 0, rows_per_chunk);
    Status cs = rs ? h5::read_rows(values.get(), H5T_NATIVE_DOUBLE, mine.begin + r0, count, n, buf.data())
                   : h5::read_rows(values.get(), H5T_NATIVE_DOUBLE, 0, 0, n, buf.data());
    if (rs && !cs) rs = Status::input(fmt::format("{}: {}", h.file, cs.message()));
    for (std::int64_t i = 0; rs && i < count; ++i) {
      for (std::int64_t j = 0; j < n; ++j) {
        const double v = buf[static_cast<std::size_t>(i * n + j)];
        if (!std::isfinite(v)) {
          rs = bad(fmt::format("{} in row {}, column {}", std::isnan(v) ? "NaN" : "infinity", mine.begin + r0 + i, j));
          break;
        }
        fp.add(mine.begin + r0 + i, j, v);
        local[static_cast<std::size_t>(j * lda + r0 + i)] = v;
      }
    }
  }
  MatDenseRestoreArray(a, &local);
  rs = agree(comm, rs);
  if (rs) {
    rs = [&]() -> Status {
      LODESTONE_PETSC(MatAssemblyBegin(a, MAT_FINAL_ASSEMBLY));
      LODESTONE_PETSC(MatAssemblyEnd(a, MAT_FINAL_ASSEMBLY));
      return Status::ok();
    }();
    rs = agree(comm, rs);
  }
  if (!rs) {
    MatDestroy(&a);
    return rs;
  }
  MatrixInfo info;
  info.layout = Layout::dense;
  info.rows = n;
  info.cols = h.cols;
  info.nnz = n * h.cols;
  info.symmetric = h.symmetric;
  info.fingerprint = fp.finish(comm, n, h.cols);
  info.row_begin = mine.begin;
  info.row_end = mine.end;
  return Matrix(a, info);
}

}  // namespace lodestone::io
