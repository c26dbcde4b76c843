// Checkpoint size and write time for the benchmark suite (scripts/bench).
//
//   mpirun -n P bench_checkpoint MATRIX.h5 --pairs K --method M --select S --steps N --out DIR [--repeat R]
//
// Loads the matrix, runs N iterations of the method exactly as a solve would,
// saves the method's real state and writes it as a checkpoint R times with the
// library's own write_checkpoint (temporary name, fsync, rename, previous
// generation kept). Prints one JSON object on rank 0: the file's size (bytes
// written), the theoretical minimum (the distributed vectors that must be kept:
// sum over blocks of columns x rows x 8 bytes) and the median write time.
#include <mpi.h>
#include <sys/stat.h>

#include <algorithm>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <string>
#include <vector>

#include "algebra/operator.hpp"
#include "lodestone/checkpoint.hpp"
#include "lodestone/matrix.hpp"
#include "lodestone/runtime.hpp"
#include "methods/method.hpp"
#include "state/method_state_adapter.hpp"
#include "support/collective.hpp"

using namespace lodestone;

namespace {
int fail(MPI_Comm comm, const Status& s) {
  if (comm_rank(comm) == 0) std::fprintf(stderr, "bench_checkpoint: %s\n", s.message().c_str());
  return 1;
}
}  // namespace

int main(int argc, char** argv) {
  Runtime runtime(&argc, &argv);
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string matrix_path, method = "chebyshev", select = "largest", out = ".";
  int pairs = 4, steps = 2, repeat = 3;
  for (int i = 1; i < argc; ++i) {
    const std::string a = argv[i];
    const char* v = i + 1 < argc ? argv[i + 1] : "";
    if (a == "--pairs") pairs = std::atoi(v), ++i;
    else if (a == "--method") method = v, ++i;
    else if (a == "--select") select = v, ++i;
    else if (a == "--steps") steps = std::atoi(v), ++i;
    else if (a == "--repeat") repeat = std::atoi(v), ++i;
    else if (a == "--out") out = v, ++i;
    else matrix_path = a;
  }
  auto matrix = Matrix::load(comm, matrix_path);
  if (!matrix) return fail(comm, matrix.status());
  const MatrixInfo& info = matrix->info();
  algebra::Operator op(matrix->petsc());
  auto norm = algebra::norm_estimate(matrix->petsc());
  if (!norm) return fail(comm, norm.status());
  methods::Problem problem;
  problem.symmetric = info.symmetric;
  problem.selection = select == "largest" ? methods::Selection::largest
                      : select == "smallest" ? methods::Selection::smallest
                                             : methods::Selection::magnitude;
  problem.pairs = pairs;
  problem.norm_estimate = *norm > 0 ? *norm : 1.0;
  MPI_Bcast(&problem.norm_estimate, 1, MPI_DOUBLE, 0, comm);
  problem.seed = 1;
  const methods::MethodInfo* entry = methods::find_method(method);
  if (!entry) return fail(comm, Status::usage("unknown method " + method));
  auto m = entry->make();
  if (Status s = agree(comm, m->setup(op, problem)); !s.ok()) return fail(comm, s);
  for (int i = 0; i < steps && m->converged() < pairs; ++i)
    if (Status s = agree(comm, m->step()); !s.ok()) return fail(comm, s);
  methods::MethodState ms;
  if (Status s = agree(comm, m->save(ms)); !s.ok()) return fail(comm, s);

  Checkpoint c;
  c.identity.matrix_fingerprint = info.fingerprint;
  c.identity.rows = info.rows;
  c.identity.options = {{"pairs", std::to_string(pairs)}, {"method", method}, {"selection", select}};
  c.state = state::export_state(m->name(), ms, info.rows, info.row_begin, info.row_end);
  c.iterations = m->iterations();
  c.matvecs = op.matvecs();
  double minimum = 0;  // bytes of the vectors that must be kept
  std::int64_t columns = 0;
  for (const auto& [name, block] : c.state.blocks) {
    minimum += static_cast<double>(block.columns) * static_cast<double>(info.rows) * 8.0;
    columns += block.columns;
  }
  const std::string path = out + "/bench-checkpoint.h5";
  std::vector<double> seconds;
  for (int r = 0; r < repeat; ++r) {
    MPI_Barrier(comm);
    const double t0 = MPI_Wtime();
    if (Status s = write_checkpoint(comm, path, c, {matrix_path}); !s.ok()) return fail(comm, s);
    MPI_Barrier(comm);
    seconds.push_back(MPI_Wtime() - t0);
  }
  std::sort(seconds.begin(), seconds.end());
  if (comm_rank(comm) == 0) {
    struct stat st{};
    const double bytes = ::stat(path.c_str(), &st) == 0 ? static_cast<double>(st.st_size) : -1.0;
    std::printf("{\"ranks\": %d, \"rows\": %lld, \"columns\": %lld, \"bytes\": %.0f, \"minimum_bytes\": %.0f, "
                "\"seconds\": %.6f, \"path\": \"%s\"}\n",
                comm_size(comm), static_cast<long long>(info.rows), static_cast<long long>(columns), bytes, minimum,
                seconds[seconds.size() / 2], path.c_str());
    std::remove(path.c_str());
    std::remove(previous_checkpoint_path(path).c_str());
  }
  return 0;
}
