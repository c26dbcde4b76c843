// `lodestone calibrate MATRIX.h5 --pairs K --out FILE.json`: measure the planner's
// constants on this machine with a short run. Options in, calibrate() out; no numerics here.
#include <fmt/format.h>
#include <fmt/ranges.h>

#include "cli/command.hpp"
#include "io/atomic_output.hpp"
#include "lodestone/calibration.hpp"
#include "lodestone/solver.hpp"

namespace lodestone::cli {

Command make_calibrate_command(CLI::App& root) {
  struct Args {
    CalibrationRequest req;
    std::string out;
  };
  auto a = std::make_shared<Args>();
  CLI::App* app = root.add_subcommand(
      "calibrate", "Measure this machine's speeds with a short run, for plan --calibration");
  app->add_option("matrix", a->req.matrix_path, "matrix file (HDF5, Lodestone layout): a smaller one of the kind to plan for")
      ->required();
  app->add_option("--pairs,-k", a->req.pairs, "eigenpairs wanted (K), as the plan will ask")
      ->required()->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 20));
  app->add_option("--out,-o", a->out, "calibration file to write (JSON, written atomically)")->required();
  app->add_option("--matvecs", a->req.max_matvecs,
                  "budget of matrix-vector products for the short solve; if it runs out, convergence is "
                  "extrapolated from the residuals")
      ->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 50))->capture_default_str();
  app->add_option("--method", a->req.method, fmt::format("{}, as for solve and plan", fmt::join(method_choices(), " | ")))
      ->check(CLI::IsMember(method_choices()))->capture_default_str();
  app->add_option("--block-size", a->req.block_size, "block and chebyshev: vectors per block (default K plus a few; chebyshev needs more than K)")
      ->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 20));
  app->add_option("--tol", a->req.tolerance, "tolerance of the short solve, as for solve")
      ->check(CLI::Range(1e-16, 0.5))->capture_default_str();
  app->add_option("--seed", a->req.seed, "seed of the start vectors")->capture_default_str();
  app->add_option("--group", a->req.group, "HDF5 group of the matrix")->check(group_path())->capture_default_str();
  app->footer(
      "Run it with the ranks (and on the kind of node) the real run will use: it loads the matrix,\n"
      "times block products, small global sums and a checkpoint write (a trial file beside --out,\n"
      "removed again), and runs the solver within --matvecs. The file feeds plan --calibration.\n"
      "Exit status: 0 written, 1 unreadable matrix or a solve that did not progress, 2 malformed options.\n\n"
      "Examples:\n"
      "  mpirun -n 4 lodestone calibrate small-bridge.h5 --pairs 6 --out node.json\n"
      "  lodestone plan bridge.h5 --pairs 6 --scheduler slurm --cores-per-node 64 --node-memory 256G \\\n"
      "      --calibration node.json --out bridge.slurm\n"
      "  lodestone calibrate web-sample.h5 --pairs 2 --matvecs 500 --method block --out web.json");
  return {app, [a](MPI_Comm comm) -> Status {
            CalibrationRequest req = a->req;
            // Refuse an output that cannot be written before any work is done.
            auto writable = io::reserve_temporary(comm, a->out, {req.matrix_path}, "output");
            if (!writable) return writable.status();
            req.scratch_directory = io::directory_of(a->out);
            auto c = calibrate(comm, req);
            if (!c) return c.status();
            LODESTONE_TRY(write_calibration(comm, a->out, *c, {req.matrix_path}));
            print_once(comm, describe_calibration(*c) + fmt::format("Wrote {}\n", a->out));
            return Status::ok();
          }};
}

}  // namespace lodestone::cli
