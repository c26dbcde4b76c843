// `lodestone generate KIND ... OUTPUT.h5`: synthetic matrices, written in parallel.
#include <fmt/format.h>

#include "cli/command.hpp"
#include "io/generators.hpp"
#include "io/matrix_writer.hpp"

namespace lodestone::cli {

Command make_generate_command(CLI::App& root) {
  struct Args {
    std::string kind;
    std::string out;
    std::string group = "/matrix";
    std::int64_t n = 100;
    std::int64_t nx = 10, ny = 10;
  };
  auto args = std::make_shared<Args>();
  CLI::App* app = root.add_subcommand("generate", "Write a synthetic matrix (deterministic, any rank count)");
  app->add_option("kind", args->kind, "laplace1d | laplace2d")
      ->required()
      ->check(CLI::IsMember({"laplace1d", "laplace2d"}));
  app->add_option("output", args->out, "HDF5 file to write")->required();
  app->add_option("--n", args->n, "rows (laplace1d)")->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 40));
  app->add_option("--nx", args->nx, "grid points along x (laplace2d)")->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 31));
  app->add_option("--ny", args->ny, "grid points along y (laplace2d)")->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 31));
  app->add_option("--group", args->group, "HDF5 group to write the matrix to")->capture_default_str();
  app->footer(
      "Examples:\n"
      "  lodestone generate laplace2d --nx 400 --ny 290 plate.h5\n"
      "  mpirun -n 4 lodestone generate laplace1d --n 1000000 rod.h5");
  return {app, [args](MPI_Comm comm) -> Status {
            if (args->kind == "laplace1d") {
              auto rows = io::generate_laplace1d(comm, args->n);
              return io::write_csr_file(comm, args->out, args->group, args->n, true, rows);
            }
            auto rows = io::generate_laplace2d(comm, args->nx, args->ny);
            return io::write_csr_file(comm, args->out, args->group, args->nx * args->ny, true, rows);
          }};
}

}  // namespace lodestone::cli
