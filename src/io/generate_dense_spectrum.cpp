// The dense-spectrum generator: A = H diag(lambda) H with a Householder reflector H.
//
// With c = 2 / (v^T v) and t = v^T diag(lambda) v, entry (i, j) is
//   lambda_i [i == j] - c v_i v_j (lambda_i + lambda_j) + c^2 v_i v_j t,
// computable from global indices alone. The scalars v^T v and t are summed by
// every rank in the same sequential order over all n indices (O(n) time, O(1)
// memory, small next to the rank's n x local_rows entries) rather than by an
// MPI reduction, whose summation order depends on the rank count and would
// change the last bits, and with them the fingerprint.
#include <cmath>

#include "io/generators.hpp"
#include "io/partition.hpp"
#include "support/collective.hpp"

namespace lodestone::io {

namespace {
constexpr std::uint64_t kDenseSalt = 0x64656e7365000000ULL;
double v_at(std::uint64_t seed, std::int64_t i) {
  return hashed_uniform(seed, static_cast<std::uint64_t>(i), kDenseSalt) - 0.5;
}
}  // namespace

double spectrum_value(Spectrum spectrum, std::int64_t n, double ratio, std::int64_t k) {
  if (spectrum == Spectrum::linear) return static_cast<double>(n - k);
  return std::pow(ratio, static_cast<double>(k));
}

DenseRows generate_dense_spectrum(MPI_Comm comm, std::int64_t n, Spectrum spectrum, double ratio,
                                  std::uint64_t seed) {
  const RowRange mine = even_split(n, comm_rank(comm), comm_size(comm));
  double vv = 0, vdv = 0;
  for (std::int64_t k = 0; k < n; ++k) {
    const double v = v_at(seed, k);
    vv += v * v;
    vdv += spectrum_value(spectrum, n, ratio, k) * v * v;
  }
  if (vv == 0) vv = 1;  // cannot happen for n >= 1 in practice; keeps c finite
  const double c = 2.0 / vv;
  DenseRows out;
  out.row_begin = mine.begin;
  out.local_rows = mine.size();
  out.values.resize(static_cast<std::size_t>(mine.size() * n));
  for (std::int64_t i = mine.begin; i < mine.end; ++i) {
    const double vi = v_at(seed, i), li = spectrum_value(spectrum, n, ratio, i);
    double* row = out.values.data() + (i - mine.begin) * n;
    for (std::int64_t j = 0; j < n; ++j) {
      const double vj = v_at(seed, j), lj = spectrum_value(spectrum, n, ratio, j);
      row[j] = (i == j ? li : 0.0) - c * vi * vj * (li + lj) + c * c * vi * vj * vdv;
    }
  }
  return out;
}

}  // namespace lodestone::io
