// Block products with the matrix (see operator.hpp).
#include "algebra/operator.hpp"

#include <petscblaslapack.h>

#include <cmath>
#include <limits>

#include "support/petsc_status.hpp"

namespace lodestone::algebra {

Operator::~Operator() = default;

Status Operator::apply(const Block& x, Block& y) {
  if (dense_path_ < 0) {
    PetscBool dense = PETSC_FALSE;
    PetscMPIInt size = 1;
    LODESTONE_PETSC(PetscObjectTypeCompare(reinterpret_cast<PetscObject>(a_), MATMPIDENSE, &dense));
    MPI_Comm_size(PetscObjectComm(reinterpret_cast<PetscObject>(a_)), &size);
    dense_path_ = dense && size > 1 ? 1 : 0;
  }
  if (dense_path_ == 1) return apply_dense(x, y);
  Mat c = y.mat();
  // Each output block keeps its own product object; a different input block of the
  // same shape is swapped in without redoing the symbolic phase.
  MatProductType type = MATPRODUCT_UNSPECIFIED;
  LODESTONE_PETSC(MatProductGetType(c, &type));
  if (type == MATPRODUCT_UNSPECIFIED) {
    LODESTONE_PETSC(MatProductCreateWithMat(a_, x.mat(), nullptr, c));
    LODESTONE_PETSC(MatProductSetType(c, MATPRODUCT_AB));
    LODESTONE_PETSC(MatProductSetFromOptions(c));
    LODESTONE_PETSC(MatProductSymbolic(c));
  } else {
    Mat pa = nullptr, pb = nullptr, pc = nullptr;
    LODESTONE_PETSC(MatProductGetMats(c, &pa, &pb, &pc));
    if (pb != x.mat()) LODESTONE_PETSC(MatProductReplaceMats(nullptr, x.mat(), nullptr, c));
  }
  LODESTONE_PETSC(MatProductNumeric(c));
  matvecs_ += x.cols();
  return Status::ok();
}

namespace {
// Shown by -log_view as its own event (PETSc logs no event of its own for this path).
PetscLogEvent dense_product_event() {
  static PetscLogEvent event = [] {
    PetscLogEvent e = 0;
    PetscLogEventRegister("LdsDenseBlockProd", MAT_CLASSID, &e);
    return e;
  }();
  return event;
}
}  // namespace

Status Operator::apply_dense(const Block& x, Block& y) {
  MPI_Comm comm = PetscObjectComm(reinterpret_cast<PetscObject>(a_));
  PetscMPIInt size = 1;
  MPI_Comm_size(comm, &size);
  const PetscInt* ranges = nullptr;
  LODESTONE_PETSC(MatGetOwnershipRanges(a_, &ranges));
  const PetscInt b = x.cols(), m = x.local_rows();
  // The gather's counts and offsets are ints (the same test on every rank: no rank goes on alone).
  if (static_cast<double>(ranges[size]) * static_cast<double>(b) > std::numeric_limits<int>::max())
    return Status::input("the dense matrix is too large for this block width: one block product would gather "
                         "more than 2^31 values on every rank (use a smaller --block-size)");
  const PetscLogEvent event = dense_product_event();
  LODESTONE_PETSC(PetscLogEventBegin(event, a_, 0, 0, 0));
  counts_.assign(static_cast<std::size_t>(size), 0);
  displs_.assign(static_cast<std::size_t>(size), 0);
  for (PetscMPIInt r = 0; r < size; ++r) {
    counts_[static_cast<std::size_t>(r)] = static_cast<int>((ranges[r + 1] - ranges[r]) * b);
    if (r > 0) displs_[static_cast<std::size_t>(r)] = displs_[static_cast<std::size_t>(r - 1)] + counts_[static_cast<std::size_t>(r - 1)];
  }
  gathered_.resize(static_cast<std::size_t>(ranges[size] * b));
  // This rank's block is m x b, column-major with leading dimension m: one piece as it is.
  MPI_Allgatherv(m > 0 ? x.data() : nullptr, static_cast<int>(m * b), MPI_DOUBLE, gathered_.data(), counts_.data(),
                 displs_.data(), MPI_DOUBLE, comm);
  Mat local = nullptr;
  LODESTONE_PETSC(MatDenseGetLocalMatrix(a_, &local));
  const PetscScalar* av = nullptr;
  PetscInt lda = 0;
  LODESTONE_PETSC(MatDenseGetLDA(local, &lda));
  LODESTONE_PETSC(MatDenseGetArrayRead(local, &av));
  double* yv = y.data();
  // Y = sum over ranks r of A(:, rows of r) X_r (the first nonempty piece overwrites Y).
  bool first = true;
  for (PetscMPIInt r = 0; r < size && m > 0; ++r) {
    const PetscInt mr = ranges[r + 1] - ranges[r];
    if (mr == 0) continue;
    PetscBLASInt bm = 0, bn = 0, bk = 0, blda = 0, bldx = 0;
    LODESTONE_PETSC(PetscBLASIntCast(m, &bm));
    LODESTONE_PETSC(PetscBLASIntCast(b, &bn));
    LODESTONE_PETSC(PetscBLASIntCast(mr, &bk));
    LODESTONE_PETSC(PetscBLASIntCast(lda, &blda));
    bldx = bk;
    const double one = 1.0, beta = first ? 0.0 : 1.0;
    first = false;
    BLASgemm_("N", "N", &bm, &bn, &bk, &one, const_cast<PetscScalar*>(av + ranges[r] * lda), &blda,
              gathered_.data() + displs_[static_cast<std::size_t>(r)], &bldx, &beta, yv, &bm);
  }
  LODESTONE_PETSC(MatDenseRestoreArrayRead(local, &av));
  y.changed();
  LODESTONE_PETSC(PetscLogFlops(2.0 * static_cast<double>(m) * static_cast<double>(ranges[size]) * static_cast<double>(b)));
  LODESTONE_PETSC(PetscLogEventEnd(event, a_, 0, 0, 0));
  matvecs_ += b;
  return Status::ok();
}

Result<double> norm_estimate(Mat a) {
  PetscReal n1 = 0, ninf = 0;
  LODESTONE_PETSC(MatNorm(a, NORM_1, &n1));
  LODESTONE_PETSC(MatNorm(a, NORM_INFINITY, &ninf));
  // The product of the two norms would overflow (underflow) for entries near 1e+-300.
  return std::sqrt(static_cast<double>(n1)) * std::sqrt(static_cast<double>(ninf));
}

double extreme_scale(double norm) {
  if (!(norm > 0) || !std::isfinite(norm) || (norm <= 0x1p200 && norm >= 0x1p-200)) return 1.0;
  int e = 0;
  std::frexp(norm, &e);
  return std::ldexp(1.0, e);
}

}  // namespace lodestone::algebra
