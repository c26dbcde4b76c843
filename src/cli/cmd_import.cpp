// `lodestone import INPUT.mtx OUTPUT.h5`: a Matrix Market file to the matrix file layout.
#include <fmt/format.h>

#include "cli/command.hpp"
#include "io/mm_import.hpp"

namespace lodestone::cli {

Command make_import_command(CLI::App& root) {
  struct Args {
    std::string in;
    std::string out;
    io::ImportOptions options;
  };
  auto args = std::make_shared<Args>();
  CLI::App* app = root.add_subcommand("import", "Convert a Matrix Market file to a Lodestone matrix file");
  app->add_option("input", args->in, "Matrix Market file (.mtx)")->required();
  app->add_option("output", args->out, "HDF5 file to write (written under a temporary name, then renamed)")->required();
  app->add_option("--group", args->options.group, "HDF5 group to write the matrix to")->check(group_path())->capture_default_str();
  app->footer(
      "Reads the coordinate and array formats with real, integer or pattern values\n"
      "and general, symmetric or skew-symmetric symmetry. Symmetric kinds are\n"
      "expanded to both triangles; duplicate coordinate entries are summed (smallest\n"
      "value first, so the sum is the same bits on any number of ranks); pattern\n"
      "entries read as 1; exact zeros of the array format are not stored. Complex\n"
      "and hermitian files are refused (real arithmetic only), and so is a\n"
      "non-square matrix. Every rank reads its own share of the file, so memory per\n"
      "rank falls with the number of ranks.\n\n"
      "Examples:\n"
      "  lodestone import bridge.mtx bridge.h5\n"
      "  mpirun -n 8 lodestone import web.mtx web.h5 --group /graph");
  return {app, [args](MPI_Comm comm) -> Status {
            auto m = io::import_matrix_market(comm, args->in, args->out, args->options);
            if (!m) return m.status();
            std::int64_t local = m->rows.offsets.back(), nnz = 0;
            MPI_Allreduce(&local, &nnz, 1, MPI_INT64_T, MPI_SUM, comm);
            print_once(comm, fmt::format("imported    {} -> {} (group {})\n"
                                         "kind        {} {} {}\n"
                                         "size        {} x {}\n"
                                         "nonzeros    {} stored ({} entries in the file)\n",
                                         args->in, args->out, args->options.group,
                                         io::mm::format_name(m->banner.format), io::mm::field_name(m->banner.field),
                                         io::mm::symmetry_name(m->banner.symmetry), m->n, m->n, nnz,
                                         m->file_entries));
            return Status::ok();
          }};
}

}  // namespace lodestone::cli
