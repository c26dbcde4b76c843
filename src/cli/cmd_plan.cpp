// `lodestone plan MATRIX.h5 ...`: size a run for a cluster and write its batch script.
#include <fmt/format.h>
#include <sys/stat.h>

#include <cstdio>
#include <filesystem>

#include "cli/command.hpp"
#include "io/atomic_output.hpp"
#include "lodestone/plan.hpp"
#include "plan/units.hpp"
#include "support/collective.hpp"

namespace lodestone::cli {
namespace {

// Writes `text` to `path` atomically, executable, never over the matrix.
Status write_script(MPI_Comm comm, const std::string& path, const std::string& text, const std::string& matrix) {
  auto out = io::AtomicOutput::begin(comm, path, {matrix});
  if (!out) return out.status();
  Status s;
  if (comm_rank(comm) == 0) {
    std::FILE* f = std::fopen(out->temp_path().c_str(), "wb");
    if (!f) s = Status::input(fmt::format("{}: cannot write", path));
    else {
      const bool wrote = std::fwrite(text.data(), 1, text.size(), f) == text.size();
      const bool closed = std::fclose(f) == 0;
      if (!wrote || !closed) s = Status::input(fmt::format("{}: could not finish writing (disk full?)", path));
      else if (::chmod(out->temp_path().c_str(), 0755) != 0) s = Status::input(fmt::format("{}: cannot make it executable", path));
    }
  }
  LODESTONE_TRY(agree(comm, s));
  return out->commit();
}

std::string stem(const std::string& path) {
  std::string s = std::filesystem::path(path).stem().string();
  return s.empty() ? std::string("lodestone") : s;
}

}  // namespace

Command make_plan_command(CLI::App& root) {
  struct Args {
    PlanRequest req;
    JobOptions job;
    std::string scheduler, node_memory, max_walltime, out, result, checkpoint;
  };
  auto a = std::make_shared<Args>();
  CLI::App* app = root.add_subcommand(
      "plan", "Size a run (ranks, nodes, memory, time, chained jobs) and write its batch script");
  app->add_option("matrix", a->req.matrix_path, "Lodestone HDF5 matrix file (only its metadata and row offsets are read)")
      ->required();
  app->add_option("--pairs", a->req.pairs, "eigenpairs wanted (K)")->required()->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 20));
  app->add_option("--scheduler", a->scheduler, "slurm | pbs | local")->required()->check(CLI::IsMember({"slurm", "pbs", "local"}));
  app->add_option("--cores-per-node", a->req.cores_per_node, "cores of one node")->required()->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 20));
  app->add_option("--node-memory", a->node_memory, "memory of one node, e.g. 256G or 512M")->required();
  app->add_option("--max-walltime", a->max_walltime, "longest job the queue allows: HH:MM:SS, D-HH:MM:SS, 90m, 12h");
  app->add_option("--nodes", a->req.nodes, "use exactly this many nodes (default: the planner chooses)")
      ->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 20));
  app->add_option("--max-nodes", a->req.max_nodes, "most nodes the planner may propose")
      ->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 20))->capture_default_str();
  app->add_option("--ranks-per-node", a->req.ranks_per_node, "MPI ranks per node (default: one per core)")
      ->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 20));
  app->add_option("--method", a->req.method, "auto | power | block | chebyshev | krylov, as for solve")->capture_default_str();
  app->add_option("--block-size", a->req.block_size, "block width, as for solve (the model assumes it and the script passes it on; default: K plus a few)")
      ->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 20));
  app->add_option("--ghost-rows", a->req.ghost_rows,
                  "ghost rows per rank, if known (default: an upper bound; column indices are not read)")
      ->check(CLI::Range(std::int64_t{1}, std::int64_t{1} << 50));
  app->add_option("--group", a->req.group, "HDF5 group of the matrix")->check(group_path())->capture_default_str();
  app->add_option("--select", a->req.solve.selection, "passed to the script's solve: magnitude | largest | smallest")
      ->check(CLI::IsMember({"magnitude", "largest", "smallest"}));
  app->add_option("--tol", a->req.solve.tolerance, "passed to the script's solve")->check(CLI::Range(1e-16, 0.5));
  CLI::Option* seed = app->add_option("--seed", a->req.solve.seed, "passed to the script's solve");
  CLI::Option* shift = app->add_option("--shift", a->req.solve.shift, "passed to the script's solve (power, block, krylov)");
  app->add_option("--calibration", a->req.calibration_path, "JSON file of measured speeds (lodestone calibrate)");
  app->add_option("--out", a->out, "write the batch script here");
  app->add_option("--job-name", a->job.job_name, "job name (letters, digits, . _ -)")->capture_default_str();
  app->add_option("--account", a->job.account, "account to charge (Slurm --account, PBS -A)");
  app->add_option("--partition", a->job.partition, "partition or queue (Slurm --partition, PBS -q)");
  app->add_option("--result", a->result, "results file the script's solve writes (default: MATRIX-NAME.result.h5)");
  app->add_option("--checkpoint", a->checkpoint, "checkpoint file (default: MATRIX-NAME.checkpoint.h5)");
  app->add_option("--lodestone", a->job.lodestone, "the lodestone command the script runs")->capture_default_str();
  app->footer(
      "Sizes take K, M, G, T (powers of 1024). The summary explains every number; with --out the\n"
      "same summary heads the script. Exit status: 0 planned, 1 unreadable matrix or the run does\n"
      "not fit, 2 malformed options, or a matrix, --result, --checkpoint (or its FILE.previous)\n"
      "and --out that are not all different files.\n\n"
      "Examples:\n"
      "  lodestone plan bridge.h5 --pairs 6 --scheduler slurm --cores-per-node 64 --node-memory 256G \\\n"
      "      --max-walltime 12:00:00 --account structures --out bridge.slurm\n"
      "  lodestone plan bridge.h5 --pairs 6 --scheduler local --cores-per-node 8 --node-memory 32G");
  return {app, [a, seed, shift](MPI_Comm comm) -> Status {
            PlanRequest req = a->req;
            req.solve.has_seed = seed->count() > 0;
            req.solve.has_shift = shift->count() > 0;
            req.scheduler = a->scheduler == "pbs" ? Scheduler::pbs : a->scheduler == "local" ? Scheduler::local : Scheduler::slurm;
            auto mem = plan::parse_size(a->node_memory, "--node-memory");
            if (!mem) return mem.status();
            req.node_memory = *mem;
            if (!a->max_walltime.empty()) {
              auto wt = plan::parse_duration(a->max_walltime, "--max-walltime");
              if (!wt) return wt.status();
              req.max_walltime = *wt;
            }
            JobOptions job = a->job;
            job.script_path = a->out;
            job.result_path = a->result.empty() ? stem(req.matrix_path) + ".result.h5" : a->result;
            job.checkpoint_path = a->checkpoint.empty() ? stem(req.matrix_path) + ".checkpoint.h5" : a->checkpoint;
            // Refuse a bad name or path before the matrix is read.
            if (!a->out.empty()) {
              LODESTONE_TRY(check_script_name("--job-name", job.job_name));
              LODESTONE_TRY(check_script_path("--out", a->out));
            }
            // Files that would overwrite each other, refused before anything is read or written.
            // Every rank looks at the same paths; they agree before going on.
            LODESTONE_TRY(agree(comm, check_job_paths(req.matrix_path, job)));
            auto p = make_plan(comm, req);
            if (!p) return p.status();
            print_once(comm, describe_plan(*p));
            if (!p->fits) return Status::input("the run does not fit as asked (see the warnings above)");
            if (a->out.empty()) return Status::ok();
            auto text = job_script(*p, job);
            if (!text) return text.status();
            LODESTONE_TRY(write_script(comm, a->out, *text, req.matrix_path));
            print_once(comm, fmt::format("Wrote {} ({} script; submit it from the directory the paths are relative to)\n",
                                         a->out, scheduler_name(req.scheduler)));
            return Status::ok();
          }};
}

}  // namespace lodestone::cli
