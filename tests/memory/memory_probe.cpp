// Memory probe: loads a matrix file and reports each rank's peak resident memory
// (VmHWM in /proc/self/status) just before and just after the load.
//
//   memory_probe WARMUP.h5 MATRIX.h5
//
// WARMUP is a tiny matrix loaded first, so that the fixed costs of the first load
// (HDF5 and MPI-IO set-up, PETSc's matrix machinery) land in the "before"
// figure and the growth measures the matrix itself. Rank 0 prints one line per
// rank and a last line "max_growth_kib N" with the largest per-rank growth.
#include <mpi.h>

#include <cstdio>
#include <cstring>
#include <fstream>
#include <string>
#include <vector>

#include "lodestone/matrix.hpp"
#include "lodestone/runtime.hpp"

namespace {

long status_kib(const char* key) {
  std::ifstream in("/proc/self/status");
  std::string line;
  const std::size_t len = std::strlen(key);
  while (std::getline(in, line))
    if (line.compare(0, len, key) == 0 && line.size() > len && line[len] == ':') return std::stol(line.substr(len + 1));
  return -1;
}

}  // namespace

int main(int argc, char** argv) {
  lodestone::Runtime runtime(&argc, &argv);
  if (!runtime.ok() || argc != 3) {
    std::fprintf(stderr, "usage: memory_probe WARMUP.h5 MATRIX.h5\n");
    return 2;
  }
  MPI_Comm comm = MPI_COMM_WORLD;
  int rank = 0, size = 1;
  MPI_Comm_rank(comm, &rank);
  MPI_Comm_size(comm, &size);
  {
    auto warm = lodestone::Matrix::load(comm, argv[1]);
    if (!warm) {
      if (rank == 0) std::fprintf(stderr, "memory_probe: %s\n", warm.status().message().c_str());
      return 1;
    }
  }
  long figures[4] = {status_kib("VmHWM"), 0, 0, 0};
  {
    auto m = lodestone::Matrix::load(comm, argv[2]);
    if (!m) {
      if (rank == 0) std::fprintf(stderr, "memory_probe: %s\n", m.status().message().c_str());
      return 1;
    }
    figures[1] = status_kib("VmHWM");
    figures[2] = static_cast<long>(m->info().row_end - m->info().row_begin);
    figures[3] = static_cast<long>(m->info().rows);
  }
  std::vector<long> all(static_cast<std::size_t>(4 * size));
  MPI_Gather(figures, 4, MPI_LONG, all.data(), 4, MPI_LONG, 0, comm);
  if (rank == 0) {
    long worst = 0;
    for (int r = 0; r < size; ++r) {
      const long* f = &all[static_cast<std::size_t>(4 * r)];
      const long growth = f[1] - f[0];
      worst = growth > worst ? growth : worst;
      std::printf("ranks %d  rank %d  rows %ld of %ld  peak before %.1f MiB  after %.1f MiB  growth %.1f MiB\n", size, r,
                  f[2], f[3], f[0] / 1024.0, f[1] / 1024.0, growth / 1024.0);
    }
    std::printf("max_growth_kib %ld\n", worst);
  }
  return 0;
}
