// Helpers shared by the MPI unit tests: per-run temporary paths agreed by all ranks.
#pragma once

#include <mpi.h>

#include <filesystem>
#include <string>

#include "support/collective.hpp"

namespace lodestone::test {

// A fresh path under $LODESTONE_TEST_TMP (or /tmp), the same on every rank.
inline std::string temp_path(MPI_Comm comm, const std::string& name) {
  static int counter = 0;
  const char* base = std::getenv("LODESTONE_TEST_TMP");
  std::string dir = base ? base : "/tmp/lodestone-test";
  int stamp = 0;
  if (comm_rank(comm) == 0) {
    std::filesystem::create_directories(dir);
    stamp = static_cast<int>(::getpid());
  }
  MPI_Bcast(&stamp, 1, MPI_INT, 0, comm);
  std::string path = dir + "/" + std::to_string(stamp) + "-" + std::to_string(counter++) + "-" + name;
  if (comm_rank(comm) == 0) std::filesystem::remove(path);
  MPI_Barrier(comm);
  return path;
}

}  // namespace lodestone::test
