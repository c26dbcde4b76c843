// SubspaceMethod: the machinery the power, block and Chebyshev methods share —
// a locked set (converged vectors, kept orthonormal, with their projected
// matrix: diagonal for symmetric input, a partial real Schur form otherwise),
// an active block X orthogonal to it with W = A X, Rayleigh-Ritz on (X, W),
// locking of a converged leading prefix, extraction of the final pairs with
// certified residuals, and save/restore of all of it.
#pragma once

#include <cmath>
#include <vector>

#include "algebra/block.hpp"
#include "algebra/small.hpp"
#include "algebra/small_eigen.hpp"
#include "methods/method.hpp"

namespace lodestone::methods {

class SubspaceMethod : public Method {
 public:
  int converged() const override { return locked_; }
  std::int64_t iterations() const override { return iterations_; }
  void progress(std::vector<double>& estimates, std::vector<double>& residuals) const override;
  Result<Pairs> extract() override;
  Status save(MethodState& state) override;
  Status restore(algebra::Operator& op, const Problem& problem, MethodState& state) override;

 protected:
  // How wanted an eigenvalue is for this problem (larger = more wanted).
  double priority(double re, double im) const;
  // Shift used by the power step: iterate with A - sigma I.
  double power_shift() const { return sigma_; }

  Status init(algebra::Operator& op, const Problem& problem);
  // Symmetric input, --select largest or smallest, no --shift: moves sigma from
  // -+||A||_est to the far end of the spectrum as a short Lanczos run brackets it,
  // which shrinks every convergence ratio |lambda_unwanted - sigma| / |lambda_wanted - sigma|.
  Status shift_to_spectrum_end();
  // Starts the active block: `width` columns (at most n; the columns beyond K are
  // the guard), random and orthonormal, with one product and Rayleigh-Ritz.
  Status start_block(int width);
  // After locking emptied the active block while pairs are still wanted: a fresh
  // random block of the remaining pairs plus the guard, one product, Rayleigh-Ritz.
  Status restart_block();
  // (Re)creates X and W with `cols` columns (contents lost).
  Status resize_active(int cols);
  // Random start columns [c0, cols) orthogonal to the locked set, then X orthonormalized.
  Status randomize(int c0);
  Status orthonormalize_active();
  // W = A X.
  Status product();
  // Rayleigh-Ritz on (X, W): rotates X and W, sets Ritz values and residuals.
  Status rayleigh_ritz();
  // Length of the leading run of active Ritz pairs that meet the tolerance (complex pairs whole).
  int convergeable_prefix() const;
  // Moves the first m active Ritz pairs into the locked set; X, W shrink by m.
  Status lock(int m);
  int wanted_left() const { return std::max(0, problem_.pairs - locked_); }
  double threshold() const { return problem_.tolerance * problem_.norm_estimate; }

  virtual Status save_extra(MethodState&) const { return Status::ok(); }
  virtual Status restore_extra(MethodState&) { return Status::ok(); }

  algebra::Operator* op_ = nullptr;
  Problem problem_;
  double sigma_ = 0.0;
  MPI_Comm comm_ = MPI_COMM_NULL;

  // Locked set.
  algebra::Block q_;   // n x locked_
  int locked_ = 0;
  algebra::Small t_;   // locked_ x locked_: diagonal (symmetric) or quasi-triangular

  // Active block.
  algebra::Block x_, w_;
  int active_ = 0;
  std::vector<double> ritz_re_, ritz_im_, ritz_res_;
  algebra::Small t_act_;   // projected active matrix in Ritz/Schur basis
  algebra::Small c_act_;   // Q^T A X (non-symmetric coupling), locked_ x active_

  int guard_ = 0;   // active columns beyond the pairs still wanted

  std::int64_t iterations_ = 0;
  std::uint64_t stream_ = 1;  // next random stream (start vectors are hashed from seed, row, stream)
};

}  // namespace lodestone::methods
