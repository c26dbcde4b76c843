// `power`: normalized power iteration x <- (A - sigma I) x / ||.|| on one vector,
// with restarted deflation. The Rayleigh quotient is the estimate and the
// residual ||A x - theta x|| the test. A converged vector is locked; the
// iteration continues on the deflated operator (I - Q Q^T)(A - sigma I): for
// symmetric input Q holds eigenvectors, otherwise Schur vectors whose
// eigenvectors are recovered at the end from the small triangular factor. The
// restart vector keeps the last iterate's part orthogonal to the locked set and
// adds a fresh hashed random part. A single vector cannot converge when the
// dominant remaining eigenvalue is complex or shares its modulus with another;
// that is detected from a residual that stops shrinking, and reported.
#include <fmt/format.h>

#include <cmath>

#include "methods/subspace.hpp"
#include "support/collective.hpp"

namespace lodestone::methods {
namespace {

constexpr int kWindow = 60;  // iterations per stagnation window

class PowerMethod final : public SubspaceMethod {
 public:
  const char* name() const override { return "power"; }

  Status setup(algebra::Operator& op, const Problem& problem) override {
    LODESTONE_TRY(init(op, problem));
    LODESTONE_TRY(start_block(1));
    return lock_if_converged();
  }

  Status step() override {
    if (wanted_left() == 0) return Status::ok();
    if (active_ == 0) {
      LODESTONE_TRY(restart());
    } else {
      algebra::combine(x_, -sigma_, w_, 1.0);
      LODESTONE_TRY(orthonormalize_active());
    }
    LODESTONE_TRY(agree(comm_, product()));
    LODESTONE_TRY(rayleigh_ritz());
    ++iterations_;
    LODESTONE_TRY(watch_stagnation());
    return lock_if_converged();
  }

 private:
  Status lock_if_converged() {
    if (active_ == 0 || ritz_res_[0] > threshold()) return Status::ok();
    // Keep the next iterate (A - sigma I) x: its part orthogonal to the new locked
    // set carries the next eigenvector's component.
    auto y = algebra::Block::like(op_->mat(), 1);
    if (!y) return y.status();
    algebra::copy_columns(w_, 0, *y, 0, 1);
    algebra::combine(*y, 1.0, x_, -sigma_);
    next_ = std::move(*y);
    have_next_ = true;
    window_best_ = prev_best_ = INFINITY;
    since_lock_ = 0;
    return lock(1);
  }

  Status restart() {
    LODESTONE_TRY(resize_active(1));
    algebra::fill_random(x_, problem_.seed, stream_, 0, 1);
    stream_ += 1;
    if (locked_ > 0) algebra::project_out(q_, locked_, x_);
    double rn = algebra::column_norms(x_)[0];
    if (have_next_) {
      if (locked_ > 0) algebra::project_out(q_, locked_, next_);
      const double yn = algebra::column_norms(next_)[0];
      // Keep the carried-over part if it is more than rounding noise; add half a unit of fresh randomness.
      if (yn > 1e-12 * problem_.norm_estimate && rn > 0) {
        algebra::combine(x_, 0.5 / rn, next_, 1.0 / yn);
      }
    }
    have_next_ = false;
    return orthonormalize_active();
  }

  Status watch_stagnation() {
    ++since_lock_;
    window_best_ = std::min(window_best_, ritz_res_[0]);
    if (since_lock_ % kWindow != 0) return Status::ok();
    const double best = window_best_;
    const double before = prev_best_;
    prev_best_ = best;
    window_best_ = INFINITY;
    const double relative = best / problem_.norm_estimate;
    if (!(std::isfinite(before) && best > 0.97 * before && relative > 1e-3)) return Status::ok();
    // A slow hand-over between two close eigenvalues also plateaus, but then the
    // iterate still behaves like one eigenvector: ||(A - sigma) x|| ~ |theta - sigma|.
    // Two eigenvalues of equal modulus (or a complex pair) make the growth exceed it.
    const double wn = algebra::column_norms(w_)[0];
    const double theta = ritz_re_[0];
    const double growth = std::sqrt(std::max(0.0, wn * wn - 2.0 * sigma_ * theta + sigma_ * sigma_));
    const double ratio = growth / std::max(std::fabs(theta - sigma_), 1e-300);
    if (ratio > 1.01) {
      return Status::input(fmt::format(
          "the power method stalled on pair {}: after {} iterations its residual is still {:.3e} "
          "({:.1e} of ||A||_est) and no longer shrinking, while ||(A - shift) x|| is {:.3g} times the "
          "Rayleigh quotient. The dominant remaining eigenvalue is complex, or shares its modulus with "
          "another (+-lambda); one vector cannot separate them. Use --method block.",
          locked_ + 1, since_lock_, best, relative, ratio));
    }
    return Status::ok();
  }

  void save_extra(MethodState& s) const override {
    s.scalars["power_window"] = {prev_best_, window_best_, static_cast<double>(since_lock_)};
  }
  Status restore_extra(MethodState& s) override {
    auto w = s.scalars["power_window"];
    if (w.size() == 3) prev_best_ = w[0], window_best_ = w[1], since_lock_ = static_cast<std::int64_t>(w[2]);
    return Status::ok();
  }

  algebra::Block next_;
  bool have_next_ = false;
  double prev_best_ = INFINITY, window_best_ = INFINITY;
  std::int64_t since_lock_ = 0;
};

}  // namespace

std::unique_ptr<Method> make_power() { return std::make_unique<PowerMethod>(); }

}  // namespace lodestone::methods
