// The dense contender of the benchmark suite: all eigenvalues of a symmetric
// matrix read from a Lodestone dense HDF5 file, with LAPACK's dsyevr through
// LAPACKE (Debian liblapacke-dev), the K largest eigenvectors included.
//
//   bench_dense_reference MATRIX.h5 K
// prints one JSON object: n, seconds (dsyevr alone), the K largest eigenvalues
// and their residuals ||A v - lambda v||_2.
#include <hdf5.h>
#include <lapacke.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <vector>

int main(int argc, char** argv) {
  if (argc != 3) { std::fprintf(stderr, "usage: bench_dense_reference MATRIX.h5 K\n"); return 2; }
  const int k = std::atoi(argv[2]);
  hid_t f = H5Fopen(argv[1], H5F_ACC_RDONLY, H5P_DEFAULT);
  if (f < 0) { std::fprintf(stderr, "%s: cannot open\n", argv[1]); return 1; }
  hid_t d = H5Dopen2(f, "/matrix/values", H5P_DEFAULT);
  if (d < 0) { std::fprintf(stderr, "%s: no /matrix/values (not a dense matrix)\n", argv[1]); return 1; }
  hid_t space = H5Dget_space(d);
  hsize_t dims[2] = {0, 0};
  H5Sget_simple_extent_dims(space, dims, nullptr);
  const lapack_int n = static_cast<lapack_int>(dims[0]);
  std::vector<double> a(static_cast<size_t>(n) * n);
  H5Dread(d, H5T_NATIVE_DOUBLE, H5S_ALL, H5S_ALL, H5P_DEFAULT, a.data());
  H5Sclose(space); H5Dclose(d); H5Fclose(f);
  const std::vector<double> original = a;
  // The K largest: indices n-K+1..n of the ascending order (1-based, RANGE='I').
  std::vector<double> w(n), z(static_cast<size_t>(n) * k);
  std::vector<lapack_int> support(2 * static_cast<size_t>(k));
  lapack_int found = 0;
  const auto t0 = std::chrono::steady_clock::now();
  const lapack_int info = LAPACKE_dsyevr(LAPACK_ROW_MAJOR, 'V', 'I', 'U', n, a.data(), n, 0.0, 0.0, n - k + 1, n, 0.0,
                                         &found, w.data(), z.data(), k, support.data());
  const double seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  if (info != 0 || found != k) { std::fprintf(stderr, "dsyevr failed (info %d, found %d)\n", int(info), int(found)); return 1; }
  std::printf("{\"n\": %d, \"seconds\": %.6f, \"eigenvalues\": [", int(n), seconds);
  for (int j = k - 1; j >= 0; --j) std::printf("%.17g%s", w[j], j ? ", " : "");
  std::printf("], \"residuals\": [");
  for (int j = k - 1; j >= 0; --j) {
    double s = 0;
    for (lapack_int i = 0; i < n; ++i) {
      double r = -w[j] * z[static_cast<size_t>(i) * k + j];
      for (lapack_int c = 0; c < n; ++c) r += original[static_cast<size_t>(i) * n + c] * z[static_cast<size_t>(c) * k + j];
      s += r * r;
    }
    std::printf("%.6g%s", std::sqrt(s), j ? ", " : "");
  }
  std::printf("]}\n");
  return 0;
}
