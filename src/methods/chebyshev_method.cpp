// `chebyshev` (symmetric input): Chebyshev-filtered block iteration. Instead of
// multiplying the block by A once per Rayleigh-Ritz step, it applies a
// Chebyshev polynomial p_m(A) of degree m that stays within [-1, 1] on the
// unwanted interval [a, b] of the spectrum and grows as fast as any polynomial
// can outside it, so each pass over the matrix buys far more separation than a
// plain power step. The interval's outer end comes from a short Lanczos run; its
// inner end (the cut) is the least wanted Ritz value of the block, refined at
// every Rayleigh-Ritz step. The degree is chosen from the observed residual and
// the Ritz values so a cycle aims at the tolerance without overshooting, and is
// held down where an eigenvalue far out from the rest would swamp the block.
//
// Three-term recurrence, scaled by T_k at the point gamma (the far end of the
// wanted side) so nothing overflows: with t(A) = (A - e I) / h, x0 = t(gamma),
// r_0 = 1 / x0 and r_k = 1 / (2 x0 - r_{k-1}),
//   Y_1 = t(A) X r_0,   Y_{k+1} = 2 r_k t(A) Y_k - r_k r_{k-1} Y_{k-1}.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <cstddef>

#include "methods/lanczos.hpp"
#include "methods/subspace.hpp"
#include "support/collective.hpp"

namespace lodestone::methods {
namespace {

constexpr int kLanczosSteps = 24;
constexpr int kMinDegree = 4;
constexpr int kMaxDegree = 400;
constexpr int kStartDegree = 10;
// How much more the filter may grow the far end of the spectrum than the least wanted
// pair still needed (choose_degree): a rounding-level share (1e-16) of a locked vector
// then stays below a hundredth of the column. Measured: 1e8 cost (a)'s 400 x 290
// Laplacian 13 % more products than no cap, 1e14 2 %; both solve the far-out case.
constexpr double kMaxGrowth = 1e14;

class ChebyshevMethod final : public SubspaceMethod {
 public:
  const char* name() const override { return "chebyshev"; }

  Status setup(algebra::Operator& op, const Problem& problem) override {
    if (!problem.symmetric)
      return Status::usage("--method chebyshev needs a symmetric matrix; use --method block for this one");
    LODESTONE_TRY(init(op, problem));
    auto bounds = lanczos_bounds(op, kLanczosSteps, problem.seed, 1u << 30, problem.norm_estimate);
    if (!bounds) return bounds.status();
    bounds_ = *bounds;
    const int p = problem.pairs;
    LODESTONE_TRY(start_block(problem.block_size > 0 ? problem.block_size : p + std::max(4, p / 2)));
    degree_ = kStartDegree;
    return lock_converged();
  }

  Status step() override {
    if (wanted_left() == 0) return Status::ok();
    if (active_ == 0) LODESTONE_TRY(restart_block());
    LODESTONE_TRY(filter());
    LODESTONE_TRY(orthonormalize_active());
    LODESTONE_TRY(agree(comm_, product()));
    LODESTONE_TRY(rayleigh_ritz());
    ++iterations_;
    // Ritz values interlace: they never step outside the spectrum, so they can widen the bounds.
    for (int j = 0; j < active_; ++j) {
      bounds_.lower = std::min(bounds_.lower, ritz_re_[j]);
      bounds_.upper = std::max(bounds_.upper, ritz_re_[j]);
    }
    return lock_converged();
  }

 private:
  Status lock_converged() { return lock(std::min(convergeable_prefix(), wanted_left())); }

  // The unwanted interval [a, b] and the normalization point gamma for the current cut.
  bool interval(double& a, double& b, double& gamma) const {
    const double cut = ritz_re_[active_ - 1];
    switch (problem_.selection) {
      case Selection::largest:
        a = bounds_.lower, b = cut, gamma = bounds_.upper;
        break;
      case Selection::smallest:
        a = cut, b = bounds_.upper, gamma = bounds_.lower;
        break;
      default: {
        const double c = std::fabs(cut);
        a = std::max(-c, bounds_.lower);
        b = std::min(c, bounds_.upper);
        gamma = std::fabs(bounds_.upper) >= std::fabs(bounds_.lower) ? bounds_.upper : bounds_.lower;
      }
    }
    return b - a > 1e-14 * problem_.norm_estimate;
  }

  int choose_degree(double e, double h) const {
    // The least wanted pair still needed sets the pace: the filter grows its
    // component by about exp(m * acosh|t(theta)|) relative to the unwanted part.
    const int j = std::min(active_ - 1, std::max(0, wanted_left() - 1));
    const double x = std::fabs((ritz_re_[j] - e) / h);
    const double rate = std::acosh(std::max(x, 1.0 + 1e-10));
    const double need = std::log(std::max(2.0, ritz_res_[j] / (0.5 * threshold())));
    double m = std::ceil(need / rate);
    m = std::min<double>(m, 2.0 * degree_ + 4);
    // The filter grows the far end of the spectrum most. Where an eigenvalue there
    // stands far out (a locked one, or one still in the block), its share of every
    // column - rounding-level once it is locked - must not grow past kMaxGrowth times
    // the pair's own, or projecting it out leaves noise where the pair should be.
    const double far = std::max(std::fabs((bounds_.lower - e) / h), std::fabs((bounds_.upper - e) / h));
    const double excess = std::acosh(std::max(far, 1.0)) - rate;
    const double cap = excess > 0 ? std::max(1.0, std::floor(std::log(kMaxGrowth) / excess)) : kMaxDegree;
    return static_cast<int>(std::clamp<double>(std::min(m, cap), std::min<double>(kMinDegree, cap), kMaxDegree));
  }

  // f1_ holds the second recurrence block; z_ = A Y_k only where the product and
  // the update cannot be one pass (a matrix that is not AIJ).
  Status ensure_buffers() {
    if (f1_.mat() == nullptr || f1_.cols() != active_) {
      auto f = algebra::Block::like(op_->mat(), active_);
      if (!f) return f.status();
      f1_ = std::move(*f);
      if (!op_->fuses()) {
        auto z = algebra::Block::like(op_->mat(), active_);
        if (!z) return z.status();
        z_ = std::move(*z);
      }
    }
    return Status::ok();
  }

  Status filter() {
    double a = 0, b = 0, gamma = 0;
    if (!interval(a, b, gamma)) {
      // No room between the cut and the bound: a plain power step on A - sigma I instead.
      algebra::combine(x_, -sigma_, w_, 1.0);
      return Status::ok();
    }
    const double e = 0.5 * (a + b), h = 0.5 * (b - a);
    const double x0 = (gamma - e) / h;
    degree_ = choose_degree(e, h);
    LODESTONE_TRY(ensure_buffers());
    const double r0 = 1.0 / x0;
    return op_->fuses() ? filter_interlaced(e, h, x0, r0) : filter_by_columns(e, h, x0, r0);
  }

  // The recurrence on the blocks' rows held interlaced, each step one fused pass over
  // the matrix. Y_0 = X goes into f1_'s storage and Y_1 into X's, so the filter needs
  // no storage beyond the two blocks; the result is put back column by column.
  Status filter_interlaced(double e, double h, double x0, double r_prev) {
    const PetscInt rows = x_.local_rows();
    const int k = active_;
    double* y0 = f1_.data();
    double* y1 = x_.data();
    algebra::to_rows(x_, y0);
    // Y_1 = (W - e X) r_0 / h, using W = A X from the last Rayleigh-Ritz step.
    const double s = r_prev / h;
    for (int j = 0; j < k; ++j) {
      const double* w = w_.column(j);
      for (PetscInt i = 0; i < rows; ++i) {
        const std::ptrdiff_t at = static_cast<std::ptrdiff_t>(i) * k + j;
        y1[at] = s * (w[i] - e * y0[at]);
      }
    }
    double* prev = y0;
    double* cur = y1;
    for (int step = 1; step < degree_; ++step) {
      const double r = 1.0 / (2.0 * x0 - r_prev);
      // Y_{k-1} <- alpha (A Y_k - e Y_k) + beta Y_{k-1}, which becomes Y_{k+1}.
      LODESTONE_TRY(agree(comm_, op_->apply_shifted_rows(k, cur, prev, 2.0 * r / h, e, -r * r_prev)));
      std::swap(prev, cur);
      r_prev = r;
    }
    if (cur == y1) {
      algebra::from_rows(cur, f1_);
      std::swap(x_, f1_);
    } else {
      algebra::from_rows(cur, x_);
    }
    f1_.changed();
    return Status::ok();
  }

  // The same with A Y_k in a block of its own and the update as a second pass (a
  // matrix the fused product does not take).
  Status filter_by_columns(double e, double h, double x0, double r_prev) {
    const PetscInt rows = x_.local_rows();
    {
      const double s = r_prev / h;
      for (int j = 0; j < active_; ++j) {
        const double* w = w_.column(j);
        const double* x = x_.column(j);
        double* y = f1_.column(j);
        for (PetscInt i = 0; i < rows; ++i) y[i] = s * (w[i] - e * x[i]);
      }
      f1_.changed();
    }
    algebra::Block* prev = &x_;
    algebra::Block* cur = &f1_;
    for (int k = 1; k < degree_; ++k) {
      const double r = 1.0 / (2.0 * x0 - r_prev);
      const double alpha = 2.0 * r / h, beta = -r * r_prev;
      LODESTONE_TRY(agree(comm_, op_->apply(*cur, z_)));
      for (int j = 0; j < active_; ++j) {
        const double* z = z_.column(j);
        const double* c = cur->column(j);
        double* p = prev->column(j);
        for (PetscInt i = 0; i < rows; ++i) p[i] = alpha * (z[i] - e * c[i]) + beta * p[i];
      }
      prev->changed();
      std::swap(prev, cur);
      r_prev = r;
    }
    if (cur != &x_) std::swap(x_, f1_);
    return Status::ok();
  }

  Status save_extra(MethodState& s) const override {
    s.scalars["chebyshev"] = {bounds_.lower, bounds_.upper, static_cast<double>(degree_), static_cast<double>(guard_)};
    return Status::ok();
  }
  Status restore_extra(MethodState& s) override {
    auto c = s.scalars["chebyshev"];
    if (c.size() != 4) return Status::input("the saved Chebyshev state is incomplete");
    bounds_.lower = c[0], bounds_.upper = c[1], degree_ = static_cast<int>(c[2]), guard_ = static_cast<int>(c[3]);
    return Status::ok();
  }

  SpectrumBounds bounds_;
  int degree_ = kStartDegree;
  algebra::Block f1_, z_;
};

}  // namespace

std::unique_ptr<Method> make_chebyshev() { return std::make_unique<ChebyshevMethod>(); }

}  // namespace lodestone::methods
