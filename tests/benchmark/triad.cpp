// STREAM-style triad a[i] = b[i] + s * c[i]: the machine's sustainable memory
// bandwidth, the limit the benchmark suite (scripts/bench) compares Lodestone's
// matrix-product phase with. OpenMP threads give "all cores" (OMP_NUM_THREADS).
//
//   bench_triad [--mib M] [--repeat R]
// prints one JSON object: threads, array bytes, best and median GB/s over R passes.
// Bytes per pass as in triad_kernel.hpp (the STREAM convention).
#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <vector>

#include "triad_kernel.hpp"

#ifdef _OPENMP
#include <omp.h>
#else
static int omp_get_max_threads() { return 1; }  // built without OpenMP: one core only
#endif

int main(int argc, char** argv) {
  double mib = 256;  // per array; far above any cache here
  int repeat = 10;
  for (int i = 1; i + 1 < argc; i += 2) {
    if (!std::strcmp(argv[i], "--mib")) mib = std::atof(argv[i + 1]);
    else if (!std::strcmp(argv[i], "--repeat")) repeat = std::atoi(argv[i + 1]);
  }
  lodestone::bench::TriadArrays arrays(static_cast<long>(mib * 1024 * 1024 / 8));
  std::vector<double> rates;
  for (int r = 0; r < repeat; ++r) {
    const auto t0 = std::chrono::steady_clock::now();
    arrays.pass(3.0);
    const double t = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    rates.push_back(arrays.bytes_per_pass() / t / 1e9);
  }
  const double check = arrays.check();
  std::sort(rates.begin(), rates.end());
  std::printf("{\"threads\": %d, \"array_bytes\": %ld, \"best_gbs\": %.4f, \"median_gbs\": %.4f, \"check\": %.1f}\n",
              omp_get_max_threads(), arrays.elements() * 8, rates.back(), rates[rates.size() / 2], check);
  return check > 0 ? 0 : 1;
}
