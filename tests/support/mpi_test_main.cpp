// GoogleTest main for tests run under mpirun: every rank runs every test; rank 0
// prints the usual report, other ranks print only their failures; the exit status
// is non-zero if any rank failed.
#include <gtest/gtest.h>
#include <mpi.h>

#include <cstdio>

#include "lodestone/runtime.hpp"

namespace {
class FailurePrinter : public testing::EmptyTestEventListener {
 public:
  explicit FailurePrinter(int rank) : rank_(rank) {}
  void OnTestPartResult(const testing::TestPartResult& r) override {
    if (r.failed())
      std::fprintf(stderr, "[rank %d] %s:%d: Failure\n%s\n", rank_, r.file_name() ? r.file_name() : "?",
                   r.line_number(), r.summary());
  }

 private:
  int rank_;
};
}  // namespace

int main(int argc, char** argv) {
  testing::InitGoogleTest(&argc, argv);
  int failed = 0;
  {
    lodestone::Runtime runtime(&argc, &argv);
    int rank = 0;
    MPI_Comm_rank(MPI_COMM_WORLD, &rank);
    if (rank != 0) {
      auto& listeners = testing::UnitTest::GetInstance()->listeners();
      delete listeners.Release(listeners.default_result_printer());
      listeners.Append(new FailurePrinter(rank));
    }
    int local = RUN_ALL_TESTS();
    MPI_Allreduce(&local, &failed, 1, MPI_INT, MPI_MAX, MPI_COMM_WORLD);
  }
  return failed;
}
