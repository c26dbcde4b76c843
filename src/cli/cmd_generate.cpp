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
    std::int64_t degree = 8;
    double damping = 0.85;
    std::int64_t communities = 1;
    double mixing = 0.1;
    std::uint64_t seed = 1;
    std::string spectrum = "linear";
    double ratio = 0.9;
    int dim = 10;
  };
  auto args = std::make_shared<Args>();
  CLI::App* app = root.add_subcommand("generate", "Write a synthetic matrix (deterministic, any rank count)");
  app->add_option("kind", args->kind, "laplace1d | laplace2d | walk | dense-spectrum | hypercube")
      ->required()
      ->check(CLI::IsMember({"laplace1d", "laplace2d", "walk", "dense-spectrum", "hypercube"}));
  app->add_option("output", args->out, "HDF5 file to write")->required();
  app->add_option("--n", args->n, "rows (laplace1d, walk, dense-spectrum)")
      ->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 40));
  app->add_option("--nx", args->nx, "grid points along x (laplace2d)")->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 31));
  app->add_option("--ny", args->ny, "grid points along y (laplace2d)")->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 31));
  app->add_option("--degree", args->degree, "mean out-degree of the walk graph, ring edge included (walk)")
      ->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 20))
      ->capture_default_str();
  app->add_option("--damping", args->damping, "damping factor d in A = d*P + (1-d)*I (walk)")
      ->check(CLI::Range(0.0, 1.0))
      ->capture_default_str();
  app->add_option("--communities", args->communities,
                  "C equal ranges of nodes whose edges mostly stay inside; C eigenvalues near 1 (walk)")
      ->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 20))
      ->capture_default_str();
  app->add_option("--mixing", args->mixing,
                  "community c (from 0) sends this times (c+1)/C of its hashed edges anywhere (walk)")
      ->check(CLI::Range(0.0, 1.0))
      ->capture_default_str();
  app->add_option("--spectrum", args->spectrum, "eigenvalues n, n-1, ..., 1 (linear) or 1, r, r^2, ... (geometric)")
      ->check(CLI::IsMember({"linear", "geometric"}))
      ->capture_default_str();
  app->add_option("--ratio", args->ratio, "ratio r of the geometric spectrum (dense-spectrum)")
      ->check(CLI::Range(-1.0, 1.0))
      ->capture_default_str();
  app->add_option("--dim", args->dim, "dimension d of the hypercube, n = 2^d (hypercube)")
      ->check(CLI::Range(1, 40))
      ->capture_default_str();
  app->add_option("--seed", args->seed, "seed of the hashed random numbers (walk, dense-spectrum)")->capture_default_str();
  app->add_option("--group", args->group, "HDF5 group to write the matrix to")->check(group_path())->capture_default_str();
  app->footer(
      "Kinds:\n"
      "  laplace1d       tridiagonal (-1, 2, -1), Dirichlet; symmetric\n"
      "  laplace2d       5-point Laplacian on an nx x ny grid, Dirichlet; symmetric\n"
      "  walk            A = d*P + (1-d)*I for the column-stochastic transition matrix P\n"
      "                  of a random directed graph (a ring i -> i+1 plus hashed edges).\n"
      "                  The damped mass stays at its node instead of jumping to every\n"
      "                  node, so A stays sparse; A remains column-stochastic, and 1 is\n"
      "                  its simple eigenvalue of largest modulus, with the stationary\n"
      "                  distribution as eigenvector. With --communities C the nodes\n"
      "                  form C groups that mostly link inside: C eigenvalues near 1\n"
      "                  stand well apart from the rest\n"
      "  dense-spectrum  dense symmetric H*diag(lambda)*H, H a hashed Householder\n"
      "                  reflector, with eigenvalues set by --spectrum\n"
      "  hypercube       adjacency matrix of the hypercube graph Q_d; symmetric\n"
      "The same arguments give the same matrix on any number of ranks.\n\n"
      "Examples:\n"
      "  lodestone generate laplace2d --nx 400 --ny 290 plate.h5\n"
      "  mpirun -n 4 lodestone generate laplace1d --n 1000000 rod.h5\n"
      "  mpirun -n 4 lodestone generate walk --n 1000000 --degree 12 --seed 7 web.h5\n"
      "  lodestone generate walk --n 2000000 --communities 4 --mixing 0.1 groups.h5\n"
      "  lodestone generate dense-spectrum --n 2000 --spectrum geometric --ratio 0.95 dense.h5\n"
      "  lodestone generate hypercube --dim 16 cube.h5");
  return {app, [args](MPI_Comm comm) -> Status {
            const Args& a = *args;
            if (a.kind == "laplace1d") {
              auto rows = io::generate_laplace1d(comm, a.n);
              return io::write_csr_file(comm, a.out, a.group, a.n, true, rows);
            }
            if (a.kind == "laplace2d") {
              auto rows = io::generate_laplace2d(comm, a.nx, a.ny);
              return io::write_csr_file(comm, a.out, a.group, a.nx * a.ny, true, rows);
            }
            if (a.kind == "walk") {
              io::WalkOptions o;
              o.n = a.n;
              o.degree = a.degree;
              o.damping = a.damping;
              o.communities = a.communities;
              o.mixing = a.mixing;
              o.seed = a.seed;
              if (o.communities > o.n)
                return Status::usage(fmt::format("--communities {} exceeds --n {}", o.communities, o.n));
              auto rows = io::generate_walk(comm, o);
              return io::write_csr_file(comm, a.out, a.group, a.n, false, rows);
            }
            if (a.kind == "dense-spectrum") {
              if (a.n > 1000000)
                return Status::usage(fmt::format("--n {} is too large for a dense matrix (at most 1000000)", a.n));
              auto d = io::generate_dense_spectrum(comm, a.n,
                                                   a.spectrum == "linear" ? io::Spectrum::linear : io::Spectrum::geometric,
                                                   a.ratio, a.seed);
              return io::write_dense_file(comm, a.out, a.group, a.n, true, d.row_begin, d.local_rows, d.values);
            }
            auto rows = io::generate_hypercube(comm, a.dim);
            return io::write_csr_file(comm, a.out, a.group, std::int64_t{1} << a.dim, true, rows);
          }};
}

}  // namespace lodestone::cli
