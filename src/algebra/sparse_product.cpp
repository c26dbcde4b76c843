// Sparse x dense block product with the shift and update fused in (see sparse_product.hpp).
#include "algebra/sparse_product.hpp"

#include <algorithm>
#include <cstddef>

#include "support/petsc_status.hpp"

namespace lodestone::algebra {
namespace {

// Shown by -log_view as its own event; the benchmark suite reads it (scripts/bench-run.py).
PetscLogEvent sparse_product_event() {
  static PetscLogEvent event = [] {
    PetscLogEvent e = 0;
    PetscLogEventRegister("LdsSparseBlockProd", MAT_CLASSID, &e);
    return e;
  }();
  return event;
}

// The compressed rows of one sequential AIJ part, as PETSc stores them.
struct Rows {
  PetscInt count = 0;
  const PetscInt* start = nullptr;  // count + 1 offsets
  const PetscInt* col = nullptr;
  const PetscScalar* val = nullptr;
};

PetscErrorCode get_rows(Mat m, Rows& r) {
  PetscBool done = PETSC_FALSE;
  PetscCall(MatGetRowIJ(m, 0, PETSC_FALSE, PETSC_FALSE, &r.count, &r.start, &r.col, &done));
  PetscCheck(done, PETSC_COMM_SELF, PETSC_ERR_SUP, "the matrix does not give its rows");
  return MatSeqAIJGetArrayRead(m, &r.val);
}

PetscErrorCode restore_rows(Mat m, Rows& r) {
  PetscBool done = PETSC_FALSE;
  PetscCall(MatSeqAIJRestoreArrayRead(m, &r.val));
  return MatRestoreRowIJ(m, 0, PETSC_FALSE, PETSC_FALSE, &r.count, &r.start, &r.col, &done);
}

// W columns starting at column pointers x (ld ldx), ghost values g (ld ldg), output y (ld ldy).
// ReadY: beta != 0 (the old Y enters the update).
template <int W, bool ReadY>
void chunk(const Rows& d, const Rows& o, const double* x, PetscInt ldx, const double* g, PetscInt ldg, double* y,
           PetscInt ldy, double alpha, double shift, double beta) {
  const PetscInt m = d.count;
  for (PetscInt i = 0; i < m; ++i) {
    double acc[W] = {};
    for (PetscInt k = d.start[i]; k < d.start[i + 1]; ++k) {
      const double v = d.val[k];
      const double* xc = x + d.col[k];
#pragma GCC unroll 16
      for (int j = 0; j < W; ++j) acc[j] += v * xc[j * ldx];
    }
    if (o.start != nullptr) {
      for (PetscInt k = o.start[i]; k < o.start[i + 1]; ++k) {
        const double v = o.val[k];
        const double* gc = g + o.col[k];
#pragma GCC unroll 16
        for (int j = 0; j < W; ++j) acc[j] += v * gc[j * ldg];
      }
    }
#pragma GCC unroll 16
    for (int j = 0; j < W; ++j) {
      const double r = alpha * (acc[j] - shift * x[i + j * ldx]);
      double& out = y[i + j * ldy];
      out = ReadY ? r + beta * out : r;
    }
  }
}

template <bool ReadY>
void run_chunk(int w, const Rows& d, const Rows& o, const double* x, PetscInt ldx, const double* g, PetscInt ldg,
               double* y, PetscInt ldy, double alpha, double shift, double beta) {
  switch (w) {
    case 1: return chunk<1, ReadY>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 2: return chunk<2, ReadY>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 3: return chunk<3, ReadY>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 4: return chunk<4, ReadY>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 5: return chunk<5, ReadY>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 6: return chunk<6, ReadY>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 7: return chunk<7, ReadY>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 8: return chunk<8, ReadY>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 9: return chunk<9, ReadY>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 10: return chunk<10, ReadY>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 11: return chunk<11, ReadY>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    default: return chunk<12, ReadY>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
  }
}

// The interlaced layout: row i's values of all `cols` columns side by side (x[i * cols + j]),
// so each stored entry meets W neighbouring values in whole-vector loads. V is a vector of L
// doubles (GCC/Clang vector extension); the W % L columns left over are done one by one.
// acc (NV vectors) and tail (NT values) += the stored entries of row i of r times the rows of src.
template <typename V, int L, int NV, int NT>
[[gnu::always_inline]] inline void add_row(const Rows& r, PetscInt i, const double* src, PetscInt cols, V* acc,
                                           double* tail) {
  for (PetscInt k = r.start[i]; k < r.start[i + 1]; ++k) {
    const double v = r.val[k];
    const double* c = src + static_cast<std::ptrdiff_t>(r.col[k]) * cols;
    for (int q = 0; q < NV; ++q) {
      V t;
      __builtin_memcpy(&t, c + q * L, sizeof t);
      acc[q] += v * t;
    }
    for (int t = 0; t < NT; ++t) tail[t] += v * c[NV * L + t];
  }
}

template <typename V, int L, int W, bool ReadY>
[[gnu::always_inline]] inline void chunk_rows(const Rows& d, const Rows& o, const double* x, const double* g,
                                              double* y, PetscInt cols, double alpha, double shift, double beta) {
  constexpr int NV = W / L, NT = W % L;
  const PetscInt m = d.count;
  for (PetscInt i = 0; i < m; ++i) {
    V acc[NV > 0 ? NV : 1] = {};
    double tail[NT > 0 ? NT : 1] = {};
    add_row<V, L, NV, NT>(d, i, x, cols, acc, tail);
    if (o.start != nullptr) add_row<V, L, NV, NT>(o, i, g, cols, acc, tail);
    const double* xi = x + static_cast<std::ptrdiff_t>(i) * cols;
    double* yi = y + static_cast<std::ptrdiff_t>(i) * cols;
    for (int q = 0; q < NV; ++q) {
      V xv, r;
      __builtin_memcpy(&xv, xi + q * L, sizeof xv);
      r = alpha * (acc[q] - shift * xv);
      if (ReadY) {
        V yv;
        __builtin_memcpy(&yv, yi + q * L, sizeof yv);
        r += beta * yv;
      }
      __builtin_memcpy(yi + q * L, &r, sizeof r);
    }
    for (int t = 0; t < NT; ++t) {
      const double r = alpha * (tail[t] - shift * xi[NV * L + t]);
      yi[NV * L + t] = ReadY ? r + beta * yi[NV * L + t] : r;
    }
  }
}

using Vec2 = double __attribute__((vector_size(16)));

#define LODESTONE_CHUNK_CASES(V, L)                                                \
  switch (w) {                                                                     \
    case 1: return chunk_rows<V, L, 1, ReadY>(d, o, x, g, y, cols, alpha, shift, beta);   \
    case 2: return chunk_rows<V, L, 2, ReadY>(d, o, x, g, y, cols, alpha, shift, beta);   \
    case 3: return chunk_rows<V, L, 3, ReadY>(d, o, x, g, y, cols, alpha, shift, beta);   \
    case 4: return chunk_rows<V, L, 4, ReadY>(d, o, x, g, y, cols, alpha, shift, beta);   \
    case 5: return chunk_rows<V, L, 5, ReadY>(d, o, x, g, y, cols, alpha, shift, beta);   \
    case 6: return chunk_rows<V, L, 6, ReadY>(d, o, x, g, y, cols, alpha, shift, beta);   \
    case 7: return chunk_rows<V, L, 7, ReadY>(d, o, x, g, y, cols, alpha, shift, beta);   \
    case 8: return chunk_rows<V, L, 8, ReadY>(d, o, x, g, y, cols, alpha, shift, beta);   \
    case 9: return chunk_rows<V, L, 9, ReadY>(d, o, x, g, y, cols, alpha, shift, beta);   \
    case 10: return chunk_rows<V, L, 10, ReadY>(d, o, x, g, y, cols, alpha, shift, beta); \
    case 11: return chunk_rows<V, L, 11, ReadY>(d, o, x, g, y, cols, alpha, shift, beta); \
    default: return chunk_rows<V, L, 12, ReadY>(d, o, x, g, y, cols, alpha, shift, beta); \
  }

template <bool ReadY>
void rows_sse2(int w, const Rows& d, const Rows& o, const double* x, const double* g, double* y, PetscInt cols,
               double alpha, double shift, double beta) {
  LODESTONE_CHUNK_CASES(Vec2, 2)
}

#if defined(__x86_64__) && defined(__GNUC__)
// The same compiled for AVX2 (four doubles per vector), chosen at run time where the processor has it.
using Vec4 = double __attribute__((vector_size(32)));
template <bool ReadY>
__attribute__((target("avx2"))) void rows_avx2(int w, const Rows& d, const Rows& o, const double* x, const double* g,
                                               double* y, PetscInt cols, double alpha, double shift, double beta) {
  LODESTONE_CHUNK_CASES(Vec4, 4)
}
bool have_avx2() {
  static const bool yes = __builtin_cpu_supports("avx2");
  return yes;
}
#endif
#undef LODESTONE_CHUNK_CASES

template <bool ReadY>
void run_chunk_rows(int w, const Rows& d, const Rows& o, const double* x, const double* g, double* y, PetscInt cols,
                    double alpha, double shift, double beta) {
#if defined(__x86_64__) && defined(__GNUC__)
  if (have_avx2()) return rows_avx2<ReadY>(w, d, o, x, g, y, cols, alpha, shift, beta);
#endif
  rows_sse2<ReadY>(w, d, o, x, g, y, cols, alpha, shift, beta);
}

constexpr int kChunk = 12;  // columns per pass over the matrix at most: their sums stay in registers

}  // namespace

SparseProduct::~SparseProduct() {
  for (auto& [cols, h] : halos_) {
    if (h.scatter) VecScatterDestroy(&h.scatter);
    if (h.from) VecDestroy(&h.from);
    if (h.to) VecDestroy(&h.to);
  }
}

bool SparseProduct::handles(Mat a) {
  PetscBool seq = PETSC_FALSE, mpi = PETSC_FALSE;
  if (PetscObjectTypeCompare(reinterpret_cast<PetscObject>(a), MATSEQAIJ, &seq) != 0) return false;
  if (PetscObjectTypeCompare(reinterpret_cast<PetscObject>(a), MATMPIAIJ, &mpi) != 0) return false;
  return seq == PETSC_TRUE || mpi == PETSC_TRUE;
}

bool SparseProduct::fits(Mat a, int cols) {
  PetscInt rows = 0;
  if (MatGetSize(a, &rows, nullptr) != 0) return false;
  return static_cast<double>(rows) * static_cast<double>(cols) <= static_cast<double>(PETSC_MAX_INT);
}

Result<SparseProduct::Halo*> SparseProduct::halo(Mat a, int cols, bool interlaced, PetscInt ghosts,
                                                  const PetscInt* garray) {
  const int key = 2 * cols + (interlaced ? 1 : 0);
  auto found = halos_.find(key);
  if (found != halos_.end()) return &found->second;
  MPI_Comm comm = PetscObjectComm(reinterpret_cast<PetscObject>(a));
  PetscMPIInt size = 1;
  MPI_Comm_size(comm, &size);
  const PetscInt* ranges = nullptr;
  LODESTONE_PETSC(MatGetOwnershipRangesColumn(a, &ranges));
  PetscInt local_cols = 0;
  LODESTONE_PETSC(MatGetLocalSize(a, nullptr, &local_cols));
  Halo h;
  LODESTONE_PETSC(VecCreateMPIWithArray(comm, 1, local_cols * cols, PETSC_DECIDE, nullptr, &h.from));
  LODESTONE_PETSC(VecCreateSeqWithArray(PETSC_COMM_SELF, 1, ghosts * cols, nullptr, &h.to));
  // Rank q's storage starts at global index r0_q * cols in `from`, whichever the layout.
  std::vector<PetscInt> from(static_cast<std::size_t>(ghosts) * static_cast<std::size_t>(cols));
  for (PetscInt g = 0; g < ghosts; ++g) {
    const PetscInt c = garray[g];
    const PetscInt q = static_cast<PetscInt>(std::upper_bound(ranges, ranges + size + 1, c) - ranges) - 1;
    const PetscInt r0 = ranges[q], mq = ranges[q + 1] - ranges[q];
    for (PetscInt j = 0; j < cols; ++j) {
      if (interlaced)
        from[static_cast<std::size_t>(g * cols + j)] = c * cols + j;
      else
        from[static_cast<std::size_t>(j * ghosts + g)] = r0 * cols + j * mq + (c - r0);
    }
  }
  IS is = nullptr;
  LODESTONE_PETSC(ISCreateGeneral(PETSC_COMM_SELF, static_cast<PetscInt>(from.size()), from.data(), PETSC_COPY_VALUES, &is));
  const PetscErrorCode e = VecScatterCreate(h.from, is, h.to, nullptr, &h.scatter);
  ISDestroy(&is);
  LODESTONE_PETSC(e);
  return &(halos_[key] = h);
}

Status SparseProduct::product(Mat a, int cols, bool interlaced, const double* x, double* y, double alpha, double shift,
                              double beta) {
  PetscBool mpi = PETSC_FALSE;
  LODESTONE_PETSC(PetscObjectTypeCompare(reinterpret_cast<PetscObject>(a), MATMPIAIJ, &mpi));
  Mat diag = a, off = nullptr;
  const PetscInt* garray = nullptr;
  PetscInt ghosts = 0;
  if (mpi) {
    LODESTONE_PETSC(MatMPIAIJGetSeqAIJ(a, &diag, &off, &garray));
    LODESTONE_PETSC(MatGetSize(off, nullptr, &ghosts));
  }
  const PetscLogEvent event = sparse_product_event();
  LODESTONE_PETSC(PetscLogEventBegin(event, a, 0, 0, 0));
  // The ghost values of every column, in one scatter (every rank takes part, ghosts or not).
  if (mpi) {
    auto h = halo(a, cols, interlaced, ghosts, garray);
    if (!h) return h.status();
    ghost_values_.resize(static_cast<std::size_t>(ghosts) * static_cast<std::size_t>(cols));
    LODESTONE_PETSC(VecPlaceArray((*h)->from, x));
    LODESTONE_PETSC(VecPlaceArray((*h)->to, ghost_values_.data()));
    PetscErrorCode e = VecScatterBegin((*h)->scatter, (*h)->from, (*h)->to, INSERT_VALUES, SCATTER_FORWARD);
    if (e == 0) e = VecScatterEnd((*h)->scatter, (*h)->from, (*h)->to, INSERT_VALUES, SCATTER_FORWARD);
    VecResetArray((*h)->from);
    VecResetArray((*h)->to);
    LODESTONE_PETSC(e);
  }
  Rows d, o;
  LODESTONE_PETSC(get_rows(diag, d));
  if (off != nullptr && ghosts > 0) LODESTONE_PETSC(get_rows(off, o));
  const PetscInt m = d.count;
  const double* g = ghosts > 0 ? ghost_values_.data() : nullptr;
  // Passes over the matrix: as few as the chunk allows, the columns split evenly among them.
  const int passes = m > 0 ? (cols + kChunk - 1) / kChunk : 0;
  for (int pass = 0, c0 = 0; pass < passes; ++pass) {
    const int w = (cols - c0) / (passes - pass);
    if (interlaced) {
      if (beta != 0.0)
        run_chunk_rows<true>(w, d, o, x + c0, g ? g + c0 : g, y + c0, cols, alpha, shift, beta);
      else
        run_chunk_rows<false>(w, d, o, x + c0, g ? g + c0 : g, y + c0, cols, alpha, shift, beta);
    } else {
      const std::size_t at = static_cast<std::size_t>(c0) * static_cast<std::size_t>(m);
      const double* gc = g ? g + static_cast<std::size_t>(c0) * static_cast<std::size_t>(ghosts) : g;
      if (beta != 0.0)
        run_chunk<true>(w, d, o, x + at, m, gc, ghosts, y + at, m, alpha, shift, beta);
      else
        run_chunk<false>(w, d, o, x + at, m, gc, ghosts, y + at, m, alpha, shift, beta);
    }
    c0 += w;
  }
  const PetscInt nnz = d.start[d.count] + (o.start != nullptr ? o.start[o.count] : 0);
  if (o.start != nullptr) LODESTONE_PETSC(restore_rows(off, o));
  LODESTONE_PETSC(restore_rows(diag, d));
  LODESTONE_PETSC(PetscLogFlops((2.0 * static_cast<double>(nnz) + 3.0 * static_cast<double>(m)) * cols));
  LODESTONE_PETSC(PetscLogEventEnd(event, a, 0, 0, 0));
  return Status::ok();
}

Status SparseProduct::apply(Mat a, const Block& x, Block& y, double alpha, double shift, double beta) {
  LODESTONE_TRY(product(a, x.cols(), false, x.data(), y.data(), alpha, shift, beta));
  y.changed();
  return Status::ok();
}

Status SparseProduct::apply_rows(Mat a, int cols, const double* x, double* y, double alpha, double shift, double beta) {
  return product(a, cols, true, x, y, alpha, shift, beta);
}

void to_rows(const Block& x, double* rows) {
  const PetscInt m = x.local_rows();
  const int cols = x.cols();
  for (int j = 0; j < cols; ++j) {
    const double* c = x.column(j);
    for (PetscInt i = 0; i < m; ++i) rows[i * cols + j] = c[i];
  }
}

void from_rows(const double* rows, Block& x) {
  const PetscInt m = x.local_rows();
  const int cols = x.cols();
  for (int j = 0; j < cols; ++j) {
    double* c = x.column(j);
    for (PetscInt i = 0; i < m; ++i) c[i] = rows[i * cols + j];
  }
  x.changed();
}

}  // namespace lodestone::algebra
