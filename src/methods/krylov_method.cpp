// `krylov`: thick-restart Arnoldi in Krylov-Schur form (Stewart, 2001), real
// arithmetic. The state between cycles is a Krylov-Schur decomposition
//     A V_k = V_k S_k + v_k b^T,
// V_k orthonormal (n x k), v_k the next unit direction orthogonal to it, S_k in
// real Schur form (diagonal for symmetric input) with the wanted Ritz values
// first. One step() is one restart cycle: the basis is extended column by column
// to m (one product with A each, classical Gram-Schmidt with one reduction per
// pass, repeated when a pass removed much), the m x m projected matrix is brought to Schur form with
// the wanted values first (a complex pair is never split), convergence is read
// from b (the residual of a Ritz vector y is |b^T y|), and the decomposition is
// truncated back to k columns.
//
// Sizes: m = max(2K+1, K+16) columns by default (or --block-size, at least K+1),
// capped at n. A restart keeps the K most wanted Ritz vectors, one more for each
// that has converged (converged ones stay at the front and would otherwise crowd
// unconverged wanted ones out), and an eighth of the m-K spare columns as next-
// most-wanted ones that steer convergence; never more than K plus half the spare.
// The rest of the cycle adds new directions. The previous rule, K plus half the
// spare from the start, took more matvecs in 9 of 13 symmetric test runs (up to
// 2.3 times; in the 4 with K = 2 it took up to 1.24 times fewer) and did not
// converge within 30 000 on two of ten hard non-symmetric ones
// (docs/benchmarks.md, "The Krylov restart").
//
// Converged Schur vectors are kept at the front of the basis (they stay the most
// wanted), not deflated. Extraction maps the leading K (K+1 for a pair) columns
// onto SubspaceMethod's locked set and uses its certified extraction.
#include <fmt/format.h>
#include <petscsys.h>
#include <petscblaslapack.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <numeric>

#include "methods/subspace.hpp"
#include "support/collective.hpp"

namespace lodestone::methods {
namespace {

using algebra::Block;
using algebra::Small;

class KrylovMethod final : public SubspaceMethod {
 public:
  const char* name() const override { return "krylov"; }

  Status setup(algebra::Operator& op, const Problem& problem) override {
    LODESTONE_TRY(init(op, problem));
    LODESTONE_TRY(allocate());
    k_ = 0;
    s_ = Small(0, 0);
    b_.clear();
    clear_ritz();
    // The start vector, hashed from (seed, global row): the same on any rank count.
    LODESTONE_TRY(random_direction(0));
    return Status::ok();
  }

  Status step() override {
    if (nconv_ >= problem_.pairs) return Status::ok();
    LODESTONE_TRY(extend());
    LODESTONE_TRY(schur_and_truncate());
    ++iterations_;
    return Status::ok();
  }

  int converged() const override {
    const int k = problem_.pairs;
    if (nconv_ < k) return nconv_;
    return (k < static_cast<int>(ritz_im_.size()) && ritz_im_[k - 1] > 0) ? k + 1 : k;
  }

  void progress(std::vector<double>& estimates, std::vector<double>& residuals) const override {
    const int k = problem_.pairs;
    estimates.assign(k, std::numeric_limits<double>::quiet_NaN());
    residuals.assign(k, std::numeric_limits<double>::quiet_NaN());
    for (int j = nconv_; j < std::min<int>(k, static_cast<int>(ritz_re_.size())); ++j) {
      estimates[j] = ritz_re_[j];
      residuals[j] = ritz_res_[j];
    }
  }

  Result<Pairs> extract() override {
    // Never stepped (a budget of no products): one cycle gives the first Ritz values.
    if (k_ == 0 && m_ > 0) LODESTONE_TRY(step());
    // The leading p Schur columns (p = K, one more to keep a pair whole) are an
    // invariant piece of the decomposition: hand them over as the locked set.
    int p = std::min(k_, problem_.pairs);
    if (p > 0 && p < k_ && ritz_im_[p - 1] > 0) ++p;
    auto q = Block::like(op_->mat(), p);
    if (!q) return q.status();
    algebra::copy_columns(v_, 0, *q, 0, p);
    q_ = std::move(*q);
    t_ = s_.sub(0, p, 0, p);
    locked_ = p;
    LODESTONE_TRY(resize_active(0));
    return SubspaceMethod::extract();
  }

  Status save(MethodState& state) override {
    state.blocks.clear();
    state.scalars.clear();
    auto v = Block::like(op_->mat(), k_ + 1);
    if (!v) return v.status();
    algebra::copy_columns(v_, 0, *v, 0, k_ + 1);
    state.blocks.emplace_back("krylov_basis", std::move(*v));
    state.scalars["krylov_s"] = s_.a;
    state.scalars["krylov_b"] = b_;
    state.scalars["krylov_counters"] = {static_cast<double>(k_), static_cast<double>(iterations_),
                                        static_cast<double>(stream_)};
    return Status::ok();
  }

  Status restore(algebra::Operator& op, const Problem& problem, MethodState& state) override {
    LODESTONE_TRY(init(op, problem));
    LODESTONE_TRY(allocate());
    const auto counters = state.scalars["krylov_counters"];
    if (counters.size() != 3) return Status::input("the saved method state has no Krylov counters");
    const int k = static_cast<int>(counters[0]);
    Block* saved = nullptr;
    for (auto& [name, block] : state.blocks)
      if (name == "krylov_basis") saved = &block;
    if (!saved || saved->cols() != k + 1 || k < 0 || k > m_)
      return Status::input("the saved Krylov basis does not match its counters or this problem's basis size");
    const auto& s = state.scalars["krylov_s"];
    const auto& b = state.scalars["krylov_b"];
    if (s.size() != static_cast<std::size_t>(k) * k || b.size() != static_cast<std::size_t>(k))
      return Status::input("the saved Krylov projected matrix has the wrong size");
    k_ = k;
    iterations_ = static_cast<std::int64_t>(counters[1]);
    stream_ = static_cast<std::uint64_t>(counters[2]);
    s_ = Small(k, k);
    s_.a = s;
    b_ = b;
    algebra::copy_columns(*saved, 0, v_, 0, k + 1);
    clear_ritz();
    return assess(s_, b_);
  }

 private:
  // Basis size m and the basis, the one distributed block the method keeps (each
  // product goes from a column to the next, the restart rotates the basis in place).
  Status allocate() {
    PetscInt n = 0;
    MatGetSize(op_->mat(), &n, nullptr);
    n_ = static_cast<int>(std::min<PetscInt>(n, std::numeric_limits<int>::max() / 2));
    const int kp = problem_.pairs;
    int m = problem_.block_size > 0 ? std::max(problem_.block_size, kp + 1) : std::max(2 * kp + 1, kp + 16);
    m_ = std::min(m, n_);
    auto v = Block::like(op_->mat(), m_ + 1);
    if (!v) return v.status();
    v_ = std::move(*v);
    return Status::ok();
  }

  void clear_ritz() {
    ritz_re_.clear();
    ritz_im_.clear();
    ritz_res_.clear();
    nconv_ = 0;
  }

  // Orthogonalizes column c of V against columns [0, c): classical Gram-Schmidt,
  // each pass one reduction of (V^T w, w^T w). A pass that kept more than 1/sqrt(2)
  // of w's norm is the last (the test of Daniel, Gragg, Kaufman and Stewart, 1976:
  // what it left along V is then a rounding error of w's own size); otherwise
  // another pass follows, three at most. h receives the coefficients, the return
  // value is the remaining norm; w0 the norm before (both replicated).
  //
  // A pass that is followed by another applies its update and forms the next
  // projection in one sweep over the basis, a block of rows at a time while the
  // block is in cache (update_and_project): two passes read the basis three times,
  // not four. w is column c, right after the basis, so one product with the
  // c+1 leading columns gives V^T w and w^T w together.
  double orthogonalize(int c, std::vector<double>& h, double& w0) {
    const PetscInt rows = v_.local_rows();
    double* base = v_.data();
    double* w = base + static_cast<std::size_t>(c) * rows;
    h.assign(c, 0.0);
    std::vector<double> buf(static_cast<std::size_t>(c) + 1, 0.0);
    project(rows, c, base, buf.data());
    algebra::sum_replicated(v_.comm(), buf.data(), c + 1);
    double ww = buf[c];
    w0 = std::sqrt(ww);
    if (c == 0) return w0;
    double beta = -1;
    for (int pass = 0; pass < 3; ++pass) {
      double cc = 0;
      for (int i = 0; i < c; ++i) h[i] += buf[i], cc += buf[i] * buf[i];
      const double est = ww - cc;
      const bool enough = est > 0.5 * ww;  // this pass removed little: w is clean
      if (enough || pass == 2) {
        update(rows, c, base, buf.data());
        if (enough) beta = std::sqrt(est);
        break;
      }
      update_and_project(rows, c, base, buf);
      algebra::sum_replicated(v_.comm(), buf.data(), c + 1);
      ww = buf[c];
    }
    if (beta < 0) {  // three passes still removing much: measure what is left
      double left = 0;
      for (PetscInt i = 0; i < rows; ++i) left += w[i] * w[i];
      algebra::sum_replicated(v_.comm(), &left, 1);
      beta = std::sqrt(left);
    }
    v_.changed();
    return beta;
  }

  // out[0..c] = [V w]^T w over this rank's rows (V: the c columns before w).
  static void project(PetscInt rows, int c, const double* base, double* out) {
    std::fill(out, out + c + 1, 0.0);
    if (rows == 0) return;
    PetscBLASInt bm = static_cast<PetscBLASInt>(rows), bc = c + 1, one_i = 1;
    double one = 1.0, zero = 0.0;
    const double* w = base + static_cast<std::size_t>(c) * rows;
    BLASgemv_("T", &bm, &bc, &one, base, &bm, w, &one_i, &zero, out, &one_i);
  }

  // w -= V coef.
  static void update(PetscInt rows, int c, double* base, const double* coef) {
    if (rows == 0) return;
    PetscBLASInt bm = static_cast<PetscBLASInt>(rows), bc = c, one_i = 1;
    double minus = -1.0, one = 1.0;
    double* w = base + static_cast<std::size_t>(c) * rows;
    BLASgemv_("N", &bm, &bc, &minus, base, &bm, coef, &one_i, &one, w, &one_i);
  }

  // w -= V coef, then coef = [V w]^T w with the updated w, in one sweep over
  // blocks of rows (the same sums as update() then project(), added up by block).
  static void update_and_project(PetscInt rows, int c, double* base, std::vector<double>& coef) {
    std::vector<double> next(static_cast<std::size_t>(c) + 1, 0.0);
    constexpr PetscInt kBlockRows = 512;  // 512 rows x (c+1) columns stay in the core's cache
    PetscBLASInt ld = static_cast<PetscBLASInt>(rows), bc = c, bc1 = c + 1, one_i = 1;
    double minus = -1.0, one = 1.0;
    double* w = base + static_cast<std::size_t>(c) * rows;
    for (PetscInt r0 = 0; r0 < rows; r0 += kBlockRows) {
      PetscBLASInt br = static_cast<PetscBLASInt>(std::min(kBlockRows, rows - r0));
      BLASgemv_("N", &br, &bc, &minus, base + r0, &ld, coef.data(), &one_i, &one, w + r0, &one_i);
      BLASgemv_("T", &br, &bc1, &one, base + r0, &ld, w + r0, &one_i, &one, next.data(), &one_i);
    }
    coef.swap(next);
  }

  // Numerically zero remainder: w lay in the span of the basis.
  static bool negligible(double beta, double w0) { return !(beta > 1e-10 * w0) || beta == 0.0; }

  void scale_column(int c, double s) {
    double* p = v_.column(c);
    for (PetscInt i = 0; i < v_.local_rows(); ++i) p[i] *= s;
    v_.changed();
  }

  // Column c of V := a fresh random unit vector orthogonal to columns [0, c).
  Status random_direction(int c) {
    std::vector<double> h;
    for (int attempt = 0; attempt < 8; ++attempt) {
      algebra::fill_random(v_, problem_.seed, stream_, c, 1);
      stream_ += static_cast<std::uint64_t>(m_ + 1);
      double w0 = 0;
      const double beta = orthogonalize(c, h, w0);
      if (!negligible(beta, w0)) {
        scale_column(c, 1.0 / beta);
        return Status::ok();
      }
    }
    return Status::input("could not find a start direction orthogonal to the Krylov basis");
  }

  // Arnoldi from k_ to m_ columns; fills h_ (m x m) and beta_.
  Status extend() {
    const int m = m_, k = k_;
    h_ = Small(m, m);
    for (int j = 0; j < k; ++j) {
      for (int i = 0; i < k; ++i) h_(i, j) = s_(i, j);
      h_(k, j) = b_[j];
    }
    std::vector<double> h;
    beta_ = 0;
    for (int j = k; j < m; ++j) {
      LODESTONE_TRY(agree(comm_, op_->apply_column(v_, j, v_, j + 1)));
      double w0 = 0;
      const double beta = orthogonalize(j + 1, h, w0);
      for (int i = 0; i <= j; ++i) h_(i, j) = h[i];
      const bool invariant = negligible(beta, w0);
      if (j + 1 < m) h_(j + 1, j) = invariant ? 0.0 : beta;
      else beta_ = invariant ? 0.0 : beta;
      if (!invariant) {
        scale_column(j + 1, 1.0 / beta);
      } else if (j + 1 < n_) {
        // An invariant subspace: go on from a random direction orthogonal to it.
        LODESTONE_TRY(random_direction(j + 1));
      } else {
        std::fill(v_.column(j + 1), v_.column(j + 1) + v_.local_rows(), 0.0);
        v_.changed();
      }
    }
    return Status::ok();
  }

  // From a Schur form t (wanted first) and its b: Ritz values, the residual
  // |b^T y| / |y| of each Ritz vector y, and the converged leading run.
  Status assess(const Small& t, const std::vector<double>& b) {
    const int n = t.rows;
    algebra::quasi_triangular_eigenvalues(t, ritz_re_, ritz_im_);
    ritz_res_.assign(n, 0.0);
    Small y = Small::identity(n);
    if (!problem_.symmetric) {
      auto ev = algebra::schur_eigenvectors(comm_, t);
      if (!ev) return ev.status();
      y = std::move(*ev);
    }
    auto dot_norm = [&](int j, double& dot, double& nrm) {
      dot = 0, nrm = 0;
      for (int i = 0; i < n; ++i) dot += b[i] * y(i, j), nrm += y(i, j) * y(i, j);
    };
    for (int j = 0; j < n; ++j) {
      if (ritz_im_[j] > 0 && j + 1 < n) {
        double d1, n1, d2, n2;
        dot_norm(j, d1, n1);
        dot_norm(j + 1, d2, n2);
        const double nrm = std::sqrt(n1 + n2);
        ritz_res_[j] = ritz_res_[j + 1] = nrm > 0 ? std::hypot(d1, d2) / nrm : 0.0;
        ++j;
      } else {
        double d, nn;
        dot_norm(j, d, nn);
        ritz_res_[j] = nn > 0 ? std::fabs(d) / std::sqrt(nn) : 0.0;
      }
    }
    nconv_ = 0;
    while (nconv_ < n) {
      const int size = ritz_im_[nconv_] > 0 && nconv_ + 1 < n ? 2 : 1;
      bool ok = true;
      for (int i = nconv_; i < nconv_ + size; ++i) ok = ok && ritz_res_[i] <= threshold();
      if (!ok) break;
      nconv_ += size;
    }
    return Status::ok();
  }

  Status schur_and_truncate() {
    const int m = m_;
    Small t, u;
    if (problem_.symmetric) {
      Small hs(m, m);
      for (int j = 0; j < m; ++j)
        for (int i = 0; i < m; ++i) hs(i, j) = 0.5 * (h_(i, j) + h_(j, i));
      auto eig = algebra::symmetric_eigen(comm_, hs);
      if (!eig) return eig.status();
      std::vector<int> order(m);
      std::iota(order.begin(), order.end(), 0);
      std::stable_sort(order.begin(), order.end(),
                       [&](int a, int c) { return priority(eig->values[a], 0) > priority(eig->values[c], 0); });
      t = Small(m, m);
      u = Small(m, m);
      for (int j = 0; j < m; ++j) {
        t(j, j) = eig->values[order[j]];
        for (int i = 0; i < m; ++i) u(i, j) = eig->vectors(i, order[j]);
      }
    } else {
      auto schur = algebra::real_schur(comm_, h_, [this](double re, double im) { return priority(re, im); });
      if (!schur) return schur.status();
      t = std::move(schur->t);
      u = std::move(schur->u);
    }
    std::vector<double> b(m);
    for (int j = 0; j < m; ++j) b[j] = beta_ * u(m - 1, j);
    LODESTONE_TRY(assess(t, b));
    // Columns kept (see the top of the file); everything once K are converged
    // (nothing more is extended). A complex pair is never cut in two.
    int keep = m;
    if (nconv_ < problem_.pairs) {
      const int spare = m - problem_.pairs;
      keep = std::clamp(problem_.pairs + std::min(spare / 2, nconv_ + spare / 8), 1, m - 1);
      if (ritz_im_[keep - 1] > 0) keep = keep + 1 <= m - 1 ? keep + 1 : keep - 1;
    }
    algebra::times_small_leading(v_, u.columns(0, keep));
    if (keep < m) algebra::copy_columns(v_, m, v_, keep, 1);
    k_ = keep;
    s_ = t.sub(0, keep, 0, keep);
    b_.assign(b.begin(), b.begin() + keep);
    ritz_re_.resize(keep);
    ritz_im_.resize(keep);
    ritz_res_.resize(keep);
    nconv_ = std::min(nconv_, keep);
    return Status::ok();
  }

  int n_ = 0, m_ = 0, k_ = 0, nconv_ = 0;
  Block v_;
  Small s_, h_;
  std::vector<double> b_;
  double beta_ = 0;
};

}  // namespace

std::unique_ptr<Method> make_krylov() { return std::make_unique<KrylovMethod>(); }

}  // namespace lodestone::methods
