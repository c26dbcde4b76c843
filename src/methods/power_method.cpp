// `power`: normalized power iteration x <- (A - sigma I) x / ||.|| on one vector,
// with restarted deflation. The Rayleigh quotient is the estimate and the
// residual ||A x - theta x|| the test. A converged vector is locked; the
// iteration continues on the deflated operator (I - Q Q^T)(A - sigma I): for
// symmetric input Q holds eigenvectors, otherwise Schur vectors whose
// eigenvectors are recovered at the end from the small triangular factor. The
// restart vector keeps the last iterate's part orthogonal to the locked set and
// adds a fresh hashed random part. A single vector cannot converge when the
// dominant remaining eigenvalue is complex or shares its modulus with another;
// that is detected from a residual that stops shrinking, and the run then stops
// with the pairs converged so far and a reason (stall_reason()).
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <string>

#include "algebra/small_eigen.hpp"
#include "methods/subspace.hpp"
#include "support/collective.hpp"

namespace lodestone::methods {
namespace {

constexpr int kWindow = 60;         // iterations per stagnation window
constexpr int kFloorWindows = 5;    // flat windows at the rounding level before giving up
// Two real eigenvalues this close in |lambda - shift| count as tied: one vector
// gains a factor e on them in no fewer than 20 000 iterations, eight digits in
// 370 000. Below it the hand-over is slow but runs to the end (budget permitting).
constexpr double kTieRatio = 0.99995;
// Windows in which the residual has not halved before giving up (30 000
// iterations), for whatever the two-eigenvalue view misjudges (more than two
// dominant eigenvalues): a slow hand-over at a ratio just below kTieRatio still
// halves it every 14 000 iterations.
constexpr int kStuckWindows = 500;

class PowerMethod final : public SubspaceMethod {
 public:
  const char* name() const override { return "power"; }

  Status setup(algebra::Operator& op, const Problem& problem) override {
    LODESTONE_TRY(init(op, problem));
    LODESTONE_TRY(shift_to_spectrum_end());
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
    flat_windows_ = stuck_windows_ = 0;
    stuck_best_ = INFINITY;
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

  // At the end of each window whose best residual did not shrink by 3 %: a
  // Rayleigh-Ritz step on span{x, (I - QQ^T) A x} (two extra products) names the
  // two eigenvalues competing for the vector. A complex pair, or two of (nearly)
  // equal |lambda - shift|, cannot be separated by one vector: that stops the run
  // with what has converged. Two distinct ones are a slow hand-over; it goes on.
  Status watch_stagnation() {
    ++since_lock_;
    window_best_ = std::min(window_best_, ritz_res_[0]);
    if (since_lock_ % kWindow != 0) return Status::ok();
    const double best = window_best_;
    const double before = prev_best_;
    prev_best_ = best;
    window_best_ = INFINITY;
    if (!(best < 0.5 * stuck_best_)) {
      ++stuck_windows_;
    } else {
      stuck_best_ = best;
      stuck_windows_ = 0;
    }
    if (!(std::isfinite(before) && best > 0.97 * before)) {
      flat_windows_ = 0;
      return Status::ok();
    }
    ++flat_windows_;
    auto two = leading_two();
    if (!two) return two.status();
    const double k = problem_.value_scale;
    const double relative = best / problem_.norm_estimate;
    const std::string head = fmt::format("the power method stopped on pair {} after {} iterations on it", locked_ + 1,
                                         since_lock_);
    if (two->at_floor) {
      if (flat_windows_ >= kFloorWindows)
        stall_ = fmt::format("{}: its residual, {:.3e} ({:.1e} of ||A||_est), no longer shrinks at the rounding "
                             "level; --tol {:.1e} is below what double precision reaches for this matrix",
                             head, best * k, relative, problem_.tolerance);
      return Status::ok();
    }
    if (two->im > 0) {
      stall_ = fmt::format("{}: the dominant remaining eigenvalues are the complex pair {:.6g} +- {:.6g}i, which "
                           "one real vector cannot converge to: use --method block or krylov",
                           head, two->re[0] * k, two->im * k);
      return Status::ok();
    }
    const double d0 = std::fabs(two->re[0] - sigma_), d1 = std::fabs(two->re[1] - sigma_);
    const double ratio = std::min(d0, d1) / std::max({d0, d1, 1e-300});
    if (ratio >= kTieRatio) {
      std::string apart = sigma_ == 0.0 ? std::string("have (nearly) the same modulus")
                                        : fmt::format("are (nearly) equally far from {:.6g}", sigma_ * k);
      if (sigma_ != 0.0 && !problem_.has_shift)
        apart += fmt::format(", the shift power uses for --select {}", selection_name(problem_.selection));
      stall_ = fmt::format("{}: the dominant remaining eigenvalues {:.6g} and {:.6g} {} (ratio {:.6f}), which one "
                           "vector separates too slowly or never: use --method block or krylov",
                           head, two->re[0] * k, two->re[1] * k, apart, ratio);
      return Status::ok();
    }
    if (stuck_windows_ >= kStuckWindows)
      stall_ = fmt::format("{}: its residual, {:.3e} ({:.1e} of ||A||_est), has not halved over {} iterations: "
                           "use --method block or krylov",
                           head, best * k, relative, stuck_windows_ * kWindow);
    return Status::ok();
  }

  // The two eigenvalues of the Rayleigh-Ritz step described above (re[0] >= re[1]
  // when real; re[0] +- im i when complex), or at_floor when x is an eigenvector
  // to rounding, with no second direction to look in.
  struct LeadingTwo {
    bool at_floor = false;
    double re[2] = {0, 0};
    double im = 0;
  };
  Result<LeadingTwo> leading_two() {
    LeadingTwo out;
    auto y = algebra::Block::like(op_->mat(), 1);
    if (!y) return y.status();
    algebra::copy_columns(w_, 0, *y, 0, 1);
    if (locked_ > 0) algebra::project_out(q_, locked_, *y);
    for (int pass = 0; pass < 2; ++pass) algebra::combine(*y, 1.0, x_, -algebra::gram(x_, *y)(0, 0));
    const double rho = algebra::column_norms(*y)[0];
    if (!(rho > 1e-11 * problem_.norm_estimate)) {
      out.at_floor = true;
      return out;
    }
    auto v = algebra::Block::like(op_->mat(), 2);
    if (!v) return v.status();
    auto av = algebra::Block::like(op_->mat(), 2);
    if (!av) return av.status();
    algebra::copy_columns(x_, 0, *v, 0, 1);
    algebra::copy_columns(*y, 0, *v, 1, 1);
    algebra::combine(*v, 1.0 / rho, *v, 0.0, 1, 1, 1);
    LODESTONE_TRY(agree(comm_, op_->apply(*v, *av)));
    algebra::Small h = algebra::gram(*v, *av);
    if (problem_.symmetric) h(0, 1) = h(1, 0) = 0.5 * (h(0, 1) + h(1, 0));
    auto schur = algebra::real_schur(comm_, h, [](double re, double im) { return std::hypot(re, im); });
    if (!schur) return schur.status();
    out.re[0] = std::max(schur->re[0], schur->re[1]);
    out.re[1] = std::min(schur->re[0], schur->re[1]);
    out.im = std::fabs(schur->im[0]);
    return out;
  }

  std::string stall_reason() const override { return stall_; }

  Status save_extra(MethodState& s) const override {
    s.scalars["power_window"] = {prev_best_, window_best_, static_cast<double>(since_lock_),
                                 static_cast<double>(flat_windows_), stuck_best_,
                                 static_cast<double>(stuck_windows_)};
    // The iterate carried over from the pair just locked into the next restart.
    if (have_next_) {
      auto y = algebra::Block::like(op_->mat(), 1);
      if (!y) return y.status();
      algebra::copy_columns(next_, 0, *y, 0, 1);
      s.blocks.emplace_back("power_next", std::move(*y));
    }
    return Status::ok();
  }
  Status restore_extra(MethodState& s) override {
    for (auto& [name, block] : s.blocks)
      if (name == "power_next" && block.cols() == 1) {
        next_ = std::move(block);
        have_next_ = true;
      }
    auto w = s.scalars["power_window"];
    if (w.size() >= 3) prev_best_ = w[0], window_best_ = w[1], since_lock_ = static_cast<std::int64_t>(w[2]);
    if (w.size() >= 6) {
      flat_windows_ = static_cast<int>(w[3]);
      stuck_best_ = w[4];
      stuck_windows_ = static_cast<int>(w[5]);
    }
    return Status::ok();
  }

  algebra::Block next_;
  bool have_next_ = false;
  double prev_best_ = INFINITY, window_best_ = INFINITY;
  std::int64_t since_lock_ = 0;
  int flat_windows_ = 0;  // consecutive windows without a 3 % gain
  double stuck_best_ = INFINITY;  // the best residual when it last halved
  int stuck_windows_ = 0;         // windows since
  std::string stall_;
};

}  // namespace

std::unique_ptr<Method> make_power() { return std::make_unique<PowerMethod>(); }

}  // namespace lodestone::methods
