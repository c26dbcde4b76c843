// Block products with the matrix (see operator.hpp).
#include "algebra/operator.hpp"

#include <petscblaslapack.h>

#include <cmath>
#include <limits>

#include "support/petsc_status.hpp"

namespace lodestone::algebra {

Operator::~Operator() {
  if (x1_) VecDestroy(&x1_);
  if (y1_) VecDestroy(&y1_);
}

// One column: MatMult through vectors laid over the columns' storage. PETSc's
// sparse x dense product with a single column runs well below MatMult's speed
// (a 2M-row random walk: 73 ms against MatMult's figure below, one rank).
Status Operator::apply_one(const double* x, double* y, PetscInt local_rows, PetscInt rows) {
  if (!x1_) {
    // Vectors without storage of their own, in the blocks' row layout.
    MPI_Comm comm = PetscObjectComm(reinterpret_cast<PetscObject>(a_));
    LODESTONE_PETSC(VecCreateMPIWithArray(comm, 1, local_rows, rows, nullptr, &x1_));
    LODESTONE_PETSC(VecCreateMPIWithArray(comm, 1, local_rows, rows, nullptr, &y1_));
  }
  LODESTONE_PETSC(VecPlaceArray(x1_, x));
  LODESTONE_PETSC(VecPlaceArray(y1_, y));
  const PetscErrorCode e = MatMult(a_, x1_, y1_);
  VecResetArray(x1_);
  VecResetArray(y1_);
  LODESTONE_PETSC(e);
  return Status::ok();
}

Operator::Path Operator::path() {
  if (path_ == Path::unknown) {
    PetscBool dense = PETSC_FALSE;
    PetscMPIInt size = 1;
    PetscObjectTypeCompare(reinterpret_cast<PetscObject>(a_), MATMPIDENSE, &dense);
    MPI_Comm_size(PetscObjectComm(reinterpret_cast<PetscObject>(a_)), &size);
    path_ = dense && size > 1 ? Path::dense : SparseProduct::handles(a_) ? Path::sparse : Path::petsc;
  }
  return path_;
}

bool Operator::fuses() { return path() == Path::sparse; }

Status Operator::apply_shifted(const Block& x, Block& y, double alpha, double shift, double beta) {
  if (!fuses()) return Status::input("internal: a fused product was asked of a matrix without one");
  LODESTONE_TRY(sparse_.apply(a_, x, y, alpha, shift, beta));
  matvecs_ += x.cols();
  return Status::ok();
}

Status Operator::apply_shifted_rows(int cols, const double* x, double* y, double alpha, double shift, double beta) {
  if (!fuses()) return Status::input("internal: a fused product was asked of a matrix without one");
  LODESTONE_TRY(sparse_.apply_rows(a_, cols, x, y, alpha, shift, beta));
  matvecs_ += cols;
  return Status::ok();
}

Status Operator::apply_column(const Block& x, int xc, Block& y, int yc) {
  // PETSc's MatMult, unless the pattern is scattered: then the prefetching kernel.
  bool own = false;
  if (path() == Path::sparse) {
    auto s = sparse_.scattered(a_);
    if (!s) return s.status();
    own = *s;
  }
  if (own) LODESTONE_TRY(sparse_.apply_column(a_, x.column(xc), y.column(yc)));
  else LODESTONE_TRY(apply_one(x.column(xc), y.column(yc), x.local_rows(), x.rows()));
  y.changed();
  matvecs_ += 1;
  return Status::ok();
}

Status Operator::apply(const Block& x, Block& y) {
  const Path p = path();
  if (p == Path::dense) return apply_dense(x, y);
  if (x.cols() == 1) return apply_column(x, 0, y, 0);
  if (p == Path::sparse) return apply_shifted(x, y, 1.0, 0.0, 0.0);
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

namespace {

// ||A||_1, the largest column sum of |a_ij|, of a distributed sparse matrix. PETSc's
// own NORM_1 for MPIAIJ sums every column in two arrays of the global column count
// on every rank (16 bytes x n per rank: 16 GB at 10^9 rows). Here each rank sums
// its own columns and its ghost columns, and the ghost sums are added into their
// owners' entries through a scatter: memory stays with the local rows and ghosts.
Result<double> one_norm_mpiaij(Mat a) {
  Mat ad = nullptr, ao = nullptr;
  const PetscInt* garray = nullptr;
  LODESTONE_PETSC(MatMPIAIJGetSeqAIJ(a, &ad, &ao, &garray));
  PetscInt ghosts = 0;
  LODESTONE_PETSC(MatGetSize(ao, nullptr, &ghosts));
  Vec sums = nullptr;
  LODESTONE_PETSC(MatCreateVecs(a, &sums, nullptr));  // laid out like the columns
  Vec ghost_sums = nullptr;
  LODESTONE_PETSC(VecCreateSeq(PETSC_COMM_SELF, ghosts, &ghost_sums));
  // Column sums of one sequential block into `out` (indexed by the block's columns).
  auto add_columns = [](Mat block, PetscScalar* out) -> PetscErrorCode {
    PetscInt rows = 0;
    const PetscInt *ia = nullptr, *ja = nullptr;
    PetscBool done = PETSC_FALSE;
    PetscCall(MatGetRowIJ(block, 0, PETSC_FALSE, PETSC_FALSE, &rows, &ia, &ja, &done));
    const PetscScalar* v = nullptr;
    PetscCall(MatSeqAIJGetArrayRead(block, &v));
    if (done)
      for (PetscInt k = 0; k < ia[rows]; ++k) out[ja[k]] += std::abs(v[k]);
    PetscCall(MatSeqAIJRestoreArrayRead(block, &v));
    PetscCall(MatRestoreRowIJ(block, 0, PETSC_FALSE, PETSC_FALSE, &rows, &ia, &ja, &done));
    return done ? 0 : PETSC_ERR_SUP;
  };
  PetscScalar* local = nullptr;
  PetscScalar* remote = nullptr;
  LODESTONE_PETSC(VecSet(sums, 0.0));
  LODESTONE_PETSC(VecSet(ghost_sums, 0.0));
  LODESTONE_PETSC(VecGetArray(sums, &local));
  LODESTONE_PETSC(add_columns(ad, local));
  LODESTONE_PETSC(VecRestoreArray(sums, &local));
  LODESTONE_PETSC(VecGetArray(ghost_sums, &remote));
  LODESTONE_PETSC(add_columns(ao, remote));
  LODESTONE_PETSC(VecRestoreArray(ghost_sums, &remote));
  IS owners = nullptr;
  LODESTONE_PETSC(ISCreateGeneral(PETSC_COMM_SELF, ghosts, garray, PETSC_USE_POINTER, &owners));
  VecScatter to_owners = nullptr;
  LODESTONE_PETSC(VecScatterCreate(ghost_sums, nullptr, sums, owners, &to_owners));
  LODESTONE_PETSC(VecScatterBegin(to_owners, ghost_sums, sums, ADD_VALUES, SCATTER_FORWARD));
  LODESTONE_PETSC(VecScatterEnd(to_owners, ghost_sums, sums, ADD_VALUES, SCATTER_FORWARD));
  PetscReal norm = 0;
  LODESTONE_PETSC(VecNorm(sums, NORM_INFINITY, &norm));
  LODESTONE_PETSC(VecScatterDestroy(&to_owners));
  LODESTONE_PETSC(ISDestroy(&owners));
  LODESTONE_PETSC(VecDestroy(&ghost_sums));
  LODESTONE_PETSC(VecDestroy(&sums));
  return static_cast<double>(norm);
}

}  // namespace

Result<double> norm_estimate(Mat a) {
  PetscReal n1 = 0, ninf = 0;
  PetscBool mpiaij = PETSC_FALSE;
  LODESTONE_PETSC(PetscObjectTypeCompare(reinterpret_cast<PetscObject>(a), MATMPIAIJ, &mpiaij));
  if (mpiaij) {
    auto one = one_norm_mpiaij(a);
    if (!one) return one.status();
    n1 = static_cast<PetscReal>(*one);
  } else {
    // Sequential AIJ holds every column anyway; a dense matrix's rows already span all columns.
    LODESTONE_PETSC(MatNorm(a, NORM_1, &n1));
  }
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
