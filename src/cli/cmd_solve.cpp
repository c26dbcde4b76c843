// `lodestone solve MATRIX.h5 --pairs K --out RESULT.h5 ...`: options in, solve()
// through the public API, a closing table out. No numerics here.
#include <fmt/format.h>
#include <fmt/ranges.h>
#include <limits>

#include "cli/command.hpp"
#include "io/atomic_output.hpp"
#include "lodestone/checkpoint.hpp"
#include "lodestone/result.hpp"
#include "lodestone/solver.hpp"
#include "state/duration.hpp"

namespace lodestone::cli {

namespace {

std::string closing_table(const SolveResult& r) {
  std::string out = fmt::format("{} pair(s) by {} with {}: {} converged, {} matvecs, {} iterations, {:.2f} s on {} rank(s)\n",
                                r.pairs(), r.selection, r.method, r.converged, r.matvecs, r.iterations,
                                r.elapsed_seconds, r.ranks);
  out += fmt::format("tolerance {:.1e} x ||A||_est {:.6g} (sqrt(||A||_1 ||A||_inf))\n", r.tolerance, r.norm_estimate);
  out += fmt::format("{:>4}  {:>24}  {:>24}  {:>11}  {}\n", "pair", "eigenvalue (real)", "imaginary", "residual", "status");
  for (std::int64_t j = 0; j < r.pairs(); ++j) {
    out += fmt::format("{:>4}  {:>24.16g}  {:>24.16g}  {:>11.3e}  {}\n", j + 1, r.eigenvalues[j], r.eigenvalues_imag[j],
                       r.residual_norms[j], j < r.converged ? "converged" : "not converged");
  }
  return out;
}

}  // namespace

Command make_solve_command(CLI::App& root) {
  struct Args {
    std::string matrix;
    std::string out;
    std::string group = "/matrix";
    SolveOptions solve;
    double shift = 0;
    bool quiet = false;
    std::string every, budget;  // durations, parsed in run
  };
  auto args = std::make_shared<Args>();
  CLI::App* app = root.add_subcommand("solve", "Find K wanted eigenpairs of a matrix file, with residuals");
  app->add_option("matrix", args->matrix, "matrix file (HDF5, Lodestone layout)")->required();
  app->add_option("--pairs,-k", args->solve.pairs, "number of eigenpairs K")->required()->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 20));
  app->add_option("--out,-o", args->out, "results file to write (HDF5, written atomically)")->required();
  app->add_option("--select", args->solve.selection, "which pairs: magnitude (largest |lambda|), largest, smallest (symmetric only)")
      ->check(CLI::IsMember({"magnitude", "largest", "smallest"}))
      ->capture_default_str();
  const std::vector<std::string> methods = method_choices();  // "auto" first
  app->add_option("--method", args->solve.method,
                  fmt::format("auto (chebyshev if symmetric, else krylov) | {}",
                              fmt::join(methods.begin() + 1, methods.end(), " | ")))
      ->check(CLI::IsMember(methods))
      ->capture_default_str();
  app->add_option("--tol", args->solve.tolerance, "converged when ||Av - lambda v|| <= tol * ||A||_est")
      ->check(CLI::Range(1e-16, 0.5))
      ->capture_default_str();
  app->add_option("--max-matvecs", args->solve.max_matvecs, "budget of matrix-vector products (0: none); exit 4 when it runs out")
      ->check(CLI::Range(std::int64_t{0}, std::numeric_limits<std::int64_t>::max()))
      ->capture_default_str();
  app->add_option("--seed", args->solve.seed, "seed of the start vectors (same seed, same answer on any rank count)")->capture_default_str();
  app->add_option("--group", args->group, "HDF5 group of the matrix")->check(group_path())->capture_default_str();
  CLI::Option* shift = app->add_option("--shift", args->shift, "power, block and krylov: iterate with A - shift*I (krylov: wants the eigenvalues farthest from it)");
  app->add_option("--block-size", args->solve.block_size, "block and chebyshev: vectors per block (default K plus a few; chebyshev needs more than K); krylov: basis size (default max(2K+1, K+16))")
      ->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 20));
  app->add_option("--checkpoint", args->solve.checkpoint.path,
                  "checkpoint file: written every --checkpoint-every and when stopped early (keeps FILE.previous)");
  app->add_option("--checkpoint-every", args->every, "time between checkpoints, e.g. 90s, 10m, 1h30m, HH:MM:SS "
                                                      "(default 10m, or 5% of --time-budget if shorter)");
  app->add_flag("--resume", args->solve.checkpoint.resume,
                "continue from --checkpoint FILE if it exists (start afresh if not)");
  app->add_option("--time-budget", args->budget,
                  "stop with a checkpoint (exit 3) before this much time has passed since start, e.g. 11h50m");
  app->add_flag("--quiet,-q", args->quiet, "no progress lines and no closing table");
  app->footer(
      "Exit status: 0 all K pairs converged, 1 input or runtime error, 2 usage error,\n"
      "3 stopped early by SIGTERM/SIGINT/SIGUSR1/SIGUSR2 or --time-budget (resume with --resume),\n"
      "4 fewer than K pairs converged: the matvec budget ran out, power met eigenvalues one vector\n"
      "  cannot separate (the message names them), or residuals checked at the end missed the\n"
      "  tolerance (the results file holds every pair with its residual).\n"
      "PETSc options (e.g. -log_view) go after a lone --petsc.\n\n"
      "Examples:\n"
      "  lodestone solve plate.h5 --pairs 8 --select largest --out modes.h5\n"
      "  mpirun -n 4 lodestone solve chain.h5 --pairs 4 --method block --out chain-modes.h5");
  return {app, [args, shift](MPI_Comm comm) -> Status {
            const double started = MPI_Wtime();  // --time-budget counts from here
            CheckpointPlan& plan = args->solve.checkpoint;
            plan.clock_start = started;
            // A stop signal during the load then stops the solve at its first boundary.
            if (!plan.path.empty()) catch_stop_signals();
            if (!args->every.empty()) {
              auto d = state::parse_duration(args->every, "--checkpoint-every");
              if (!d) return d.status();
              plan.every_seconds = *d;
            }
            if (!args->budget.empty()) {
              auto d = state::parse_duration(args->budget, "--time-budget");
              if (!d) return d.status();
              plan.time_budget_seconds = *d;
            }
            LODESTONE_TRY(check_checkpoint_plan(plan));
            plan.inputs = {args->matrix};
            if (!args->out.empty()) plan.inputs.push_back(args->out);
            // The results must not replace the matrix or either checkpoint generation.
            std::vector<std::string> out_inputs = {args->matrix};
            if (!plan.path.empty()) out_inputs.insert(out_inputs.end(), {plan.path, previous_checkpoint_path(plan.path)});
            // Refuse an output that cannot be written before any work is done
            // (nothing is created here: the results are written atomically later).
            if (!args->out.empty()) {
              auto writable = io::reserve_temporary(comm, args->out, out_inputs, "output");
              if (!writable) return writable.status();
            }
            LoadOptions load;
            load.group = args->group;
            auto m = Matrix::load(comm, args->matrix, load);
            if (!m) return m.status();
            SolveOptions o = args->solve;
            o.has_shift = shift->count() > 0;
            o.shift = args->shift;
            if (args->quiet) o.progress_seconds = 0;
            // --quiet keeps the warnings (a damaged checkpoint, say) and drops the rest.
            o.note = [quiet = args->quiet](const std::string& s) {
              if (!quiet || s.rfind("warning:", 0) == 0) std::fprintf(stderr, "%s\n", s.c_str());
            };
            auto r = solve(*m, o);
            if (!r) return r.status();
            if (!args->out.empty()) LODESTONE_TRY(write_result(comm, args->out, *r, out_inputs));
            if (!args->quiet) print_once(comm, closing_table(*r));
            if (r->converged < o.pairs) {
              const std::string kept = args->out.empty() ? "" : "; " + args->out + " holds them";
              if (!r->stall_reason.empty())
                return Status::budget(fmt::format("{} of {} pairs converged; {}{}", r->converged, o.pairs,
                                                  r->stall_reason, kept));
              if (o.max_matvecs > 0 && r->matvecs >= o.max_matvecs)
                return Status::budget(fmt::format("the matvec budget ({}) ran out with {} of {} pairs converged{}",
                                                  o.max_matvecs, r->converged, o.pairs, kept));
              // The method's own test accepted every pair, but the residuals computed
              // afresh at the end (one product with the matrix) are above the tolerance.
              return Status::budget(fmt::format(
                  "{} of {} pairs converged: the method accepted the others, but their residuals checked at the end "
                  "are above the tolerance (try a looser --tol or another --method){}",
                  r->converged, o.pairs, kept));
            }
            return Status::ok();
          }};
}

}  // namespace lodestone::cli
