// Entry point of the `lodestone` command: parses, dispatches, reports once.
#include <fmt/format.h>

#include <cstdio>
#include <cstdlib>
#include <exception>
#include <new>
#include <vector>

#include "cli/command.hpp"
#include "lodestone/runtime.hpp"
#include "support/collective.hpp"

namespace lodestone::cli {

void print_once(MPI_Comm comm, const std::string& text) {
  if (comm_rank(comm) == 0) {
    std::fputs(text.c_str(), stdout);
    std::fflush(stdout);
  }
}

void print_error_once(MPI_Comm comm, const std::string& text) {
  if (comm_rank(comm) == 0) {
    std::fprintf(stderr, "lodestone: error: %s\n", text.c_str());
    std::fflush(stderr);
  }
}

}  // namespace lodestone::cli

int main(int argc, char** argv) {
  using namespace lodestone;
  restart_on_huge_page_heap(argv);  // may start the program again, once
  // PETSc options (e.g. -log_view) follow a lone "--petsc" marker; the rest is ours.
  std::vector<char*> ours, petsc{argv[0]};
  bool in_petsc = false;
  for (int i = 0; i < argc; ++i) {
    std::string a = argv[i];
    if (a == "--petsc") { in_petsc = true; continue; }
    (in_petsc ? petsc : ours).push_back(argv[i]);
  }
  int pargc = static_cast<int>(petsc.size());
  petsc.push_back(nullptr);  // argv[argc] must be a null pointer for MPI_Init
  char** pargv = petsc.data();
  Runtime runtime(&pargc, &pargv);
  if (!runtime.ok()) {
    std::fprintf(stderr, "lodestone: error: could not start MPI/PETSc\n");
    return 1;
  }
  MPI_Comm comm = MPI_COMM_WORLD;

  CLI::App app{"Lodestone: a few dominant eigenpairs of very large matrices, on MPI.", "lodestone"};
  app.require_subcommand(1);
  app.set_version_flag("--version", "lodestone 0.1.0\nmemory: C heap on " + heap_pages() +
                                        "\nmpi: " + mpi_transport_choice());
  std::vector<cli::Command> commands = {
      // In the order of the pipeline: get a matrix, look at it, solve, check, plan.
      cli::make_import_command(app),
      cli::make_generate_command(app),
      cli::make_inspect_command(app),
      cli::make_solve_command(app),
      cli::make_verify_command(app),
      cli::make_plan_command(app),
      cli::make_calibrate_command(app),
  };
  // Set after the subcommands, which would otherwise inherit it.
  app.footer(
      "Run 'lodestone SUBCOMMAND --help' for the options of each; man pages: lodestone-SUBCOMMAND(1).\n\n"
      "Examples:\n"
      "  mpirun -n 2 lodestone generate laplace2d --nx 400 --ny 290 plate.h5\n"
      "  mpirun -n 2 lodestone solve plate.h5 --pairs 8 --select largest --out plate-modes.h5\n"
      "  mpirun -n 2 lodestone verify plate.h5 plate-modes.h5");
  try {
    app.parse(static_cast<int>(ours.size()), ours.data());
  } catch (const CLI::CallForHelp& e) {
    if (comm_rank(comm) == 0) app.exit(e);
    return 0;
  } catch (const CLI::CallForAllHelp& e) {
    if (comm_rank(comm) == 0) app.exit(e);
    return 0;
  } catch (const CLI::CallForVersion& e) {
    if (comm_rank(comm) == 0) app.exit(e);
    return 0;
  } catch (const CLI::ParseError& e) {
    // Same arguments on every rank, so every rank fails the same way.
    cli::print_error_once(comm, fmt::format("{} (see 'lodestone --help')", e.what()));
    return 2;
  }
  for (auto& c : commands) {
    if (c.app->parsed()) {
      Status s;
      try {
        s = c.run(comm);
      } catch (const std::exception& e) {
        // A last resort: sizes read from files are checked, and their allocations
        // agreed on, before use. An exception that still escapes ends this rank with
        // one line and status 1 rather than an abort; if it came on one rank alone,
        // mpirun ends the others.
        const bool memory = dynamic_cast<const std::bad_alloc*>(&e) != nullptr;
        std::fprintf(stderr, "lodestone: error: rank %d: %s\n", comm_rank(comm),
                     memory ? "out of memory" : fmt::format("unexpected failure: {}", e.what()).c_str());
        std::fflush(stderr);
        return 1;
      }
      if (s.kind() == ErrorKind::stopped || s.kind() == ErrorKind::budget) {
        // Not failures: the run kept its work and says how to go on.
        if (comm_rank(comm) == 0) std::fprintf(stderr, "lodestone: %s\n", s.message().c_str());
      } else if (!s) {
        cli::print_error_once(comm, s.message());
      }
      return s.exit_code();
    }
  }
  return 2;
}
