// Locked set, Rayleigh-Ritz, locking, extraction and save/restore shared by the
// block-based methods (see subspace.hpp).
#include "methods/subspace.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <limits>
#include <numeric>

#include "methods/lanczos.hpp"
#include "support/collective.hpp"

namespace lodestone::methods {

using algebra::Block;
using algebra::Small;

namespace {

// Lanczos steps of shift_to_spectrum_end() (as for the Chebyshev filter's bounds).
constexpr int kShiftLanczosSteps = 24;

Result<Block> copy_of(Mat a, const Block& src, int c0, int m) {
  auto b = Block::like(a, m);
  if (!b) return b;
  algebra::copy_columns(src, c0, *b, 0, m);
  return b;
}

}  // namespace

double SubspaceMethod::priority(double re, double im) const {
  switch (problem_.selection) {
    case Selection::largest: return re;
    case Selection::smallest: return -re;
    default: return std::hypot(re - (problem_.has_shift ? problem_.shift : 0.0), im);
  }
}

Status SubspaceMethod::init(algebra::Operator& op, const Problem& problem) {
  op_ = &op;
  problem_ = problem;
  comm_ = PetscObjectComm(reinterpret_cast<PetscObject>(op.mat()));
  // The power step iterates with A - sigma I: the wanted end of the spectrum must be
  // the largest in modulus. ||A||_est bounds the spectrum, so shifting by it does that.
  if (problem.has_shift) sigma_ = problem.shift;
  else if (problem.selection == Selection::largest) sigma_ = -problem.norm_estimate;
  else if (problem.selection == Selection::smallest) sigma_ = problem.norm_estimate;
  else sigma_ = 0.0;
  locked_ = 0;
  t_ = Small(0, 0);
  iterations_ = 0;
  stream_ = 1;
  return Status::ok();
}

Status SubspaceMethod::shift_to_spectrum_end() {
  if (!problem_.symmetric || problem_.has_shift || problem_.selection == Selection::magnitude) return Status::ok();
  auto bounds = lanczos_bounds(*op_, kShiftLanczosSteps, problem_.seed, 1u << 30, problem_.norm_estimate);
  if (!bounds) return bounds.status();
  sigma_ = problem_.selection == Selection::largest ? bounds->ritz_lower : bounds->ritz_upper;
  return Status::ok();
}

Status SubspaceMethod::start_block(int width) {
  PetscInt n = 0;
  MatGetSize(op_->mat(), &n, nullptr);
  const int b = static_cast<int>(std::min<PetscInt>(width, n));
  guard_ = std::max(0, b - problem_.pairs);
  LODESTONE_TRY(resize_active(b));
  LODESTONE_TRY(randomize(0));
  LODESTONE_TRY(agree(comm_, product()));
  return rayleigh_ritz();
}

Status SubspaceMethod::restart_block() {
  LODESTONE_TRY(resize_active(std::max(1, wanted_left() + guard_)));
  LODESTONE_TRY(randomize(0));
  LODESTONE_TRY(agree(comm_, product()));
  return rayleigh_ritz();
}

Status SubspaceMethod::resize_active(int cols) {
  auto x = Block::like(op_->mat(), cols);
  if (!x) return x.status();
  auto w = Block::like(op_->mat(), cols);
  if (!w) return w.status();
  x_ = std::move(*x);
  w_ = std::move(*w);
  active_ = cols;
  ritz_re_.assign(cols, 0.0);
  ritz_im_.assign(cols, 0.0);
  ritz_res_.assign(cols, std::numeric_limits<double>::infinity());
  t_act_ = Small(cols, cols);
  c_act_ = Small(locked_, cols);
  return Status::ok();
}

Status SubspaceMethod::randomize(int c0) {
  algebra::fill_random(x_, problem_.seed, stream_, c0, active_ - c0);
  stream_ += static_cast<std::uint64_t>(active_);
  return orthonormalize_active();
}

Status SubspaceMethod::orthonormalize_active() {
  if (locked_ > 0) algebra::project_out(q_, locked_, x_);
  auto r = algebra::orthonormalize(x_, locked_ > 0 ? &q_ : nullptr, locked_, problem_.seed, stream_ + 1000003u);
  if (!r) return r.status();
  stream_ += static_cast<std::uint64_t>(active_);
  return Status::ok();
}

Status SubspaceMethod::product() { return op_->apply(x_, w_); }

Status SubspaceMethod::rayleigh_ritz() {
  const int b = active_;
  if (b == 0) return Status::ok();
  const PetscInt rows = x_.local_rows();
  std::vector<int> order(b);
  std::iota(order.begin(), order.end(), 0);
  if (problem_.symmetric) {
    Small h = algebra::gram(x_, w_);
    for (int i = 0; i < b; ++i)
      for (int j = i + 1; j < b; ++j) h(i, j) = h(j, i) = 0.5 * (h(i, j) + h(j, i));
    auto eig = algebra::symmetric_eigen(comm_, h);
    if (!eig) return eig.status();
    std::stable_sort(order.begin(), order.end(),
                     [&](int a, int c) { return priority(eig->values[a], 0) > priority(eig->values[c], 0); });
    Small s(b, b);
    for (int j = 0; j < b; ++j) {
      for (int i = 0; i < b; ++i) s(i, j) = eig->vectors(i, order[j]);
      ritz_re_[j] = eig->values[order[j]];
      ritz_im_[j] = 0.0;
    }
    algebra::times_small_inplace(x_, s);
    algebra::times_small_inplace(w_, s);
    t_act_ = Small(b, b);
    for (int j = 0; j < b; ++j) t_act_(j, j) = ritz_re_[j];
    c_act_ = Small(locked_, b);
    std::vector<double> res(b, 0.0);
    for (int j = 0; j < b; ++j) {
      const double* xp = x_.column(j);
      const double* wp = w_.column(j);
      const double th = ritz_re_[j];
      double acc = 0;
      for (PetscInt i = 0; i < rows; ++i) {
        const double r = wp[i] - th * xp[i];
        acc += r * r;
      }
      res[j] = acc;
    }
    algebra::sum_replicated(comm_, res.data(), b);
    for (int j = 0; j < b; ++j) ritz_res_[j] = std::sqrt(res[j]);
    return Status::ok();
  }
  // Non-symmetric: real Schur form of the projected matrix, most wanted first.
  Small h, cq;
  if (locked_ > 0) algebra::gram2(x_, q_, w_, h, cq);
  else h = algebra::gram(x_, w_), cq = Small(0, b);
  auto schur = algebra::real_schur(comm_, h, [this](double re, double im) { return priority(re, im); });
  if (!schur) return schur.status();
  algebra::times_small_inplace(x_, schur->u);
  algebra::times_small_inplace(w_, schur->u);
  c_act_ = algebra::multiply(cq, schur->u);
  t_act_ = schur->t;
  ritz_re_ = schur->re;
  ritz_im_ = schur->im;
  // Schur residuals: R = W - Q C - X T, column by column.
  auto r = Block::like(op_->mat(), b);
  if (!r) return r.status();
  algebra::copy_columns(w_, 0, *r, 0, b);
  if (locked_ > 0) algebra::subtract_times(*r, q_, c_act_);
  algebra::subtract_times(*r, x_, t_act_);
  auto norms = algebra::column_norms(*r);
  for (int j = 0; j < b; ++j) {
    if (ritz_im_[j] > 0 && j + 1 < b) {
      const double pair = std::hypot(norms[j], norms[j + 1]);
      ritz_res_[j] = ritz_res_[j + 1] = pair;
      ++j;
    } else {
      ritz_res_[j] = norms[j];
    }
  }
  return Status::ok();
}

int SubspaceMethod::convergeable_prefix() const {
  int j = 0;
  while (j < active_) {
    const int size = (ritz_im_[j] > 0) ? 2 : 1;
    if (j + size > active_) break;
    bool ok = true;
    for (int k = j; k < j + size; ++k) ok = ok && ritz_res_[k] <= threshold();
    if (!ok) break;
    j += size;
  }
  return j;
}

Status SubspaceMethod::lock(int m) {
  if (m <= 0) return Status::ok();
  const int nl = locked_ + m, na = active_ - m;
  auto q = Block::like(op_->mat(), nl);
  if (!q) return q.status();
  if (locked_ > 0) algebra::copy_columns(q_, 0, *q, 0, locked_);
  algebra::copy_columns(x_, 0, *q, locked_, m);
  Small t(nl, nl);
  for (int j = 0; j < locked_; ++j)
    for (int i = 0; i < locked_; ++i) t(i, j) = t_(i, j);
  for (int j = 0; j < m; ++j) {
    for (int i = 0; i < locked_; ++i) t(i, locked_ + j) = problem_.symmetric ? 0.0 : c_act_(i, j);
    for (int i = 0; i < m; ++i) t(locked_ + i, locked_ + j) = t_act_(i, j);
  }
  Small c(nl, na);
  for (int j = 0; j < na; ++j) {
    for (int i = 0; i < locked_; ++i) c(i, j) = c_act_(i, m + j);
    for (int i = 0; i < m; ++i) c(locked_ + i, j) = problem_.symmetric ? 0.0 : t_act_(i, m + j);
  }
  Small ta = t_act_.sub(m, na, m, na);
  auto x = copy_of(op_->mat(), x_, m, na);
  if (!x) return x.status();
  auto w = copy_of(op_->mat(), w_, m, na);
  if (!w) return w.status();
  q_ = std::move(*q);
  t_ = std::move(t);
  x_ = std::move(*x);
  w_ = std::move(*w);
  c_act_ = std::move(c);
  t_act_ = std::move(ta);
  ritz_re_.erase(ritz_re_.begin(), ritz_re_.begin() + m);
  ritz_im_.erase(ritz_im_.begin(), ritz_im_.begin() + m);
  ritz_res_.erase(ritz_res_.begin(), ritz_res_.begin() + m);
  locked_ = nl;
  active_ = na;
  return Status::ok();
}

void SubspaceMethod::progress(std::vector<double>& estimates, std::vector<double>& residuals) const {
  const int k = problem_.pairs;
  estimates.assign(k, std::numeric_limits<double>::quiet_NaN());
  residuals.assign(k, std::numeric_limits<double>::quiet_NaN());
  for (int j = 0; j < active_; ++j) {
    const int idx = locked_ + j;
    if (idx >= k) break;
    estimates[idx] = ritz_re_[j];
    residuals[idx] = ritz_res_[j];
  }
}

Result<Pairs> SubspaceMethod::extract() {
  const int k = problem_.pairs;
  // Candidates: every locked pair, then enough active Ritz pairs to reach K.
  int take_active = std::min(active_, std::max(0, k - locked_));
  if (take_active > 0 && take_active < active_ && ritz_im_[take_active - 1] > 0) ++take_active;
  const int m = locked_ + take_active;
  if (m == 0) return Status::input("no eigenpair approximations to report");
  std::vector<double> re(m), im(m);
  std::vector<char> locked_flag(m, 0);
  auto v = Block::like(op_->mat(), m);
  if (!v) return v.status();
  // Non-symmetric with locked pairs: A [Q X] = [Q X] [T C; 0 T_act] + residual, and the
  // eigenvectors of that whole quasi-triangular matrix serve both parts. A locked pair's has
  // zeros below T (the back-substitution stops at its own row, so it is T's own); an active
  // pair's has a part in Q too, (lambda I - T)^-1 C y, which X y alone would leave out (a
  // pair not yet converged would then report a worse vector and residual than the
  // subspace holds).
  Small whole_ev;
  if (!problem_.symmetric && locked_ > 0) {
    const int nl = locked_, na = take_active > 0 ? active_ : 0;
    Small h(nl + na, nl + na);
    for (int j = 0; j < nl; ++j)
      for (int i = 0; i < nl; ++i) h(i, j) = t_(i, j);
    for (int j = 0; j < na; ++j) {
      for (int i = 0; i < nl; ++i) h(i, nl + j) = c_act_(i, j);
      for (int i = 0; i < na; ++i) h(nl + i, nl + j) = t_act_(i, j);
    }
    auto ev = algebra::schur_eigenvectors(comm_, h);
    if (!ev) return ev.status();
    whole_ev = std::move(*ev);
  }
  if (locked_ > 0) {
    std::vector<double> lre, lim;
    Small y = Small::identity(locked_);
    if (problem_.symmetric) {
      lre.resize(locked_);
      lim.assign(locked_, 0.0);
      for (int j = 0; j < locked_; ++j) lre[j] = t_(j, j);
    } else {
      algebra::quasi_triangular_eigenvalues(t_, lre, lim);
      y = whole_ev.sub(0, locked_, 0, locked_);
    }
    auto vl = Block::like(op_->mat(), locked_);
    if (!vl) return vl.status();
    algebra::times_small(q_, y, *vl);
    algebra::copy_columns(*vl, 0, *v, 0, locked_);
    for (int j = 0; j < locked_; ++j) re[j] = lre[j], im[j] = lim[j], locked_flag[j] = 1;
  }
  if (take_active > 0) {
    Small y = Small::identity(active_), z;  // z: the locked vectors' share (non-symmetric)
    if (!problem_.symmetric && locked_ > 0) {
      y = whole_ev.sub(locked_, active_, locked_, active_);
      z = whole_ev.sub(0, locked_, locked_, take_active);
    } else if (!problem_.symmetric) {
      auto ev = algebra::schur_eigenvectors(comm_, t_act_);
      if (!ev) return ev.status();
      y = std::move(*ev);
    }
    auto va = Block::like(op_->mat(), take_active);
    if (!va) return va.status();
    algebra::times_small(x_, y.columns(0, take_active), *va);
    if (z.cols > 0) {
      for (double& e : z.a) e = -e;
      algebra::subtract_times(*va, q_, z);  // va += Q z
    }
    algebra::copy_columns(*va, 0, *v, locked_, take_active);
    for (int j = 0; j < take_active; ++j) re[locked_ + j] = ritz_re_[j], im[locked_ + j] = ritz_im_[j];
  }
  // Unit 2-norm; a complex pair (columns j, j+1) as one complex vector.
  auto norms = algebra::column_norms(*v);
  std::vector<double> scale(m, 1.0);
  for (int j = 0; j < m; ++j) {
    if (im[j] > 0 && j + 1 < m) {
      const double nrm = std::hypot(norms[j], norms[j + 1]);
      scale[j] = scale[j + 1] = nrm > 0 ? 1.0 / nrm : 1.0;
      ++j;
    } else {
      scale[j] = norms[j] > 0 ? 1.0 / norms[j] : 1.0;
    }
  }
  for (int j = 0; j < m; ++j) {
    double* p = v->column(j);
    for (PetscInt i = 0; i < v->local_rows(); ++i) p[i] *= scale[j];
  }
  v->changed();
  // Certify: one product, then ||A v - lambda v|| for every pair.
  auto av = Block::like(op_->mat(), m);
  if (!av) return av.status();
  LODESTONE_TRY(agree(comm_, op_->apply(*v, *av)));
  std::vector<double> sq(m, 0.0);
  const PetscInt rows = v->local_rows();
  for (int j = 0; j < m; ++j) {
    if (im[j] > 0 && j + 1 < m) {
      const double a = re[j], b = im[j];
      const double *xr = v->column(j), *xi = v->column(j + 1), *yr = av->column(j), *yi = av->column(j + 1);
      double acc = 0;
      for (PetscInt i = 0; i < rows; ++i) {
        const double r1 = yr[i] - a * xr[i] + b * xi[i];
        const double r2 = yi[i] - b * xr[i] - a * xi[i];
        acc += r1 * r1 + r2 * r2;
      }
      sq[j] = acc;
      sq[j + 1] = 0;
      ++j;
    } else {
      const double *x = v->column(j), *y = av->column(j);
      double acc = 0;
      for (PetscInt i = 0; i < rows; ++i) {
        const double r = y[i] - re[j] * x[i];
        acc += r * r;
      }
      sq[j] = acc;
    }
  }
  algebra::sum_replicated(comm_, sq.data(), m);
  std::vector<double> res(m);
  for (int j = 0; j < m; ++j) {
    if (im[j] > 0 && j + 1 < m) {
      res[j] = res[j + 1] = std::sqrt(sq[j]);
      ++j;
    } else {
      res[j] = std::sqrt(sq[j]);
    }
  }
  // Order: locked groups by priority, then the rest by priority; a pair stays whole.
  struct Group { int start, size; bool locked; double key; };
  std::vector<Group> groups;
  for (int j = 0; j < m;) {
    const int size = (im[j] > 0 && j + 1 < m) ? 2 : 1;
    groups.push_back({j, size, locked_flag[j] != 0, priority(re[j], im[j])});
    j += size;
  }
  std::stable_sort(groups.begin(), groups.end(), [](const Group& a, const Group& b) {
    if (a.locked != b.locked) return a.locked;
    return a.key > b.key;
  });
  Pairs out;
  std::vector<int> columns;
  bool still_converged = true;
  for (const auto& g : groups) {
    if (static_cast<int>(columns.size()) >= k) break;
    for (int s = 0; s < g.size; ++s) {
      const int j = g.start + s;
      columns.push_back(j);
      out.re.push_back(re[j]);
      out.im.push_back(im[j]);
      out.residuals.push_back(res[j]);
      still_converged = still_converged && g.locked && res[j] <= threshold();
      if (still_converged) out.converged += 1;
    }
  }
  auto result = Block::like(op_->mat(), static_cast<int>(columns.size()));
  if (!result) return result.status();
  for (std::size_t c = 0; c < columns.size(); ++c) algebra::copy_columns(*v, columns[c], *result, static_cast<int>(c), 1);
  out.vectors = std::move(*result);
  return out;
}

Status SubspaceMethod::save(MethodState& state) {
  state.blocks.clear();
  state.scalars.clear();
  if (locked_ > 0) {
    auto q = copy_of(op_->mat(), q_, 0, locked_);
    if (!q) return q.status();
    state.blocks.emplace_back("locked", std::move(*q));
  }
  if (active_ > 0) {
    auto x = copy_of(op_->mat(), x_, 0, active_);
    if (!x) return x.status();
    state.blocks.emplace_back("active", std::move(*x));
  }
  state.scalars["locked_t"] = t_.a;
  state.scalars["shift"] = {sigma_};
  state.scalars["counters"] = {static_cast<double>(locked_), static_cast<double>(iterations_),
                               static_cast<double>(stream_)};
  return save_extra(state);
}

Status SubspaceMethod::restore(algebra::Operator& op, const Problem& problem, MethodState& state) {
  LODESTONE_TRY(init(op, problem));
  if (const auto& shift = state.scalars["shift"]; shift.size() == 1) sigma_ = shift[0];
  auto counters = state.scalars["counters"];
  if (counters.size() != 3) return Status::input("the saved method state has no counters");
  const int locked = static_cast<int>(counters[0]);
  iterations_ = static_cast<std::int64_t>(counters[1]);
  stream_ = static_cast<std::uint64_t>(counters[2]);
  Block* saved_q = nullptr;
  Block* saved_x = nullptr;
  for (auto& [name, block] : state.blocks) {
    if (name == "locked") saved_q = &block;
    if (name == "active") saved_x = &block;
  }
  if ((locked > 0) != (saved_q != nullptr) || (saved_q && saved_q->cols() != locked))
    return Status::input("the saved method state's locked vectors do not match its counters");
  const auto& t = state.scalars["locked_t"];
  if (t.size() != static_cast<std::size_t>(locked) * locked)
    return Status::input("the saved method state's locked matrix has the wrong size");
  locked_ = locked;
  t_ = Small(locked, locked);
  t_.a = t;
  if (saved_q) q_ = std::move(*saved_q);
  LODESTONE_TRY(resize_active(saved_x ? saved_x->cols() : 0));
  if (saved_x) {
    algebra::copy_columns(*saved_x, 0, x_, 0, active_);
    LODESTONE_TRY(agree(comm_, product()));
    LODESTONE_TRY(rayleigh_ritz());
  }
  return restore_extra(state);
}

}  // namespace lodestone::methods
