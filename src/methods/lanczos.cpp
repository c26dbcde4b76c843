// Spectrum bounds from a short Lanczos run (see lanczos.hpp).
#include "methods/lanczos.hpp"

#include <algorithm>
#include <cmath>

#include "algebra/small_eigen.hpp"
#include "support/collective.hpp"

namespace lodestone::methods {

Result<SpectrumBounds> lanczos_bounds(algebra::Operator& op, int steps, std::uint64_t seed, std::uint64_t stream,
                                      double norm_estimate) {
  using algebra::Block;
  MPI_Comm comm = PetscObjectComm(reinterpret_cast<PetscObject>(op.mat()));
  auto v = Block::like(op.mat(), 1), prev = Block::like(op.mat(), 1), w = Block::like(op.mat(), 1);
  if (!v || !prev || !w) return Status::input("could not allocate the Lanczos vectors");
  PetscInt n = 0;
  MatGetSize(op.mat(), &n, nullptr);
  steps = static_cast<int>(std::min<PetscInt>(steps, n));
  algebra::fill_random(*v, seed, stream, 0, 1);
  {
    const double nv = algebra::column_norms(*v)[0];
    algebra::combine(*v, 1.0 / nv, *v, 0.0);
  }
  std::vector<double> alpha, beta;
  double b_prev = 0;
  for (int k = 0; k < steps; ++k) {
    LODESTONE_TRY(agree(comm, op.apply(*v, *w)));
    algebra::combine(*w, 1.0, *prev, -b_prev);
    const double a = algebra::gram(*v, *w)(0, 0);
    algebra::combine(*w, 1.0, *v, -a);
    const double b = algebra::column_norms(*w)[0];
    alpha.push_back(a);
    beta.push_back(b);
    if (!(b > 1e-12 * std::max(norm_estimate, 1e-300))) break;  // invariant subspace found
    std::swap(*prev, *v);
    algebra::copy_columns(*w, 0, *v, 0, 1);
    algebra::combine(*v, 1.0 / b, *v, 0.0);
    b_prev = b;
  }
  const int m = static_cast<int>(alpha.size());
  algebra::Small t(m, m);
  for (int i = 0; i < m; ++i) {
    t(i, i) = alpha[i];
    if (i + 1 < m) t(i, i + 1) = t(i + 1, i) = beta[i];
  }
  auto eig = algebra::symmetric_eigen(comm, t);
  if (!eig) return eig.status();
  const double widen = std::fabs(beta.back());
  SpectrumBounds out;
  out.lower = std::max(-norm_estimate, eig->values.front() - widen);
  out.upper = std::min(norm_estimate, eig->values.back() + widen);
  out.ritz_lower = eig->values.front();
  out.ritz_upper = eig->values.back();
  return out;
}

}  // namespace lodestone::methods
