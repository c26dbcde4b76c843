// A short Lanczos run that brackets the spectrum of a symmetric matrix: the
// Chebyshev filter needs the ends of the unwanted interval before the first
// Rayleigh-Ritz step has seen anything.
#pragma once

#include <cstdint>

#include "algebra/operator.hpp"
#include "lodestone/status.hpp"

namespace lodestone::methods {

struct SpectrumBounds {
  double lower = 0;  // estimate at or below the smallest eigenvalue
  double upper = 0;  // estimate at or above the largest eigenvalue
  double ritz_lower = 0, ritz_upper = 0;  // the extreme Ritz values themselves (inside the spectrum)
};

// Collective. `steps` Lanczos steps from a hashed random start (no
// re-orthogonalization: only the extreme Ritz values are used). The bounds are
// the extreme Ritz values widened by the last off-diagonal |beta| (common
// practice for Chebyshev filters), clipped to [-norm_estimate, norm_estimate].
Result<SpectrumBounds> lanczos_bounds(algebra::Operator& op, int steps, std::uint64_t seed, std::uint64_t stream,
                                      double norm_estimate);

}  // namespace lodestone::methods
