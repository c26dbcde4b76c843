// `block`: block power (subspace) iteration with Rayleigh-Ritz and locking.
// Each iteration multiplies the whole active block by the matrix once (one pass),
// orthonormalizes, and solves the small projected problem: symmetric input by a
// symmetric eigen-decomposition, any other by the real Schur form, so complex
// pairs and eigenvalues of equal modulus (+-lambda) come out as 2x2 blocks or
// side by side rather than stalling the iteration.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>

#include "methods/subspace.hpp"
#include "support/collective.hpp"

namespace lodestone::methods {
namespace {

constexpr int kMaxInnerSteps = 16;

class BlockMethod final : public SubspaceMethod {
 public:
  const char* name() const override { return "block"; }

  Status setup(algebra::Operator& op, const Problem& problem) override {
    LODESTONE_TRY(init(op, problem));
    LODESTONE_TRY(shift_to_spectrum_end());
    const int p = problem.pairs;
    LODESTONE_TRY(start_block(problem.block_size > 0 ? problem.block_size : p + std::max(2, (p + 1) / 2)));
    return lock_converged();
  }

  Status step() override {
    if (wanted_left() == 0) return Status::ok();
    if (active_ == 0) {
      LODESTONE_TRY(restart_block());
    } else {
      // X <- (A - sigma I)^s X. Between Rayleigh-Ritz steps the columns are only
      // scaled by the dominant Ritz value, so each extra step costs one pass over the
      // matrix and nothing else; s is chosen so the block cannot become worse
      // conditioned than about 1e4 (the ratio of its extreme Ritz values to the s).
      const int s = inner_steps();
      const double scale = 1.0 / std::max(std::fabs(ritz_re_[0] - sigma_), 1e-300);
      for (int k = 1; k < s; ++k) {
        algebra::combine(x_, -sigma_ * scale, w_, scale);
        if (locked_ > 0) algebra::project_out(q_, locked_, x_);
        LODESTONE_TRY(agree(comm_, product()));
      }
      algebra::combine(x_, -sigma_, w_, 1.0);
      LODESTONE_TRY(orthonormalize_active());
      LODESTONE_TRY(agree(comm_, product()));
      LODESTONE_TRY(rayleigh_ritz());
    }
    ++iterations_;
    return lock_converged();
  }

 private:
  int inner_steps() const {
    if (!problem_.symmetric) return 1;  // complex Ritz values: keep one step per Rayleigh-Ritz
    const double top = std::fabs(ritz_re_[0] - sigma_), bottom = std::fabs(ritz_re_[active_ - 1] - sigma_);
    if (!(bottom > 0) || !(top > bottom)) return kMaxInnerSteps;
    const double steps = std::log(1e4) / std::log(top / bottom);
    return static_cast<int>(std::clamp(steps, 1.0, static_cast<double>(kMaxInnerSteps)));
  }

  Status lock_converged() {
    int m = std::min(convergeable_prefix(), wanted_left());
    if (m > 0 && m < active_ && ritz_im_[m - 1] > 0) ++m;  // keep a complex pair whole
    return lock(m);
  }
  Status save_extra(MethodState& s) const override {
    s.scalars["block_guard"] = {static_cast<double>(guard_)};
    return Status::ok();
  }
  Status restore_extra(MethodState& s) override {
    auto g = s.scalars["block_guard"];
    guard_ = g.empty() ? 2 : static_cast<int>(g[0]);
    return Status::ok();
  }
};

}  // namespace

std::unique_ptr<Method> make_block() { return std::make_unique<BlockMethod>(); }

}  // namespace lodestone::methods
