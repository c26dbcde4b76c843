// `lodestone inspect FILE`: a short human-readable summary of a Lodestone file.
#include <fmt/format.h>

#include "cli/command.hpp"
#include "cli/inspect_checkpoint.hpp"
#include "cli/inspect_result.hpp"
#include "io/result_file.hpp"
#include "lodestone/checkpoint.hpp"
#include "io/matrix_summary.hpp"
#include "support/format.hpp"

namespace lodestone::cli {

Command make_inspect_command(CLI::App& root) {
  struct Args {
    std::string path;
    std::string group = "/matrix";
    bool check = false;
    double symmetry_tolerance = 1e-12;
  };
  auto args = std::make_shared<Args>();
  CLI::App* app = root.add_subcommand("inspect", "Summarise a matrix, results or checkpoint file");
  app->add_option("file", args->path, "Lodestone HDF5 file")->required();
  app->add_option("--group", args->group, "HDF5 group of the matrix")->check(group_path())->capture_default_str();
  app->add_flag("--check", args->check,
                "Also load the whole matrix in parallel, validate every entry and print its fingerprint");
  app->add_option("--symmetry-tolerance", args->symmetry_tolerance,
                  "With --check: accept |a_ij - a_ji| <= tol * max|a| for a matrix declared symmetric")
      ->check(CLI::Range(0.0, 1.0))
      ->capture_default_str();
  app->footer("Examples:\n  lodestone inspect bridge.h5\n  lodestone inspect bridge-modes.h5\n  mpirun -n 4 lodestone inspect --check bridge.h5");
  return {app, [args](MPI_Comm comm) -> Status {
            if (is_checkpoint_file(comm, args->path)) return inspect_checkpoint(comm, args->path);
            if (io::is_result_file(comm, args->path)) return inspect_result(comm, args->path);
            // With --check, load (and so validate) first: a bad file gets its
            // one error line and no half-true summary before it.
            std::uint64_t fingerprint = 0;
            if (args->check) {
              LoadOptions o;
              o.group = args->group;
              o.symmetry_tolerance = args->symmetry_tolerance;
              auto m = Matrix::load(comm, args->path, o);
              if (!m) return m.status();
              fingerprint = m->info().fingerprint;
            }
            auto s = io::summarize_matrix(comm, args->path, args->group);
            if (!s) return s.status();
            print_once(comm, fmt::format(
                                 "matrix      {} (group {})\n"
                                 "layout      {}\n"
                                 "size        {} x {}\n"
                                 "nonzeros    {}\n"
                                 "symmetric   {}\n"
                                 "per row     min {}  mean {:.2f}  max {}\n"
                                 "stored as   values {}{}\n"
                                 "in memory   {} (PETSc matrix, all ranks together)\n",
                                 args->path, args->group, layout_name(s->layout), s->rows, s->rows, s->nnz,
                                 s->symmetric ? "yes" : "no", s->row_nnz_min, s->row_nnz_mean, s->row_nnz_max,
                                 s->value_type, s->index_type.empty() ? "" : ", column indices " + s->index_type,
                                 human_bytes(s->bytes_in_memory)));
            if (args->check) {
              print_once(comm, fmt::format("checked     every entry is valid\nfingerprint {:016x}\n", fingerprint));
            }
            return Status::ok();
          }};
}

}  // namespace lodestone::cli
