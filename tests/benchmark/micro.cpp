// Google Benchmark micro-benchmarks of the kernels that dominate a solve, on the
// library's own internal functions: the block matrix product (Operator::apply), the
// Chebyshev filter's fused step on row-interlaced blocks, block orthonormalization
// (Cholesky QR twice), the small projected eigenproblems (symmetric and real Schur)
// and a checkpoint write.
// Built with -DLODESTONE_BENCHMARKS=ON; scripts/bench runs it and keeps its JSON.
//
//   bench_micro [--grid N] [--grid-x NX] [--dir DIR] [Google Benchmark flags]
// --grid: side of the 2-D Laplacian the block kernels use (default 1000: 10^6 rows).
// --grid-x: a grid NX wide and N * N / NX high instead (about as many rows): a row's
// farthest neighbours NX rows away, which sets how long a row of a block must stay in
// cache between its first and last use.
// One rank only (it refuses more).
#include <benchmark/benchmark.h>
#include <mpi.h>

#include <algorithm>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <memory>
#include <string>

#include "algebra/block.hpp"
#include "algebra/operator.hpp"
#include "algebra/small_eigen.hpp"
#include "io/generators.hpp"
#include "laplace_on_disk.hpp"
#include "lodestone/checkpoint.hpp"
#include "lodestone/matrix.hpp"
#include "lodestone/runtime.hpp"

using namespace lodestone;

namespace {

std::int64_t g_grid = 1000;
std::int64_t g_grid_x = 0;  // 0: square
std::string g_dir = "/tmp";
std::unique_ptr<Matrix> g_matrix;

Mat matrix() { return g_matrix->petsc(); }

// The rate, shown as "bytes=...G/s" in units of 10^9 bytes like the triad and the suite's
// product rates. Google Benchmark's own SetBytesProcessed shows units of 2^30 bytes
// (7.4 % more bytes per G), which made this file's rates read low beside the triad.
void set_bytes(benchmark::State& state, double bytes_per_iteration) {
  state.counters["bytes"] =
      benchmark::Counter(bytes_per_iteration * static_cast<double>(state.iterations()), benchmark::Counter::kIsRate);
}

algebra::Block random_block(int cols, std::uint64_t stream) {
  auto b = algebra::Block::like(matrix(), cols);
  algebra::fill_random(*b, 7, stream);
  return std::move(*b);
}

// Y = A X for a block of b vectors. Bytes moved once per block (the suite's formula):
// nnz x (8 value + 4 index) + (n+1) x 4 offsets + n x b x 8 x 2 (read X, write Y).
void BM_BlockProduct(benchmark::State& state) {
  const int b = static_cast<int>(state.range(0));
  algebra::Operator op(matrix());
  auto x = random_block(b, 1);
  auto y = random_block(b, 2);
  if (!op.apply(x, y).ok()) state.SkipWithError("product failed");  // sets up the product structure once
  for (auto _ : state) {
    if (!op.apply(x, y).ok()) state.SkipWithError("product failed");
  }
  MatInfo mi;
  MatGetInfo(matrix(), MAT_GLOBAL_SUM, &mi);
  const double n = static_cast<double>(g_matrix->info().rows);
  const double bytes = mi.nz_used * 12.0 + (n + 1) * 4.0 + n * b * 16.0;
  set_bytes(state, bytes);
  state.counters["matvecs/s"] = benchmark::Counter(static_cast<double>(b * state.iterations()), benchmark::Counter::kIsRate);
}
BENCHMARK(BM_BlockProduct)->Arg(1)->Arg(8)->Arg(12)->Arg(16)->Unit(benchmark::kMillisecond)->UseRealTime();

// One Chebyshev filter step as the filter runs it: Y = alpha (A X - shift X) + beta Y
// on blocks held row-interlaced (Operator::apply_shifted_rows). Bytes moved once per
// step: bench::shifted_rows_bytes.
void BM_ShiftedRowsProduct(benchmark::State& state) {
  const int b = static_cast<int>(state.range(0));
  algebra::Operator op(matrix());
  if (!op.fuses()) {
    state.SkipWithError("the matrix has no fused product");
    return;
  }
  auto x = random_block(b, 1);
  auto y = random_block(b, 2);
  for (auto _ : state) {
    if (!op.apply_shifted_rows(b, x.data(), y.data(), 0.5, 2.0, -0.25).ok()) state.SkipWithError("product failed");
    benchmark::ClobberMemory();
  }
  MatInfo mi;
  MatGetInfo(matrix(), MAT_GLOBAL_SUM, &mi);
  const double n = static_cast<double>(g_matrix->info().rows);
  set_bytes(state, bench::shifted_rows_bytes(n, mi.nz_used, b));
}
BENCHMARK(BM_ShiftedRowsProduct)->DenseRange(4, 12)->Unit(benchmark::kMillisecond)->UseRealTime();

void BM_Orthonormalize(benchmark::State& state) {
  const int b = static_cast<int>(state.range(0));
  auto x = random_block(b, 3);
  auto work = random_block(b, 3);
  for (auto _ : state) {
    algebra::copy_columns(x, 0, work, 0, b);
    auto r = algebra::orthonormalize(work, nullptr, 0, 7, 9);
    if (!r) state.SkipWithError("orthonormalize failed");
  }
  set_bytes(state, static_cast<double>(g_matrix->info().rows) * b * 8.0);
}
BENCHMARK(BM_Orthonormalize)->Arg(8)->Arg(12)->Arg(16)->Unit(benchmark::kMillisecond)->UseRealTime();

algebra::Small random_small(int n, bool symmetric) {
  algebra::Small h(n, n);
  for (int j = 0; j < n; ++j)
    for (int i = 0; i < n; ++i) h(i, j) = io::hashed_uniform(5, static_cast<std::uint64_t>(i), static_cast<std::uint64_t>(j)) - 0.5;
  if (symmetric)
    for (int j = 0; j < n; ++j)
      for (int i = 0; i < j; ++i) h(j, i) = h(i, j);
  return h;
}

void BM_SymmetricEigen(benchmark::State& state) {
  const auto h = random_small(static_cast<int>(state.range(0)), true);
  for (auto _ : state) {
    auto e = algebra::symmetric_eigen(MPI_COMM_WORLD, h);
    benchmark::DoNotOptimize(e);
  }
}
BENCHMARK(BM_SymmetricEigen)->Arg(12)->Arg(24)->Arg(48)->Unit(benchmark::kMicrosecond);

void BM_RealSchur(benchmark::State& state) {
  const auto h = random_small(static_cast<int>(state.range(0)), false);
  const algebra::Priority by_modulus = [](double re, double im) { return re * re + im * im; };
  for (auto _ : state) {
    auto s = algebra::real_schur(MPI_COMM_WORLD, h, by_modulus);
    benchmark::DoNotOptimize(s);
  }
}
BENCHMARK(BM_RealSchur)->Arg(12)->Arg(24)->Arg(48)->Unit(benchmark::kMicrosecond);

// A checkpoint of one block of b vectors of the matrix's rows (atomic, fsynced).
void BM_CheckpointWrite(benchmark::State& state) {
  const int b = static_cast<int>(state.range(0));
  const MatrixInfo& info = g_matrix->info();
  Checkpoint c;
  c.identity.rows = info.rows;
  c.state.method = "micro";
  c.state.rows = info.rows;
  c.state.row_begin = info.row_begin;
  c.state.row_end = info.row_end;
  StateBlock& blk = c.state.blocks["active"];
  blk.columns = b;
  blk.local.assign(static_cast<std::size_t>(info.row_end - info.row_begin) * b, 0.25);
  const std::string path = g_dir + "/micro-checkpoint.h5";
  for (auto _ : state) {
    if (!write_checkpoint(MPI_COMM_WORLD, path, c).ok()) state.SkipWithError("checkpoint write failed");
  }
  set_bytes(state, static_cast<double>(info.rows) * b * 8.0);
  std::remove(path.c_str());
  std::remove(previous_checkpoint_path(path).c_str());
}
BENCHMARK(BM_CheckpointWrite)->Arg(12)->Unit(benchmark::kMillisecond)->UseRealTime()->Iterations(3);

}  // namespace

int main(int argc, char** argv) {
  Runtime runtime(&argc, &argv);
  // Google Benchmark picks each kernel's iteration count from the time it measured, so
  // ranks would disagree on how many collective products to run and wait forever.
  int size = 1, rank = 0;
  MPI_Comm_size(MPI_COMM_WORLD, &size);
  MPI_Comm_rank(MPI_COMM_WORLD, &rank);
  if (size > 1) {
    if (rank == 0) std::fprintf(stderr, "bench_micro runs on one rank; started on %d\n", size);
    return 2;
  }
  // Our own flags first; the rest go to Google Benchmark.
  int kept = 1;
  for (int i = 1; i < argc; ++i) {
    if (!std::strcmp(argv[i], "--grid") && i + 1 < argc) g_grid = std::atoll(argv[++i]);
    else if (!std::strcmp(argv[i], "--grid-x") && i + 1 < argc) g_grid_x = std::atoll(argv[++i]);
    else if (!std::strcmp(argv[i], "--dir") && i + 1 < argc) g_dir = argv[++i];
    else argv[kept++] = argv[i];
  }
  argc = kept;
  const std::string path = g_dir + "/micro-laplace2d.h5";
  const std::int64_t nx = g_grid_x > 0 ? g_grid_x : g_grid;
  const std::int64_t ny = std::max<std::int64_t>(1, g_grid * g_grid / nx);
  g_matrix = bench::laplace_on_disk(nx, ny, path);
  if (!g_matrix) return 1;
  benchmark::Initialize(&argc, argv);
  benchmark::RunSpecifiedBenchmarks();
  benchmark::Shutdown();
  g_matrix.reset();
  std::remove(path.c_str());
  return 0;
}
