// write_sample_result N K MATRIX.h5 RESULT.h5: writes the 1-D Dirichlet Laplacian
// of size N and a results file holding its K largest eigenpairs in closed form
// (laplace_result.hpp), so the script tests of verify, inspect and the plot
// script have a real results file without running a solve. Runs on any rank count.
#include <cstdio>
#include <string>

#include "io/generators.hpp"
#include "io/matrix_writer.hpp"
#include "laplace_result.hpp"
#include "lodestone/matrix.hpp"
#include "lodestone/result.hpp"
#include "lodestone/runtime.hpp"
#include "support/collective.hpp"

int main(int argc, char** argv) {
  using namespace lodestone;
  Runtime runtime(&argc, &argv);
  if (!runtime.ok()) return 1;
  MPI_Comm comm = MPI_COMM_WORLD;
  if (argc != 5) {
    if (comm_rank(comm) == 0) std::fprintf(stderr, "usage: write_sample_result N K MATRIX.h5 RESULT.h5\n");
    return 2;
  }
  const std::int64_t n = std::stoll(argv[1]), k = std::stoll(argv[2]);
  const std::string matrix_path = argv[3], result_path = argv[4];
  Status s = io::write_csr_file(comm, matrix_path, "/matrix", n, true, io::generate_laplace1d(comm, n));
  if (s) {
    auto m = Matrix::load(comm, matrix_path);
    if (!m) {
      s = m.status();
    } else {
      const auto& i = m->info();
      s = write_result(comm, result_path, test::laplace1d_result(comm, n, k, i.row_begin, i.row_end, i.fingerprint),
                       {matrix_path});
    }
  }
  if (!s && comm_rank(comm) == 0) std::fprintf(stderr, "write_sample_result: %s\n", s.message().c_str());
  return s.exit_code();
}
