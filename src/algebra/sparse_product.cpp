// Sparse x dense block product with the shift and update fused in (see sparse_product.hpp).
#include "algebra/sparse_product.hpp"

#include <algorithm>
#include <cstddef>

#include "support/petsc_status.hpp"

namespace lodestone::algebra {
namespace {

// Shown by -log_view as events of their own, which the benchmark suite reads
// (scripts/bench-run.py): Y = A X, and the update that also reads the old Y.
PetscLogEvent sparse_product_event(bool update) {
  static PetscLogEvent product = 0, with_update = 0;
  static const bool registered = [] {
    PetscLogEventRegister("LdsSparseBlockProd", MAT_CLASSID, &product);
    PetscLogEventRegister("LdsSparseBlockUpd", MAT_CLASSID, &with_update);
    return true;
  }();
  (void)registered;
  return update ? with_update : product;
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

// How far ahead (in stored entries) a scattered pattern's values of X are asked for.
constexpr PetscInt kPrefetchAhead = 128;

// W columns starting at column pointers x (ld ldx), ghost values g (ld ldg), output y (ld ldy).
// ReadY: beta != 0 (the old Y enters the update). Prefetch: the pattern is scattered
// (SparseProduct::scattered), so the value of X that an entry kPrefetchAhead places on
// will need is asked for now; the processor's own prefetcher cannot guess those.
template <int W, bool ReadY, bool Prefetch>
void chunk(const Rows& d, const Rows& o, const double* x, std::ptrdiff_t ldx, const double* g, std::ptrdiff_t ldg,
           double* y, std::ptrdiff_t ldy, double alpha, double shift, double beta) {
  const PetscInt m = d.count;
  const PetscInt dlast = m > 0 ? d.start[m] - 1 : 0;
  const PetscInt olast = (o.start != nullptr && m > 0) ? o.start[m] - 1 : 0;
  for (PetscInt i = 0; i < m; ++i) {
    double acc[W] = {};
    for (PetscInt k = d.start[i]; k < d.start[i + 1]; ++k) {
      if constexpr (Prefetch) {
        const double* ahead = x + d.col[std::min(k + kPrefetchAhead, dlast)];
        for (int j = 0; j < W; ++j) __builtin_prefetch(ahead + j * ldx);
      }
      const double v = d.val[k];
      const double* xc = x + d.col[k];
#pragma GCC unroll 16
      for (int j = 0; j < W; ++j) acc[j] += v * xc[j * ldx];
    }
    if (o.start != nullptr) {
      for (PetscInt k = o.start[i]; k < o.start[i + 1]; ++k) {
        if constexpr (Prefetch) {
          const double* ahead = g + o.col[std::min(k + kPrefetchAhead, olast)];
          for (int j = 0; j < W; ++j) __builtin_prefetch(ahead + j * ldg);
        }
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

// Prefetching is compiled for one and two columns (a scattered pattern by columns
// is multiplied two columns at a time, see product()).
template <bool ReadY>
void run_chunk(int w, bool prefetch, const Rows& d, const Rows& o, const double* x, std::ptrdiff_t ldx,
               const double* g, std::ptrdiff_t ldg, double* y, std::ptrdiff_t ldy, double alpha, double shift,
               double beta) {
  if (prefetch && w == 1) return chunk<1, ReadY, true>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
  if (prefetch && w == 2) return chunk<2, ReadY, true>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
  switch (w) {
    case 1: return chunk<1, ReadY, false>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 2: return chunk<2, ReadY, false>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 3: return chunk<3, ReadY, false>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 4: return chunk<4, ReadY, false>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 5: return chunk<5, ReadY, false>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 6: return chunk<6, ReadY, false>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 7: return chunk<7, ReadY, false>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 8: return chunk<8, ReadY, false>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 9: return chunk<9, ReadY, false>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 10: return chunk<10, ReadY, false>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    case 11: return chunk<11, ReadY, false>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
    default: return chunk<12, ReadY, false>(d, o, x, ldx, g, ldg, y, ldy, alpha, shift, beta);
  }
}

// Of the sampled stored entries of the local rows, how many continue a column of the
// row before, shifted by one (a stencil's or band's pattern: the next row needs the
// next values of X, which the processor's prefetcher finds by itself), and how many
// were sampled.
void count_continued(const Rows& d, std::int64_t& continued, std::int64_t& sampled) {
  constexpr PetscInt kSampleRows = 4096, kNear = 4;
  continued = sampled = 0;
  if (d.count < 2) return;
  const PetscInt stride = std::max<PetscInt>(1, (d.count - 1) / kSampleRows);
  for (PetscInt i = 1; i < d.count; i += stride) {
    const PetscInt* prev = d.col + d.start[i - 1];
    const PetscInt* prev_end = d.col + d.start[i];
    for (PetscInt k = d.start[i]; k < d.start[i + 1]; ++k) {
      // Both rows are sorted: the first column of the row before at or above col - 1 - kNear.
      const PetscInt want = d.col[k] - 1;
      prev = std::lower_bound(prev, prev_end, want - kNear);
      continued += (prev != prev_end && *prev <= want + kNear) ? 1 : 0;
      ++sampled;
    }
  }
}

// The interlaced layout: row i's values of all `cols` columns side by side (x[i * cols + j]),
// so each stored entry meets W neighbouring values in whole-vector loads. V is a vector of L
// doubles (GCC/Clang vector extension) and H one of L / 2: the W columns go as NV vectors
// V, then NH (0 or 1) vectors H, then NT values one by one. Where that would take both an
// H and a single value after at least one V (7 and 11 columns with AVX2), one more V (OV)
// on the last L columns takes their place, overlapping the V before it (those columns are
// summed twice, alike): one load and one multiply-add less per stored entry. On a
// 4-million-row Laplacian 7 and 11 columns ran 9 % faster, though 6 and 8, whose code did
// not change, gained as much from the new layout of the compiled code; overlapping at 5, 6,
// 9 or 10 columns was no faster (docs/benchmarks.md).
template <typename V, typename H, int W>
struct Split {
  static constexpr int L = sizeof(V) / sizeof(double), LH = sizeof(H) / sizeof(double);
  static constexpr bool OV = W > L && (W % L) / LH + W % L % LH > 1;
  static constexpr int NV = W / L, NH = OV ? 0 : (W % L) / LH, NT = OV ? 0 : W % L % LH;
  static constexpr int at_h = NV * L, at_t = NV * L + NH * LH;  // first column of the H part, of the tail
  static constexpr int at_ov = W - L;                           // first column of the overlapping V
};

// Always inlined into the kernels compiled for a wider instruction set (below), so
// the vector is never passed by value across an ABI boundary; GCC warns regardless.
#pragma GCC diagnostic ignored "-Wpsabi"
template <typename T>
[[gnu::always_inline]] inline T load(const double* p) {
  T t;
  __builtin_memcpy(&t, p, sizeof t);
  return t;
}

// acc (NV vectors, then the overlapping one if OV), hacc and tail += the stored entries
// of row i of r times the rows of src.
template <typename V, typename H, int W>
[[gnu::always_inline]] inline void add_row(const Rows& r, PetscInt i, const double* src, PetscInt cols, V* acc,
                                           H* hacc, double* tail) {
  using S = Split<V, H, W>;
  for (PetscInt k = r.start[i]; k < r.start[i + 1]; ++k) {
    const double v = r.val[k];
    const double* c = src + static_cast<std::ptrdiff_t>(r.col[k]) * cols;
    for (int q = 0; q < S::NV; ++q) acc[q] += v * load<V>(c + q * S::L);
    if constexpr (S::OV) acc[S::NV] += v * load<V>(c + S::at_ov);
    for (int q = 0; q < S::NH; ++q) hacc[q] += v * load<H>(c + S::at_h + q * S::LH);
    for (int t = 0; t < S::NT; ++t) tail[t] += v * c[S::at_t + t];
  }
}

// alpha (sum_i - shift x_i) + beta y_i (beta only when ReadY), one vector of type T.
template <typename T, bool ReadY>
[[gnu::always_inline]] inline T result(const T& sum, const double* xi, const double* yi, double alpha, double shift,
                                       double beta) {
  T r = alpha * (sum - shift * load<T>(xi));
  if (ReadY) r += beta * load<T>(yi);
  return r;
}

// y_i = that result.
template <typename T, bool ReadY>
[[gnu::always_inline]] inline void finish(const T& sum, const double* xi, double* yi, double alpha, double shift,
                                          double beta) {
  const T r = result<T, ReadY>(sum, xi, yi, alpha, shift, beta);
  __builtin_memcpy(yi, &r, sizeof r);
}

// Rows lo .. hi - 1.
template <typename V, typename H, int W, bool ReadY>
[[gnu::always_inline]] inline void chunk_rows(const Rows& d, const Rows& o, const double* x, const double* g,
                                              double* y, PetscInt cols, PetscInt lo, PetscInt hi, double alpha,
                                              double shift, double beta) {
  using S = Split<V, H, W>;
  for (PetscInt i = lo; i < hi; ++i) {
    V acc[S::NV + S::OV > 0 ? S::NV + S::OV : 1] = {};
    H hacc[S::NH > 0 ? S::NH : 1] = {};
    double tail[S::NT > 0 ? S::NT : 1] = {};
    add_row<V, H, W>(d, i, x, cols, acc, hacc, tail);
    if (o.start != nullptr) add_row<V, H, W>(o, i, g, cols, acc, hacc, tail);
    const double* xi = x + static_cast<std::ptrdiff_t>(i) * cols;
    double* yi = y + static_cast<std::ptrdiff_t>(i) * cols;
    // The overlapping vector's result is taken before any of its columns' old Y is overwritten.
    V last = {};
    if constexpr (S::OV) last = result<V, ReadY>(acc[S::NV], xi + S::at_ov, yi + S::at_ov, alpha, shift, beta);
    for (int q = 0; q < S::NV; ++q) finish<V, ReadY>(acc[q], xi + q * S::L, yi + q * S::L, alpha, shift, beta);
    if constexpr (S::OV) __builtin_memcpy(yi + S::at_ov, &last, sizeof last);
    for (int q = 0; q < S::NH; ++q)
      finish<H, ReadY>(hacc[q], xi + S::at_h + q * S::LH, yi + S::at_h + q * S::LH, alpha, shift, beta);
    for (int t = 0; t < S::NT; ++t) {
      const double r = alpha * (tail[t] - shift * xi[S::at_t + t]);
      yi[S::at_t + t] = ReadY ? r + beta * yi[S::at_t + t] : r;
    }
  }
}

using Vec2 = double __attribute__((vector_size(16)));

#define LODESTONE_CHUNK_CASES(V, H)                                                               \
  switch (w) {                                                                                    \
    case 1: return chunk_rows<V, H, 1, ReadY>(d, o, x, g, y, cols, lo, hi, alpha, shift, beta);   \
    case 2: return chunk_rows<V, H, 2, ReadY>(d, o, x, g, y, cols, lo, hi, alpha, shift, beta);   \
    case 3: return chunk_rows<V, H, 3, ReadY>(d, o, x, g, y, cols, lo, hi, alpha, shift, beta);   \
    case 4: return chunk_rows<V, H, 4, ReadY>(d, o, x, g, y, cols, lo, hi, alpha, shift, beta);   \
    case 5: return chunk_rows<V, H, 5, ReadY>(d, o, x, g, y, cols, lo, hi, alpha, shift, beta);   \
    case 6: return chunk_rows<V, H, 6, ReadY>(d, o, x, g, y, cols, lo, hi, alpha, shift, beta);   \
    case 7: return chunk_rows<V, H, 7, ReadY>(d, o, x, g, y, cols, lo, hi, alpha, shift, beta);   \
    case 8: return chunk_rows<V, H, 8, ReadY>(d, o, x, g, y, cols, lo, hi, alpha, shift, beta);   \
    case 9: return chunk_rows<V, H, 9, ReadY>(d, o, x, g, y, cols, lo, hi, alpha, shift, beta);   \
    case 10: return chunk_rows<V, H, 10, ReadY>(d, o, x, g, y, cols, lo, hi, alpha, shift, beta); \
    case 11: return chunk_rows<V, H, 11, ReadY>(d, o, x, g, y, cols, lo, hi, alpha, shift, beta); \
    default: return chunk_rows<V, H, 12, ReadY>(d, o, x, g, y, cols, lo, hi, alpha, shift, beta); \
  }

template <bool ReadY>
void rows_sse2(int w, const Rows& d, const Rows& o, const double* x, const double* g, double* y, PetscInt cols,
               PetscInt lo, PetscInt hi, double alpha, double shift, double beta) {
  LODESTONE_CHUNK_CASES(Vec2, Vec2)
}

#if defined(__x86_64__) && defined(__GNUC__)
// The same compiled for AVX2 (four doubles per vector), chosen at run time where the processor has it.
using Vec4 = double __attribute__((vector_size(32)));
template <bool ReadY>
__attribute__((target("avx2"))) void rows_avx2(int w, const Rows& d, const Rows& o, const double* x, const double* g,
                                               double* y, PetscInt cols, PetscInt lo, PetscInt hi, double alpha,
                                               double shift, double beta) {
  LODESTONE_CHUNK_CASES(Vec4, Vec2)
}
// And with each product and sum fused into one instruction (the compiler contracts
// them where the target has FMA), for blocks of 6 columns or more: there it ran 3-8 %
// faster on a 4-million-row Laplacian; at 5 columns it ran 8-10 % slower (the fused
// chain of a row's sums is longer) and at 4 no different (docs/benchmarks.md).
constexpr int kFusedFrom = 6;
template <bool ReadY>
__attribute__((target("avx2,fma"))) void rows_avx2_fma(int w, const Rows& d, const Rows& o, const double* x,
                                                       const double* g, double* y, PetscInt cols, PetscInt lo,
                                                       PetscInt hi, double alpha, double shift, double beta) {
  LODESTONE_CHUNK_CASES(Vec4, Vec2)
}
bool have_avx2() {
  static const bool yes = __builtin_cpu_supports("avx2");
  return yes;
}
bool have_fma() {
  static const bool yes = __builtin_cpu_supports("fma");
  return yes;
}
#endif
#undef LODESTONE_CHUNK_CASES

template <bool ReadY>
void run_chunk_rows(int w, const Rows& d, const Rows& o, const double* x, const double* g, double* y, PetscInt cols,
                    PetscInt lo, PetscInt hi, double alpha, double shift, double beta) {
#if defined(__x86_64__) && defined(__GNUC__)
  if (have_avx2() && have_fma() && w >= kFusedFrom)
    return rows_avx2_fma<ReadY>(w, d, o, x, g, y, cols, lo, hi, alpha, shift, beta);
  if (have_avx2()) return rows_avx2<ReadY>(w, d, o, x, g, y, cols, lo, hi, alpha, shift, beta);
#endif
  rows_sse2<ReadY>(w, d, o, x, g, y, cols, lo, hi, alpha, shift, beta);
}

constexpr int kChunk = 12;  // columns per pass over the matrix at most: their sums stay in registers

}  // namespace

SparseProduct::~SparseProduct() {
  int finalized = 0;
  MPI_Finalized(&finalized);
  if (finalized) return;  // MPI and PETSc have released everything already
  if (sf_) PetscSFDestroy(&sf_);
  for (auto& [cols, type] : row_types_) MPI_Type_free(&type);
}

Result<bool> SparseProduct::scattered(Mat a) {
  if (scattered_ < 0) {
    // counts: continued, sampled, ranks that could not read their rows.
    std::int64_t counts[3] = {0, 0, 0};
    Mat diag = a;
    PetscBool mpi = PETSC_FALSE;
    Rows d;
    if (PetscObjectTypeCompare(reinterpret_cast<PetscObject>(a), MATMPIAIJ, &mpi) != 0 ||
        (mpi && MatMPIAIJGetSeqAIJ(a, &diag, nullptr, nullptr) != 0) || get_rows(diag, d) != 0) {
      counts[2] = 1;
    } else {
      count_continued(d, counts[0], counts[1]);
      if (restore_rows(diag, d) != 0) counts[2] = 1;
    }
    // Every rank makes the same choice, so every rank runs the same kernel.
    MPI_Allreduce(MPI_IN_PLACE, counts, 3, MPI_INT64_T, MPI_SUM, PetscObjectComm(reinterpret_cast<PetscObject>(a)));
    if (counts[2] > 0) return Status::input("internal: the sparse product could not read the matrix's rows");
    scattered_ = counts[1] > 0 && 2 * counts[0] < counts[1] ? 1 : 0;
  }
  return scattered_ == 1;
}

bool SparseProduct::handles(Mat a) {
  PetscBool seq = PETSC_FALSE, mpi = PETSC_FALSE;
  if (PetscObjectTypeCompare(reinterpret_cast<PetscObject>(a), MATSEQAIJ, &seq) != 0) return false;
  if (PetscObjectTypeCompare(reinterpret_cast<PetscObject>(a), MATMPIAIJ, &mpi) != 0) return false;
  return seq == PETSC_TRUE || mpi == PETSC_TRUE;
}

Status SparseProduct::start_exchange(Mat a, int cols, bool interlaced, const double* x, PetscInt rows,
                                     PetscInt ghosts, const PetscInt* garray) {
  if (!sf_) {
    // Leaves: this rank's ghost columns; roots: the rows that own them (A's column layout).
    PetscLayout layout = nullptr;
    LODESTONE_PETSC(MatGetLayouts(a, nullptr, &layout));
    LODESTONE_PETSC(PetscSFCreate(PetscObjectComm(reinterpret_cast<PetscObject>(a)), &sf_));
    LODESTONE_PETSC(PetscSFSetGraphLayout(sf_, layout, ghosts, nullptr, PETSC_COPY_VALUES, garray));
    LODESTONE_PETSC(PetscSFSetUp(sf_));
  }
  ghost_values_.resize(static_cast<std::size_t>(ghosts) * static_cast<std::size_t>(cols));
  double* g = ghost_values_.data();
  if (interlaced) {
    // A row's `cols` values travel as one unit.
    auto found = row_types_.find(cols);
    if (found == row_types_.end()) {
      MPI_Datatype t = MPI_DATATYPE_NULL;
      MPI_Type_contiguous(cols, MPI_DOUBLE, &t);
      MPI_Type_commit(&t);
      found = row_types_.emplace(cols, t).first;
    }
    LODESTONE_PETSC(PetscSFBcastBegin(sf_, found->second, x, g, MPI_REPLACE));
    pending_ = Pending{found->second, x, g};
  } else {
    for (int j = 0; j < cols; ++j) {
      const double* xj = x + static_cast<std::ptrdiff_t>(j) * rows;
      double* gj = g + static_cast<std::ptrdiff_t>(j) * ghosts;
      LODESTONE_PETSC(PetscSFBcastBegin(sf_, MPI_DOUBLE, xj, gj, MPI_REPLACE));
      LODESTONE_PETSC(PetscSFBcastEnd(sf_, MPI_DOUBLE, xj, gj, MPI_REPLACE));
    }
  }
  return Status::ok();
}

Status SparseProduct::finish_exchange() {
  if (pending_.root == nullptr) return Status::ok();
  const Pending p = pending_;
  pending_ = Pending{};
  LODESTONE_PETSC(PetscSFBcastEnd(sf_, p.unit, p.root, p.leaf, MPI_REPLACE));
  return Status::ok();
}

bool SparseProduct::split_rows(const PetscInt* off_start, PetscInt m) {
  if (overlap_ < 0) {
    // Runs of consecutive rows with and without entries in ghost columns.
    runs_.clear();
    PetscInt free_rows = 0;
    for (PetscInt i = 0; i < m; ++i) {
      const bool ghosts = off_start != nullptr && off_start[i + 1] > off_start[i];
      free_rows += ghosts ? 0 : 1;
      if (runs_.empty() || runs_.back().ghosts != ghosts) runs_.push_back(RowRun{i, i, ghosts});
      runs_.back().end = i + 1;
    }
    // Worth it when most rows need no ghost values and the runs are long (a stencil or
    // band split into row blocks: one or two runs with ghost entries per rank); a
    // scattered pattern, whose rows nearly all have ghost entries, keeps the plain order.
    overlap_ = 2 * free_rows >= m && runs_.size() <= static_cast<std::size_t>(std::max<PetscInt>(3, m / 64)) ? 1 : 0;
  }
  return overlap_ == 1;
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
  LODESTONE_TRY(scattered(a).status());
  const PetscLogEvent event = sparse_product_event(beta != 0.0);
  LODESTONE_PETSC(PetscLogEventBegin(event, a, 0, 0, 0));
  // The ghost values of every column (every rank takes part, ghosts or not): by columns
  // all exchanged here; interlaced, started here and finished below.
  if (mpi) {
    PetscInt rows = 0;
    LODESTONE_PETSC(MatGetLocalSize(a, &rows, nullptr));
    LODESTONE_TRY(start_exchange(a, cols, interlaced, x, rows, ghosts, garray));
  }
  Rows d, o;
  LODESTONE_PETSC(get_rows(diag, d));
  if (off != nullptr && ghosts > 0) LODESTONE_PETSC(get_rows(off, o));
  const PetscInt m = d.count;
  const double* g = ghosts > 0 ? ghost_values_.data() : nullptr;
  // Passes over the matrix: as few as the chunk allows, the columns split evenly among them.
  // A scattered pattern by columns takes two columns per pass (each with its values
  // of X prefetched): wider chunks without prefetching wait on every entry's loads.
  const int chunk = (scattered_ == 1 && !interlaced) ? 2 : kChunk;
  const int passes = m > 0 ? (cols + chunk - 1) / chunk : 0;
  // Interlaced, rows lo .. hi - 1, their ghost entries from `off` (or none).
  const auto rows_of = [&](PetscInt lo, PetscInt hi, const Rows& off_rows) {
    for (int pass = 0, c0 = 0; pass < passes; ++pass) {
      const int w = (cols - c0) / (passes - pass);
      if (beta != 0.0)
        run_chunk_rows<true>(w, d, off_rows, x + c0, g ? g + c0 : g, y + c0, cols, lo, hi, alpha, shift, beta);
      else
        run_chunk_rows<false>(w, d, off_rows, x + c0, g ? g + c0 : g, y + c0, cols, lo, hi, alpha, shift, beta);
      c0 += w;
    }
  };
  overlapped_ = interlaced && mpi && split_rows(o.start, m);
  if (overlapped_) {
    // The rows that need no ghost values while those values travel, then the rest: a
    // rank that is ahead works instead of waiting for its neighbour to send.
    for (const RowRun& r : runs_)
      if (!r.ghosts) rows_of(r.begin, r.end, Rows{});
    LODESTONE_TRY(finish_exchange());
    for (const RowRun& r : runs_)
      if (r.ghosts) rows_of(r.begin, r.end, o);
  } else if (interlaced) {
    LODESTONE_TRY(finish_exchange());
    rows_of(0, m, o);
  } else {
    for (int pass = 0, c0 = 0; pass < passes; ++pass) {
      const int w = (cols - c0) / (passes - pass);
      const std::size_t at = static_cast<std::size_t>(c0) * static_cast<std::size_t>(m);
      const double* gc = g ? g + static_cast<std::size_t>(c0) * static_cast<std::size_t>(ghosts) : g;
      if (beta != 0.0)
        run_chunk<true>(w, scattered_ == 1, d, o, x + at, m, gc, ghosts, y + at, m, alpha, shift, beta);
      else
        run_chunk<false>(w, scattered_ == 1, d, o, x + at, m, gc, ghosts, y + at, m, alpha, shift, beta);
      c0 += w;
    }
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

Status SparseProduct::apply_column(Mat a, const double* x, double* y) {
  return product(a, 1, false, x, y, 1.0, 0.0, 0.0);
}

void to_rows(const Block& x, double* rows) {
  const PetscInt m = x.local_rows();
  const int cols = x.cols();
  for (int j = 0; j < cols; ++j) {
    const double* c = x.column(j);
    for (PetscInt i = 0; i < m; ++i) rows[static_cast<std::ptrdiff_t>(i) * cols + j] = c[i];
  }
}

void from_rows(const double* rows, Block& x) {
  const PetscInt m = x.local_rows();
  const int cols = x.cols();
  for (int j = 0; j < cols; ++j) {
    double* c = x.column(j);
    for (PetscInt i = 0; i < m; ++i) c[i] = rows[static_cast<std::ptrdiff_t>(i) * cols + j];
  }
  x.changed();
}

}  // namespace lodestone::algebra
