// The Chebyshev filter's fused step and the triad, run in turn on one core in short
// slices, so that each reading of the kernel has readings of the triad taken just
// before and just after it. On a machine shared with other work the triad's bandwidth
// swings by a third within seconds; a kernel reading set against the triad of another
// minute then says more about the host than about the kernel. Paired this way the
// kernel's fraction of the triad is measured in the same seconds as the triad itself.
// The suite (scripts/bench) prints it beside the product-phase targets; the targets'
// verdicts do not use it.
//
//   bench_paired [--nx NX] [--ny NY] [--cols B] [--rounds R] [--slice S] [--mib M] [--dir DIR]
// --nx, --ny: the 2-D Laplacian's grid (default 2000 x 1500: case (b) of the suite);
// --cols: the block's width (default 12, the filter's block for K = 8);
// --rounds: kernel slices, each between two triad slices (default 15);
// --slice: seconds per slice (default 1); --mib: MiB per triad array (default 512).
// Prints one JSON object: every slice's GB/s (bytes moved over the slice's whole time)
// and, over the rounds, the median of kernel / mean of its two neighbouring triad
// slices, the median kernel and triad rates and the best slice of each.
#include <mpi.h>

#include <algorithm>
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <string>
#include <vector>

#include "algebra/block.hpp"
#include "algebra/operator.hpp"
#include "laplace_on_disk.hpp"
#include "lodestone/runtime.hpp"
#include "triad_kernel.hpp"

using namespace lodestone;
using Clock = std::chrono::steady_clock;

namespace {

// Runs `pass` until `slice` seconds have gone (at least once); GB/s over the whole slice.
template <class Pass>
double slice_rate(double slice, double bytes_per_pass, Pass pass) {
  const auto t0 = Clock::now();
  long passes = 0;
  double t = 0;
  do {
    pass();
    ++passes;
    t = std::chrono::duration<double>(Clock::now() - t0).count();
  } while (t < slice);
  return bytes_per_pass * static_cast<double>(passes) / t / 1e9;
}

double median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  const std::size_t m = v.size() / 2;
  return v.size() % 2 ? v[m] : 0.5 * (v[m - 1] + v[m]);
}

std::string json_list(const std::vector<double>& v) {
  std::string s = "[";
  for (std::size_t i = 0; i < v.size(); ++i) {
    char buf[32];
    std::snprintf(buf, sizeof buf, "%s%.3f", i ? ", " : "", v[i]);
    s += buf;
  }
  return s + "]";
}

int run(int argc, char** argv) {
  std::int64_t nx = 2000, ny = 1500;
  int cols = 12, rounds = 15;
  double slice = 1.0, mib = 512;
  std::string dir = "/tmp";
  for (int i = 1; i + 1 < argc; i += 2) {
    if (!std::strcmp(argv[i], "--nx")) nx = std::atoll(argv[i + 1]);
    else if (!std::strcmp(argv[i], "--ny")) ny = std::atoll(argv[i + 1]);
    else if (!std::strcmp(argv[i], "--cols")) cols = std::atoi(argv[i + 1]);
    else if (!std::strcmp(argv[i], "--rounds")) rounds = std::atoi(argv[i + 1]);
    else if (!std::strcmp(argv[i], "--slice")) slice = std::atof(argv[i + 1]);
    else if (!std::strcmp(argv[i], "--mib")) mib = std::atof(argv[i + 1]);
    else if (!std::strcmp(argv[i], "--dir")) dir = argv[i + 1];
    else {
      std::fprintf(stderr, "bench_paired: unknown option %s\n", argv[i]);
      return 2;
    }
  }
  if (nx < 1 || ny < 1 || cols < 1 || rounds < 1 || slice <= 0 || mib <= 0) {
    std::fprintf(stderr, "bench_paired: --nx, --ny, --cols, --rounds, --slice and --mib must be positive\n");
    return 2;
  }

  const std::string path = dir + "/paired-laplace2d.h5";
  auto matrix = bench::laplace_on_disk(nx, ny, path);
  std::remove(path.c_str());
  if (!matrix) {
    std::fprintf(stderr, "bench_paired: could not write and load the Laplacian under %s\n", dir.c_str());
    return 1;
  }
  algebra::Operator op(matrix->petsc());
  if (!op.fuses()) {
    std::fprintf(stderr, "bench_paired: the matrix has no fused product\n");
    return 1;
  }
  auto x = algebra::Block::like(matrix->petsc(), cols);
  auto y = algebra::Block::like(matrix->petsc(), cols);
  if (!x || !y) return 1;
  algebra::fill_random(*x, 7, 1);
  algebra::fill_random(*y, 7, 2);
  MatInfo mi;
  MatGetInfo(matrix->petsc(), MAT_GLOBAL_SUM, &mi);
  const double kernel_bytes = bench::shifted_rows_bytes(static_cast<double>(matrix->info().rows), mi.nz_used, cols);

  bench::TriadArrays arrays(static_cast<long>(mib * 1024 * 1024 / 8));
  const double triad_bytes = arrays.bytes_per_pass();
  bool failed = false;
  auto triad = [&] { arrays.pass(3.0); };
  auto kernel = [&] { failed |= !op.apply_shifted_rows(cols, x->data(), y->data(), 0.5, 2.0, -0.25).ok(); };
  kernel();  // first touch and the product's set-up outside the timed slices
  triad();

  std::vector<double> triad_gbs{slice_rate(slice, triad_bytes, triad)}, kernel_gbs, paired;
  for (int r = 0; r < rounds && !failed; ++r) {
    kernel_gbs.push_back(slice_rate(slice, kernel_bytes, kernel));
    triad_gbs.push_back(slice_rate(slice, triad_bytes, triad));
    paired.push_back(kernel_gbs.back() / (0.5 * (triad_gbs[r] + triad_gbs[r + 1])));
  }
  if (failed) {
    std::fprintf(stderr, "bench_paired: the fused product failed\n");
    return 1;
  }
  std::printf(
      "{\"rows\": %lld, \"cols\": %d, \"rounds\": %d, \"slice_s\": %.3f, \"paired_median\": %.4f, "
      "\"paired_min\": %.4f, \"paired_max\": %.4f, \"kernel_median_gbs\": %.3f, \"triad_median_gbs\": %.3f, "
      "\"kernel_best_gbs\": %.3f, \"triad_best_gbs\": %.3f, \"kernel_gbs\": %s, \"triad_gbs\": %s, \"check\": %.1f}\n",
      static_cast<long long>(matrix->info().rows), cols, rounds, slice, median(paired),
      *std::min_element(paired.begin(), paired.end()), *std::max_element(paired.begin(), paired.end()),
      median(kernel_gbs), median(triad_gbs), *std::max_element(kernel_gbs.begin(), kernel_gbs.end()),
      *std::max_element(triad_gbs.begin(), triad_gbs.end()), json_list(kernel_gbs).c_str(),
      json_list(triad_gbs).c_str(), arrays.check());
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  Runtime runtime(&argc, &argv);
  if (!runtime.ok()) return 1;
  int size = 1, rank = 0;
  MPI_Comm_size(MPI_COMM_WORLD, &size);
  MPI_Comm_rank(MPI_COMM_WORLD, &rank);
  if (size > 1) {
    if (rank == 0) std::fprintf(stderr, "bench_paired runs on one rank; started on %d\n", size);
    return 2;
  }
  return run(argc, argv);
}
