// Distributed dense multi-vectors (see block.hpp).
#include "algebra/block.hpp"

#include <petscsys.h>
#include <petscblaslapack.h>

#include <algorithm>
#include <cmath>
#include <cstring>

#include "algebra/small_eigen.hpp"
#include "io/generators.hpp"
#include "support/collective.hpp"
#include "support/petsc_status.hpp"

namespace lodestone::algebra {

Result<Block> Block::like(Mat a, int cols) {
  Block b;
  b.comm_ = PetscObjectComm(reinterpret_cast<PetscObject>(a));
  PetscInt m = 0, n = 0, lo = 0, hi = 0;
  Status s = [&]() -> Status {
    LODESTONE_PETSC(MatGetSize(a, &m, &n));
    LODESTONE_PETSC(MatGetOwnershipRange(a, &lo, &hi));
    LODESTONE_PETSC(MatCreateDense(b.comm_, hi - lo, PETSC_DECIDE, m, cols, nullptr, &b.mat_));
    LODESTONE_PETSC(MatZeroEntries(b.mat_));
    return Status::ok();
  }();
  // The allocation can fail on one rank alone (its rows are the most, or its memory the
  // least); every rank must leave with that failure, not carry on into the next collective.
  LODESTONE_TRY(agree(b.comm_, s));
  b.cols_ = cols;
  b.local_rows_ = hi - lo;
  b.row_begin_ = lo;
  b.rows_ = m;
  return b;
}

Block::Block(Block&& o) noexcept
    : mat_(o.mat_), comm_(o.comm_), cols_(o.cols_), local_rows_(o.local_rows_), row_begin_(o.row_begin_),
      rows_(o.rows_), data_(o.data_) {
  o.mat_ = nullptr;
  o.data_ = nullptr;
}

Block& Block::operator=(Block&& o) noexcept {
  if (this != &o) {
    if (mat_) MatDestroy(&mat_);
    mat_ = o.mat_;
    comm_ = o.comm_;
    cols_ = o.cols_;
    local_rows_ = o.local_rows_;
    row_begin_ = o.row_begin_;
    rows_ = o.rows_;
    data_ = o.data_;
    o.mat_ = nullptr;
    o.data_ = nullptr;
  }
  return *this;
}

Block::~Block() {
  if (mat_) MatDestroy(&mat_);
}

// The storage of an MPIDENSE matrix does not move once allocated, but a product
// may (re)allocate it, so the pointer is refreshed on every access.
double* Block::data() {
  PetscScalar* p = nullptr;
  MatDenseGetArray(mat_, &p);
  data_ = p;  // restoring clears p, not the storage
  MatDenseRestoreArray(mat_, &p);
  return data_;
}

const double* Block::data() const {
  const PetscScalar* p = nullptr;
  MatDenseGetArrayRead(mat_, &p);
  data_ = const_cast<double*>(p);
  MatDenseRestoreArrayRead(mat_, &p);
  return data_;
}

// Getting and restoring the writable array marks the matrix as modified for PETSc.
void Block::changed() {
  PetscScalar* p = nullptr;
  MatDenseGetArray(mat_, &p);
  MatDenseRestoreArray(mat_, &p);
}

// ---- local ------------------------------------------------------------------------------

void times_small(const Block& x, const Small& s, Block& y) {
  PetscBLASInt m = static_cast<PetscBLASInt>(x.local_rows()), n = s.cols, k = s.rows;
  if (m > 0 && n > 0) {
    double one = 1.0, zero = 0.0;
    if (k == 0) {
      std::fill(y.data(), y.data() + static_cast<std::size_t>(m) * n, 0.0);
    } else {
      BLASgemm_("N", "N", &m, &n, &k, &one, const_cast<double*>(x.data()), &m, const_cast<double*>(s.data()), &k,
                &zero, y.data(), &m);
    }
  }
  y.changed();
}

void times_small_inplace(Block& x, const Small& s) {
  const std::size_t m = static_cast<std::size_t>(x.local_rows());
  std::vector<double> copy(x.data(), x.data() + m * x.cols());
  PetscBLASInt bm = static_cast<PetscBLASInt>(m), n = s.cols, k = s.rows;
  if (bm > 0 && n > 0 && k > 0) {
    double one = 1.0, zero = 0.0;
    BLASgemm_("N", "N", &bm, &n, &k, &one, copy.data(), &bm, const_cast<double*>(s.data()), &k, &zero, x.data(), &bm);
  }
  x.changed();
}

void times_small_leading(Block& x, const Small& s) {
  const PetscInt rows = x.local_rows();
  const PetscBLASInt k = s.rows, n = s.cols, ld = static_cast<PetscBLASInt>(rows);
  if (rows > 0 && n > 0) {
    // A block of rows of the k input columns is copied aside (it stays in the core's
    // cache) and multiplied back into the same rows of the first n columns.
    constexpr PetscInt kBlockRows = 1024;
    std::vector<double> buf(static_cast<std::size_t>(std::min(rows, kBlockRows)) * std::max<PetscBLASInt>(k, 1));
    double one = 1.0, zero = 0.0;
    for (PetscInt r0 = 0; r0 < rows; r0 += kBlockRows) {
      const PetscBLASInt br = static_cast<PetscBLASInt>(std::min(kBlockRows, rows - r0));
      if (k == 0) {
        for (PetscBLASInt j = 0; j < n; ++j) std::fill(x.column(j) + r0, x.column(j) + r0 + br, 0.0);
        continue;
      }
      for (PetscBLASInt j = 0; j < k; ++j)
        std::copy(x.column(j) + r0, x.column(j) + r0 + br, buf.data() + static_cast<std::size_t>(j) * br);
      BLASgemm_("N", "N", &br, &n, &k, &one, buf.data(), &br, const_cast<double*>(s.data()), &k, &zero, x.data() + r0,
                &ld);
    }
  }
  x.changed();
}

void combine(Block& y, double alpha, const Block& x, double beta, int xc, int yc, int m) {
  if (m < 0) m = x.cols() - xc;
  const PetscInt rows = y.local_rows();
  for (int j = 0; j < m; ++j) {
    double* yp = y.column(yc + j);
    const double* xp = x.column(xc + j);
    for (PetscInt i = 0; i < rows; ++i) yp[i] = alpha * yp[i] + beta * xp[i];
  }
  y.changed();
}

void copy_columns(const Block& x, int xc, Block& y, int yc, int m) {
  if (m > 0 && x.local_rows() > 0)
    std::memcpy(y.column(yc), x.column(xc), sizeof(double) * static_cast<std::size_t>(m) * x.local_rows());
  y.changed();
}

void subtract_times(Block& y, const Block& x, const Small& s) {
  PetscBLASInt m = static_cast<PetscBLASInt>(x.local_rows()), n = s.cols, k = s.rows;
  if (m > 0 && n > 0 && k > 0) {
    double minus = -1.0, one = 1.0;
    BLASgemm_("N", "N", &m, &n, &k, &minus, const_cast<double*>(x.data()), &m, const_cast<double*>(s.data()), &k,
              &one, y.data(), &m);
  }
  y.changed();
}

void fill_random(Block& x, std::uint64_t seed, std::uint64_t stream, int c0, int m) {
  if (m < 0) m = x.cols() - c0;
  for (int j = 0; j < m; ++j) {
    double* p = x.column(c0 + j);
    for (PetscInt i = 0; i < x.local_rows(); ++i)
      p[i] = io::hashed_uniform(seed, static_cast<std::uint64_t>(x.row_begin() + i), stream + static_cast<std::uint64_t>(c0 + j)) - 0.5;
  }
  x.changed();
}

// ---- collective -------------------------------------------------------------------------

namespace {
void local_gram(const Block& x, int x_cols, const Block& y, double* out) {
  PetscBLASInt m = x_cols, n = y.cols(), k = static_cast<PetscBLASInt>(x.local_rows());
  if (m == 0 || n == 0) return;
  if (k == 0) {
    std::fill(out, out + static_cast<std::size_t>(m) * n, 0.0);
    return;
  }
  double one = 1.0, zero = 0.0;
  BLASgemm_("T", "N", &m, &n, &k, &one, const_cast<double*>(x.data()), &k, const_cast<double*>(y.data()), &k, &zero,
            out, &m);
}
}  // namespace

Small gram(const Block& x, const Block& y) {
  Small g(x.cols(), y.cols());
  local_gram(x, x.cols(), y, g.data());
  if (!g.a.empty()) sum_replicated(x.comm(), g.data(), static_cast<int>(g.a.size()));
  return g;
}

void gram2(const Block& x, const Block& z, const Block& y, Small& xy, Small& zy) {
  xy = Small(x.cols(), y.cols());
  zy = Small(z.cols(), y.cols());
  std::vector<double> buf(xy.a.size() + zy.a.size());
  local_gram(x, x.cols(), y, buf.data());
  local_gram(z, z.cols(), y, buf.data() + xy.a.size());
  if (!buf.empty()) sum_replicated(x.comm(), buf.data(), static_cast<int>(buf.size()));
  std::copy(buf.begin(), buf.begin() + static_cast<std::ptrdiff_t>(xy.a.size()), xy.a.begin());
  std::copy(buf.begin() + static_cast<std::ptrdiff_t>(xy.a.size()), buf.end(), zy.a.begin());
}

std::vector<double> column_norms(const Block& x) {
  std::vector<double> s(static_cast<std::size_t>(x.cols()), 0.0);
  for (int j = 0; j < x.cols(); ++j) {
    const double* p = x.column(j);
    double acc = 0;
    for (PetscInt i = 0; i < x.local_rows(); ++i) acc += p[i] * p[i];
    s[static_cast<std::size_t>(j)] = acc;
  }
  if (!s.empty()) sum_replicated(x.comm(), s.data(), static_cast<int>(s.size()));
  for (double& v : s) v = std::sqrt(v);
  return s;
}

void project_out(const Block& q, int q_cols, Block& x) {
  if (q_cols <= 0 || x.cols() == 0) return;
  for (int pass = 0; pass < 2; ++pass) {
    Small c(q_cols, x.cols());
    local_gram(q, q_cols, x, c.data());
    sum_replicated(x.comm(), c.data(), static_cast<int>(c.a.size()));
    PetscBLASInt m = static_cast<PetscBLASInt>(x.local_rows()), n = x.cols(), k = q_cols;
    if (m > 0) {
      double minus = -1.0, one = 1.0;
      BLASgemm_("N", "N", &m, &n, &k, &minus, const_cast<double*>(q.data()), &m, c.data(), &k, &one, x.data(), &m);
    }
  }
  x.changed();
}

namespace {

// X = X R^{-1} for an upper triangular R (local).
void solve_upper_right(Block& x, const Small& r) {
  PetscBLASInt m = static_cast<PetscBLASInt>(x.local_rows()), n = x.cols();
  if (m > 0 && n > 0) {
    double one = 1.0;
    BLAStrsm_("R", "U", "N", "N", &m, &n, &one, const_cast<double*>(r.data()), &n, x.data(), &m);
  }
  x.changed();
}

// One Cholesky QR pass; false if the Gram matrix is not safely positive definite.
bool cholesky_qr_pass(Block& x) {
  Small g = gram(x, x);
  // Reject if the block is too close to rank deficient for the Cholesky factor to be trusted.
  double dmax = 0, dmin = INFINITY;
  for (int j = 0; j < g.rows; ++j) dmax = std::max(dmax, g(j, j)), dmin = std::min(dmin, g(j, j));
  if (!(dmin > 0)) return false;
  // The test below is on R's pivots relative to the largest, so columns whose lengths
  // differ by more than about 1e6 go to the fallback too, even at right angles. The
  // methods' filtered blocks rarely do (counted: never in Chebyshev solves of 2-D
  // Laplacians, once in one with an eigenvalue far out), so lengths are not scaled out.
  if (!cholesky_upper(g)) return false;
  double rmin = INFINITY, rmax = 0;
  for (int j = 0; j < g.rows; ++j) rmin = std::min(rmin, std::fabs(g(j, j))), rmax = std::max(rmax, std::fabs(g(j, j)));
  // Common practice: Cholesky QR loses about cond^2 digits; beyond ~1e-6 relative pivots use the fallback.
  if (!(rmin > 1e-6 * rmax)) return false;
  solve_upper_right(x, g);
  return true;
}

// Column-by-column Gram-Schmidt with re-orthogonalization against Q and the previous columns.
int gram_schmidt(Block& x, const Block* q, int q_cols, std::uint64_t seed, std::uint64_t stream) {
  const PetscInt m = x.local_rows();
  MPI_Comm comm = x.comm();
  int replaced = 0;
  std::vector<double> original(static_cast<std::size_t>(x.cols()), 0.0);
  {
    auto norms = column_norms(x);
    original = norms;
  }
  for (int j = 0; j < x.cols(); ++j) {
    for (int attempt = 0; attempt < 4; ++attempt) {
      double* v = x.column(j);
      double before = 0;
      for (PetscInt i = 0; i < m; ++i) before += v[i] * v[i];
      sum_replicated(comm, &before, 1);
      before = std::sqrt(before);
      for (int pass = 0; pass < 2; ++pass) {
        const int nq = q ? q_cols : 0;
        std::vector<double> c(static_cast<std::size_t>(nq + j), 0.0);
        for (int k = 0; k < nq; ++k) {
          const double* u = q->column(k);
          double acc = 0;
          for (PetscInt i = 0; i < m; ++i) acc += u[i] * v[i];
          c[static_cast<std::size_t>(k)] = acc;
        }
        for (int k = 0; k < j; ++k) {
          const double* u = x.column(k);
          double acc = 0;
          for (PetscInt i = 0; i < m; ++i) acc += u[i] * v[i];
          c[static_cast<std::size_t>(nq + k)] = acc;
        }
        if (!c.empty()) sum_replicated(comm, c.data(), static_cast<int>(c.size()));
        for (int k = 0; k < nq; ++k) {
          const double* u = q->column(k);
          for (PetscInt i = 0; i < m; ++i) v[i] -= c[static_cast<std::size_t>(k)] * u[i];
        }
        for (int k = 0; k < j; ++k) {
          const double* u = x.column(k);
          for (PetscInt i = 0; i < m; ++i) v[i] -= c[static_cast<std::size_t>(nq + k)] * u[i];
        }
      }
      double after = 0;
      for (PetscInt i = 0; i < m; ++i) after += v[i] * v[i];
      sum_replicated(comm, &after, 1);
      after = std::sqrt(after);
      // A column that lost almost everything to the projection is numerically dependent.
      if (after > 1e-10 * std::max(before, original[static_cast<std::size_t>(j)]) && after > 0) {
        for (PetscInt i = 0; i < m; ++i) v[i] /= after;
        break;
      }
      ++replaced;
      fill_random(x, seed, stream + 7919u * static_cast<std::uint64_t>(attempt + 1), j, 1);
    }
  }
  x.changed();
  return replaced;
}

}  // namespace

Result<int> orthonormalize(Block& x, const Block* q, int q_cols, std::uint64_t seed, std::uint64_t stream) {
  if (x.cols() == 0) return 0;
  if (cholesky_qr_pass(x) && cholesky_qr_pass(x)) return 0;
  return gram_schmidt(x, q, q_cols, seed, stream);
}

}  // namespace lodestone::algebra
