// Matrix: loading from the file layout and wrapping a caller's PETSc matrix.
#include "lodestone/matrix.hpp"

#include <fmt/format.h>

#include <cmath>
#include <cstring>

#include "io/fingerprint.hpp"
#include "io/h5.hpp"
#include "io/matrix_reader.hpp"
#include "support/collective.hpp"
#include "support/log_stage.hpp"
#include "support/petsc_status.hpp"

namespace lodestone {

const char* layout_name(Layout layout) { return layout == Layout::dense ? "dense" : "csr"; }

Matrix& Matrix::operator=(Matrix&& o) noexcept {
  if (this != &o) {
    if (mat_) MatDestroy(&mat_);
    mat_ = o.mat_;
    info_ = o.info_;
    o.mat_ = nullptr;
  }
  return *this;
}

Matrix::~Matrix() {
  if (mat_) MatDestroy(&mat_);
}

MPI_Comm Matrix::comm() const { return PetscObjectComm(reinterpret_cast<PetscObject>(mat_)); }

Result<Matrix> Matrix::load(MPI_Comm comm, const std::string& path, const LoadOptions& options) {
  LogStage stage("Load matrix");
  auto file = h5::open_read(comm, path);
  if (!file) return file.status();
  auto group = h5::open_group(file->get(), options.group, path);
  LODESTONE_TRY(agree(comm, group.status()));
  auto header = io::read_header(group->get(), path, options.group);
  LODESTONE_TRY(agree(comm, header.status()));
  Result<Matrix> m = header->layout == Layout::csr ? io::read_csr(comm, group->get(), *header, options)
                                                   : io::read_dense(comm, group->get(), *header, options);
  if (!m) return m;
  if (header->symmetric) {
    LODESTONE_TRY(io::check_symmetric(m->petsc(), options.symmetry_tolerance,
                                      fmt::format("{}: group '{}'", path, options.group)));
  }
  return m;
}

Result<Matrix> Matrix::wrap(Mat a, bool symmetric, double symmetry_tolerance) {
  MPI_Comm comm = PetscObjectComm(reinterpret_cast<PetscObject>(a));
  MatrixInfo info;
  FingerprintAccumulator fp;
  Status s = [&]() -> Status {
    PetscInt rows = 0, cols = 0, lo = 0, hi = 0;
    LODESTONE_PETSC(MatGetSize(a, &rows, &cols));
    if (rows != cols) return Status::input(fmt::format("the matrix is {} x {}; eigenpairs need a square matrix", rows, cols));
    LODESTONE_PETSC(MatGetOwnershipRange(a, &lo, &hi));
    MatType type = nullptr;
    LODESTONE_PETSC(MatGetType(a, &type));
    info.layout = std::strstr(type, "dense") ? Layout::dense : Layout::csr;
    info.rows = rows;
    info.cols = cols;
    info.row_begin = lo;
    info.row_end = hi;
    std::int64_t local_nnz = 0;
    for (PetscInt r = lo; r < hi; ++r) {
      PetscInt len = 0;
      const PetscInt* c = nullptr;
      const PetscScalar* v = nullptr;
      LODESTONE_PETSC(MatGetRow(a, r, &len, &c, &v));
      // A value that is not a finite number would turn every product into NaN; the
      // first one is named, as the file readers do.
      PetscInt bad = -1;
      for (PetscInt j = 0; j < len; ++j) {
        const double x = PetscRealPart(v[j]);
        if (!std::isfinite(x) && bad < 0) bad = j;
        fp.add(r, c[j], x);
      }
      if (bad >= 0) {
        const double x = PetscRealPart(v[bad]);
        const PetscInt col = c[bad];
        LODESTONE_PETSC(MatRestoreRow(a, r, &len, &c, &v));
        return Status::input(fmt::format("the caller's matrix: {} in row {}, column {}",
                                         std::isnan(x) ? "NaN" : "infinity", r, col));
      }
      local_nnz += len;
      LODESTONE_PETSC(MatRestoreRow(a, r, &len, &c, &v));
    }
    info.nnz = local_nnz;
    return Status::ok();
  }();
  LODESTONE_TRY(agree(comm, s));
  info.nnz = sum_all(comm, info.nnz);
  info.fingerprint = fp.finish(comm, info.rows, info.cols);
  info.symmetric = symmetric;
  if (symmetric) LODESTONE_TRY(io::check_symmetric(a, symmetry_tolerance, "the caller's matrix"));
  PetscObjectReference(reinterpret_cast<PetscObject>(a));
  return Matrix(a, info);
}

}  // namespace lodestone
