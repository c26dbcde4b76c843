// `block`: block power (subspace) iteration with Rayleigh-Ritz and locking.
// Each iteration multiplies the whole active block by the matrix once (one pass),
// orthonormalizes, and solves the small projected problem: symmetric input by a
// symmetric eigen-decomposition, any other by the real Schur form, so complex
// pairs and eigenvalues of equal modulus (+-lambda) come out as 2x2 blocks or
// side by side rather than stalling the iteration.
#include <fmt/format.h>

#include "methods/subspace.hpp"
#include "support/collective.hpp"

namespace lodestone::methods {
namespace {

class BlockMethod final : public SubspaceMethod {
 public:
  const char* name() const override { return "block"; }

  Status setup(algebra::Operator& op, const Problem& problem) override {
    LODESTONE_TRY(init(op, problem));
    PetscInt n = 0;
    MatGetSize(op.mat(), &n, nullptr);
    int b = problem.block_size > 0 ? problem.block_size : problem.pairs + std::max(2, (problem.pairs + 1) / 2);
    b = static_cast<int>(std::min<PetscInt>(b, n));
    guard_ = std::max(0, b - problem.pairs);
    LODESTONE_TRY(resize_active(b));
    LODESTONE_TRY(randomize(0));
    LODESTONE_TRY(agree(comm_, product()));
    LODESTONE_TRY(rayleigh_ritz());
    return lock_converged();
  }

  Status step() override {
    if (wanted_left() == 0) return Status::ok();
    if (active_ == 0) {
      LODESTONE_TRY(resize_active(std::max(1, wanted_left() + guard_)));
      LODESTONE_TRY(randomize(0));
    } else {
      // X <- (A - sigma I) X, kept orthogonal to the locked set, orthonormalized.
      algebra::combine(x_, -sigma_, w_, 1.0);
      LODESTONE_TRY(orthonormalize_active());
    }
    LODESTONE_TRY(agree(comm_, product()));
    LODESTONE_TRY(rayleigh_ritz());
    ++iterations_;
    return lock_converged();
  }

 private:
  Status lock_converged() {
    int m = std::min(convergeable_prefix(), wanted_left());
    if (m > 0 && m < active_ && ritz_im_[m - 1] > 0) ++m;  // keep a complex pair whole
    return lock(m);
  }
  void save_extra(MethodState& s) const override { s.scalars["block_guard"] = {static_cast<double>(guard_)}; }
  Status restore_extra(MethodState& s) override {
    auto g = s.scalars["block_guard"];
    guard_ = g.empty() ? 2 : static_cast<int>(g[0]);
    return Status::ok();
  }

  int guard_ = 2;
};

}  // namespace

std::unique_ptr<Method> make_block() { return std::make_unique<BlockMethod>(); }

}  // namespace lodestone::methods
