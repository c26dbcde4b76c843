// describe_plan: the sizing summary, in lines a person can check by hand.
#include <fmt/format.h>
#include <fmt/ranges.h>

#include "lodestone/plan.hpp"
#include "plan/solve_choices.hpp"
#include "plan/units.hpp"
#include "support/format.hpp"

namespace lodestone {
namespace {

std::string seconds_text(double s) {
  if (s < 1) return fmt::format("{:.1f} ms", s * 1e3);
  return human_seconds(s);
}

std::string range(std::int64_t lo, std::int64_t hi) {
  return lo == hi ? fmt::format("{}", lo) : fmt::format("{} to {}", lo, hi);
}

}  // namespace

std::string describe_plan(const Plan& p) {
  std::string o;
  auto line = [&](std::string_view label, const std::string& text) { o += fmt::format("  {:<22}{}\n", label, text); };
  const MemoryBreakdown& m = p.memory;
  o += fmt::format("Plan for {} (group {})\n", p.matrix_path, p.group);
  line("matrix", fmt::format("{} x {}, {} {}, {}", p.rows, p.rows, p.nnz, p.dense ? "entries (dense)" : "nonzeros (CSR)",
                             p.symmetric ? "symmetric" : "not symmetric"));
  std::string method = fmt::format("{}{}, {} pair{}", p.method, p.method_reason.empty() ? "" : " (" + p.method_reason + ")",
                                   p.pairs, p.pairs == 1 ? "" : "s");
  if (p.method == "krylov") method += ", one vector per product";
  else if (p.method != "power") method += fmt::format(", block of {} vectors", p.block);
  if (p.filter_degree > 0) method += fmt::format(", filter degree {}", p.filter_degree);
  line("method", method);
  const auto passed = plan::passed_solve_options(p);
  if (!passed.empty()) line("solve options", fmt::format("{} (passed to the script's solve)", fmt::join(passed, " ")));
  line("scheduler", scheduler_name(p.scheduler));
  line("allocation", fmt::format("{} node{} x {} rank{} = {} rank{} ({} cores, {} per node)", p.nodes,
                                 p.nodes == 1 ? "" : "s", p.ranks_per_node, p.ranks_per_node == 1 ? "" : "s", p.ranks,
                                 p.ranks == 1 ? "" : "s", p.cores_per_node, human_bytes(static_cast<double>(p.node_memory))));
  line("sized by", fmt::format("{}: {}", p.bound, p.bound_reason));
  line("heaviest rank", fmt::format("{} rows, {} nonzeros (most rows on any rank: {})", p.heaviest_rows, p.heaviest_nnz,
                                    p.max_rows));

  o += "Memory per rank (the heaviest rank)\n";
  line("matrix rows", human_bytes(m.matrix));
  line("block vectors", human_bytes(m.vectors));
  line("locked vectors", fmt::format("{} ({} vectors)", human_bytes(m.locked), p.pairs));
  line("halo (ghost values)", p.ranks > 1 ? fmt::format("{} (at most {} ghost rows{})", human_bytes(m.halo), p.ghosts,
                                                          p.dense ? "" : p.ghosts_given ? "; from --ghost-rows" : "; an upper bound, column indices are not read")
                                          : human_bytes(m.halo) + " (one rank: none)");
  line("read buffers", fmt::format("{} (while loading)", human_bytes(m.read_buffers)));
  const char* check = !p.symmetric ? "; not symmetric, none"
                      : p.dense    ? ": in place, a piece of another rank's columns at a time"
                                   : ": transpose and difference";
  line("symmetry check", fmt::format("{} (while loading{})", human_bytes(m.symmetry_check), check));
  line("library overhead", fmt::format("{} (MPI, PETSc, HDF5)", human_bytes(m.library)));
  line("peak", fmt::format("{} (matrix + library + the larger of solving {} and loading {})", human_bytes(m.peak()),
                           human_bytes(m.solving()), human_bytes(m.loading())));
  line("safety margin", human_bytes(m.margin));
  line("total", human_bytes(m.total()));
  line("per node", fmt::format("{} for {} rank{}, of {} usable", human_bytes(p.node_memory_used), p.ranks_per_node,
                               p.ranks_per_node == 1 ? "" : "s", human_bytes(p.node_memory_usable)));

  o += "Time\n";
  line("speeds from", p.speed_source);
  line("convergence from", p.convergence_source);
  line("matvecs", fmt::format("{} ({} per iteration)", range(p.matvecs_low, p.matvecs_high), p.matvecs_per_iteration));
  line("iterations", range(p.iterations_low, p.iterations_high));
  line("per iteration", fmt::format("{} (matrix passes {}, halo {}, reductions {}, dense work {})",
                                    seconds_text(p.iteration.total()), seconds_text(p.iteration.matrix_passes),
                                    seconds_text(p.iteration.halo), seconds_text(p.iteration.reductions),
                                    seconds_text(p.iteration.dense)));
  line("loading the matrix", fmt::format("{} per job", seconds_text(p.load_seconds)));
  line("solve", fmt::format("{} to {}", seconds_text(p.solve_seconds_low), seconds_text(p.solve_seconds_high)));
  line("walltime, all jobs", fmt::format("{} to {}", seconds_text(p.total_seconds_low), seconds_text(p.total_seconds_high)));

  o += "Jobs\n";
  line("walltime per job", p.job_walltime > 0 ? plan::format_hms(p.job_walltime) : std::string("none (runs to the end)"));
  line("chained jobs", range(p.jobs_low, p.jobs_high));
  line("stop margin", p.signal_slack > 0
                          ? fmt::format("{} s before the limit, and up to {} s more (Slurm may warn early)",
                                        p.signal_margin, p.signal_slack)
                          : fmt::format("{} s before the limit", p.signal_margin));
  line("checkpoint", fmt::format("every {} s, {} each, ~{} to write", p.checkpoint_interval,
                                 human_bytes(p.checkpoint_bytes), seconds_text(p.checkpoint_seconds)));
  if (!p.warnings.empty()) {
    o += "Warnings\n";
    for (const auto& w : p.warnings) o += fmt::format("  - {}\n", w);
  }
  return o;
}

}  // namespace lodestone
