// make_plan: from the matrix file and the cluster to ranks, nodes, memory, time and jobs.
#include <fmt/format.h>
#include <petscsys.h>

#include <algorithm>
#include <cmath>
#include <fstream>
#include <sstream>

#include "io/h5.hpp"
#include "io/layout.hpp"
#include "io/matrix_reader.hpp"
#include "lodestone/plan.hpp"
#include "methods/method.hpp"
#include "plan/calibration.hpp"
#include "plan/matrix_facts.hpp"
#include "plan/model.hpp"
#include "plan/partition_scan.hpp"
#include "support/collective.hpp"

namespace lodestone {

const char* scheduler_name(Scheduler s) {
  switch (s) {
    case Scheduler::slurm: return "slurm";
    case Scheduler::pbs: return "pbs";
    case Scheduler::local: return "local";
  }
  return "?";
}

namespace {

using plan::MachineModel;
using plan::MethodShape;
using plan::PartitionStats;
using plan::MatrixFacts;

Result<std::string> read_text_file(MPI_Comm comm, const std::string& path) {
  Status s;
  std::string text;
  if (comm_rank(comm) == 0) {
    std::ifstream in(path);
    if (!in) s = Status::input(fmt::format("{}: cannot open the calibration file", path));
    else {
      std::ostringstream ss;
      ss << in.rdbuf();
      text = ss.str();
      if (text.size() > (1u << 20)) s = Status::input(fmt::format("{}: too large for a calibration file", path));
    }
  }
  LODESTONE_TRY(agree(comm, s));
  int len = static_cast<int>(text.size());
  MPI_Bcast(&len, 1, MPI_INT, 0, comm);
  text.resize(static_cast<std::size_t>(len));
  MPI_Bcast(text.data(), len, MPI_CHAR, 0, comm);
  return text;
}

Status check_request(const PlanRequest& r) {
  if (r.pairs < 1) return Status::usage("--pairs must be at least 1");
  if (r.cores_per_node < 1) return Status::usage("--cores-per-node must be at least 1");
  if (r.node_memory < 1) return Status::usage("--node-memory must be more than zero");
  if (r.ranks_per_node < 0 || r.ranks_per_node > r.cores_per_node)
    return Status::usage(fmt::format("--ranks-per-node must be between 1 and --cores-per-node ({})", r.cores_per_node));
  if (r.nodes < 0) return Status::usage("--nodes must be at least 1");
  if (r.max_nodes < 1) return Status::usage("--max-nodes must be at least 1");
  if (r.scheduler == Scheduler::local && r.nodes > 1)
    return Status::usage("--scheduler local runs on one machine: leave out --nodes or give --nodes 1");
  if (r.max_walltime > 0 && r.max_walltime < 60 && r.scheduler != Scheduler::local)
    return Status::usage("--max-walltime must be at least one minute (schedulers count whole minutes)");
  if (r.method != "auto" && !methods::find_method(r.method))
    return Status::usage(fmt::format("--method '{}': expected auto, {}", r.method, methods::method_names()));
  if (r.block_size < 0) return Status::usage("--block-size must be at least 1");
  if (!r.solve.selection.empty()) LODESTONE_TRY(methods::parse_selection(r.solve.selection).status());
  if (r.solve.tolerance != 0 && !(r.solve.tolerance > 0 && r.solve.tolerance < 1))
    return Status::usage("--tol must be between 0 and 1");
  if (r.solve.has_shift && !std::isfinite(r.solve.shift)) return Status::usage("--shift must be a finite number");
  if (r.ghost_rows < 0) return Status::usage("--ghost-rows must be at least 1");
  return Status::ok();
}

// Everything the model says about one allocation.
struct Candidate {
  std::int64_t nodes = 0, per_node = 0;
  PartitionStats part;
  std::int64_t ghosts = 0;
  MemoryBreakdown memory;
  IterationTime iteration;
  bool fits_memory = false;
  // Filled by finish():
  Plan plan;
};

std::int64_t ceil_div(double a, double b) { return static_cast<std::int64_t>(std::ceil(a / b - 1e-12)); }

// Times, jobs and checkpoints for one candidate allocation.
void finish(Plan& p, const PlanRequest& r, const MachineModel& m, const MethodShape& s, const MatrixFacts& f,
            const Candidate& c) {
  p.nodes = c.nodes;
  p.ranks_per_node = c.per_node;
  p.ranks = c.nodes * c.per_node;
  p.heaviest_rows = c.part.heaviest_rows;
  p.heaviest_nnz = c.part.heaviest_nnz;
  p.max_rows = c.part.max_rows;
  p.ghosts = c.ghosts;
  p.memory = c.memory;
  p.iteration = c.iteration;
  p.node_memory_used = static_cast<double>(c.per_node) * c.memory.total();
  p.node_memory_usable = static_cast<double>(r.node_memory) * (1.0 - m.node_reserve_fraction);

  const double per_pair_low = m.matvecs_per_pair_low > 0 ? m.matvecs_per_pair_low : s.default_matvecs_per_pair_low;
  const double per_pair_high = m.matvecs_per_pair_high > 0 ? m.matvecs_per_pair_high : s.default_matvecs_per_pair_high;
  p.matvecs_per_iteration = s.matvecs_per_iteration();
  const double mpi = static_cast<double>(p.matvecs_per_iteration);
  p.iterations_low = std::max<std::int64_t>(1, ceil_div(per_pair_low * static_cast<double>(s.pairs), mpi));
  p.iterations_high = std::max<std::int64_t>(1, ceil_div(per_pair_high * static_cast<double>(s.pairs), mpi));
  p.matvecs_low = p.iterations_low * p.matvecs_per_iteration + s.startup_matvecs;
  p.matvecs_high = p.iterations_high * p.matvecs_per_iteration + s.startup_matvecs;

  const double t_iter = c.iteration.total();
  // One single-vector pass costs about t_iter / (passes * block) of the matrix pass time.
  const double t_startup = static_cast<double>(s.startup_matvecs) *
                           (c.iteration.matrix_passes + c.iteration.halo) /
                           static_cast<double>(std::max<std::int64_t>(1, s.passes_per_iteration * s.block)) * 1.0;
  p.load_seconds = plan::load_time(m, f.layout == Layout::dense, f.rows, f.nnz);
  p.checkpoint_bytes = 8.0 * static_cast<double>(s.checkpoint_vectors) * static_cast<double>(f.rows) + 1024.0 * 1024.0;
  p.checkpoint_seconds = p.checkpoint_bytes / m.checkpoint_bandwidth;
  p.signal_margin = std::max<std::int64_t>(60, static_cast<std::int64_t>(std::ceil(30.0 + t_iter + 2.0 * p.checkpoint_seconds)));

  const double compute_low = static_cast<double>(p.iterations_low) * t_iter + t_startup;
  const double compute_high = static_cast<double>(p.iterations_high) * t_iter + t_startup;
  // Slurm may send the --signal warning up to 60 s before the time asked for (sbatch
  // documentation, --signal): a Slurm job may lose that minute too.
  p.signal_slack = r.scheduler == Scheduler::slurm ? 60 : 0;
  double usable = 0;
  if (r.max_walltime > 0) {
    p.job_walltime = r.scheduler == Scheduler::local ? r.max_walltime : (r.max_walltime / 60) * 60;
    usable = static_cast<double>(p.job_walltime) - p.load_seconds - static_cast<double>(p.signal_margin) -
             static_cast<double>(p.signal_slack);
    // A quarter of a job, kept between 5 and 30 minutes, but at most half a job.
    p.checkpoint_interval = static_cast<std::int64_t>(std::min(std::clamp(usable / 4.0, 300.0, 1800.0), usable / 2.0));
  } else {
    p.checkpoint_interval = 1800;
  }
  p.checkpoint_interval = std::max<std::int64_t>({p.checkpoint_interval, static_cast<std::int64_t>(std::ceil(t_iter)), 1});
  auto solve_seconds = [&](double compute) {
    return compute + std::floor(compute / static_cast<double>(p.checkpoint_interval)) * p.checkpoint_seconds;
  };
  p.solve_seconds_low = solve_seconds(compute_low);
  p.solve_seconds_high = solve_seconds(compute_high);
  if (r.max_walltime > 0) {
    if (usable < t_iter + p.checkpoint_seconds || usable <= 0) {
      p.fits = false;
      p.warnings.push_back(fmt::format(
          "a job of {} s cannot make progress: loading the matrix (~{:.0f} s), the stop margin ({} s{}) and one "
          "iteration with its checkpoint (~{:.1f} s) do not fit; raise --max-walltime",
          p.job_walltime, p.load_seconds, p.signal_margin,
          p.signal_slack > 0 ? fmt::format(", and {} s by which Slurm may warn early", p.signal_slack) : "",
          t_iter + p.checkpoint_seconds));
      usable = std::max(usable, 1.0);
      p.checkpoint_interval = std::max<std::int64_t>(p.checkpoint_interval, 1);
    }
    p.jobs_low = std::max<std::int64_t>(1, ceil_div(p.solve_seconds_low, usable));
    p.jobs_high = std::max<std::int64_t>(1, ceil_div(p.solve_seconds_high, usable));
  } else {
    p.jobs_low = p.jobs_high = 1;
    if (r.scheduler != Scheduler::local) {
      // Ask for the high estimate with a quarter more, in whole minutes, at least ten.
      const double want = p.load_seconds + 1.25 * p.solve_seconds_high +
                           static_cast<double>(p.signal_margin + p.signal_slack);
      p.job_walltime = std::max<std::int64_t>(600, 60 * ceil_div(want, 60.0));
    }
  }
  // Each job loads the matrix; each stop writes one more checkpoint.
  p.total_seconds_low = p.solve_seconds_low + static_cast<double>(p.jobs_low) * p.load_seconds +
                        static_cast<double>(p.jobs_low - 1) * p.checkpoint_seconds;
  p.total_seconds_high = p.solve_seconds_high + static_cast<double>(p.jobs_high) * p.load_seconds +
                         static_cast<double>(p.jobs_high - 1) * p.checkpoint_seconds;
}

std::vector<std::int64_t> node_counts(const PlanRequest& r) {
  if (r.nodes > 0) return {r.nodes};
  if (r.scheduler == Scheduler::local) return {1};
  std::vector<std::int64_t> out;
  for (std::int64_t base = 1; base <= r.max_nodes; base *= 2) {
    out.push_back(base);
    if (base >= 2 && base + base / 2 <= r.max_nodes) out.push_back(base + base / 2);
  }
  if (out.back() != r.max_nodes) out.push_back(r.max_nodes);
  std::sort(out.begin(), out.end());
  out.erase(std::unique(out.begin(), out.end()), out.end());
  return out;
}

}  // namespace

Result<Plan> make_plan(MPI_Comm comm, const PlanRequest& r) {
  LODESTONE_TRY(check_request(r));
  MachineModel m;
  m.index_bytes = static_cast<double>(sizeof(PetscInt));
  if (!r.calibration_path.empty()) {
    auto text = read_text_file(comm, r.calibration_path);
    if (!text) return text.status();
    LODESTONE_TRY(plan::apply_calibration(r.calibration_path, *text, m));
  }
  // One open and one header read: the facts now, row_offsets later from the same open group.
  auto opened = plan::open_matrix(comm, r.matrix_path, r.group);
  if (!opened) return opened.status();
  const MatrixFacts& f = opened->facts;
  const bool dense = f.layout == Layout::dense;
  m.file_index_bytes = f.file_index_bytes;

  Plan p;
  p.matrix_path = r.matrix_path;
  p.group = r.group;
  p.rows = f.rows;
  p.nnz = f.nnz;
  p.symmetric = f.symmetric;
  p.dense = dense;
  p.scheduler = r.scheduler;
  p.cores_per_node = r.cores_per_node;
  p.node_memory = r.node_memory;
  p.speed_source = m.speed_source;
  p.convergence_source = m.convergence_source;
  p.pairs = r.pairs;
  p.ghosts_given = r.ghost_rows > 0 && !dense;

  std::string method = r.method;
  if (method == "auto") {
    method = f.symmetric ? "chebyshev" : "krylov";
    p.method_reason = f.symmetric ? "auto: the matrix is symmetric" : "auto: the matrix is not symmetric";
  }
  auto parsed = methods::parse_selection(r.solve.selection.empty() ? "magnitude" : r.solve.selection);
  if (!parsed) return parsed.status();
  const methods::Selection selection = *parsed;
  LODESTONE_TRY(methods::check_fit(*methods::find_method(method),
                                    {f.symmetric, selection, r.pairs, r.block_size, r.solve.has_shift}));
  p.block_given = r.block_size;
  p.solve = r.solve;
  const MethodShape s = plan::method_shape(method, r.pairs, r.block_size);
  p.method = method;
  p.block = s.block;
  p.filter_degree = method == "chebyshev" ? s.passes_per_iteration : 0;
  if (s.block >= f.rows)
    return Status::usage(fmt::format("--pairs {} is too large for a {}-row matrix: the method works on {} vectors, "
                                     "which must be fewer than the rows", r.pairs, f.rows, s.block));

  // Candidate allocations, all sized from one pass over row_offsets.
  const std::int64_t per_node_wanted = r.ranks_per_node > 0 ? r.ranks_per_node : r.cores_per_node;
  // Ranks per node to try: all cores first; when memory is short, half as many, and so on
  // (unless --ranks-per-node fixed it).
  std::vector<std::int64_t> per_node_options{per_node_wanted};
  if (r.ranks_per_node == 0)
    for (std::int64_t q = per_node_wanted / 2; q >= 1; q /= 2) per_node_options.push_back(q);
  std::vector<Candidate> all;
  std::vector<int> parts;
  for (std::int64_t nodes : node_counts(r)) {
    for (std::int64_t per_node : per_node_options) {
      Candidate c;
      c.nodes = nodes;
      c.per_node = per_node;
      if (nodes == 1) c.per_node = std::min(per_node, f.rows);  // a tiny matrix gets fewer ranks
      const std::int64_t ranks = nodes * c.per_node;
      if (ranks > f.rows || ranks > (std::int64_t{1} << 30)) continue;  // ranks without rows help no one
      all.push_back(c);
      parts.push_back(static_cast<int>(ranks));
    }
  }
  if (all.empty())
    return Status::usage(fmt::format("--nodes {} x {} ranks per node gives more ranks than the matrix has rows ({})",
                                     r.nodes, per_node_wanted, f.rows));
  std::vector<PartitionStats> stats;
  if (dense) {
    for (int q : parts) stats.push_back(plan::dense_partition(f.rows, q));
  } else {
    auto scanned = plan::scan_partitions(comm, *opened, parts);
    if (!scanned) return scanned.status();
    stats = std::move(*scanned);
  }
  const double usable_node = static_cast<double>(r.node_memory) * (1.0 - m.node_reserve_fraction);
  for (std::size_t i = 0; i < all.size(); ++i) {
    Candidate& c = all[i];
    c.part = stats[i];
    c.ghosts = plan::ghost_estimate(dense, f.rows, c.part);
    if (r.ghost_rows > 0 && !dense) c.ghosts = std::min(c.ghosts, r.ghost_rows);
    c.memory = plan::rank_memory(m, s, dense, f.symmetric, f.rows, c.part, c.ghosts);
    c.iteration = plan::iteration_time(m, s, dense, f.rows, c.part, c.ghosts);
    c.fits_memory = static_cast<double>(c.per_node) * c.memory.total() <= usable_node;
    c.plan = p;
    finish(c.plan, r, m, s, f, c);
  }
  // Per node count: the most ranks per node that fit (or, if none fits, all cores).
  std::vector<Candidate> cands;
  for (std::size_t i = 0; i < all.size();) {
    std::size_t j = i;
    std::size_t best = i;
    bool found = false;
    for (; j < all.size() && all[j].nodes == all[i].nodes; ++j)
      if (!found && all[j].fits_memory) best = j, found = true;
    cands.push_back(all[best]);
    i = j;
  }
  const Candidate* full_below = nullptr;  // all cores on the chosen node count, when that did not fit

  // Choose: the fewest nodes that hold the matrix; more only to save chained jobs
  // while the extra nodes still pay for themselves (parallel efficiency >= 1/2).
  std::size_t chosen = cands.size();
  for (std::size_t i = 0; i < cands.size() && chosen == cands.size(); ++i)
    if (cands[i].fits_memory) chosen = i;
  Plan out;
  if (chosen == cands.size()) {
    // Nothing fits: report the largest allocation tried.
    out = cands.back().plan;
    out.fits = false;
    out.bound = r.nodes > 0 ? "given" : "memory";
    out.bound_reason =
        r.nodes > 0 ? fmt::format("--nodes {} was given", r.nodes)
                    : fmt::format("no allocation up to {} nodes holds the matrix", cands.back().nodes);
    out.warnings.insert(out.warnings.begin(),
                        fmt::format("does not fit: each node would need {:.1f} GiB ({} ranks x {:.1f} GiB) but has "
                                    "{:.1f} GiB usable; {}",
                                    out.node_memory_used / 1073741824.0, out.ranks_per_node,
                                    out.memory.total() / 1073741824.0, out.node_memory_usable / 1073741824.0,
                                    r.nodes > 0 ? "give more --nodes" : "raise --max-nodes or --node-memory"));
  } else {
    std::size_t pick = chosen;
    const Plan& base = cands[chosen].plan;
    if (r.nodes == 0 && r.max_walltime > 0 && base.jobs_high > 1) {
      const double base_cost = base.total_seconds_high * static_cast<double>(cands[chosen].nodes);
      for (std::size_t i = chosen + 1; i < cands.size(); ++i) {
        const Plan& q = cands[i].plan;
        const double efficiency = base_cost / (q.total_seconds_high * static_cast<double>(cands[i].nodes));
        if (!cands[i].fits_memory || !q.fits || efficiency < 0.5) break;
        if (q.jobs_high < cands[pick].plan.jobs_high) pick = i;
        if (q.jobs_high == 1) break;
      }
    }
    out = cands[pick].plan;
    const Candidate& c = cands[pick];
    for (const auto& x : all)
      if (x.nodes == c.nodes && x.per_node == std::min(per_node_wanted, f.rows) && !x.fits_memory) full_below = &x;
    if (r.nodes > 0) {
      out.bound = "given";
      out.bound_reason = fmt::format("--nodes {} was given; its memory holds the heaviest rank", r.nodes);
    } else if (pick != chosen) {
      out.bound = "time";
      out.bound_reason = fmt::format(
          "{} node{} would hold the matrix but need up to {} chained jobs; {} nodes cut that to {} and still use the "
          "extra nodes at least half as well",
          cands[chosen].nodes, cands[chosen].nodes == 1 ? "" : "s", base.jobs_high, c.nodes, out.jobs_high);
    } else if (chosen == 0) {
      out.bound = "memory";
      out.bound_reason = fmt::format("one node holds the matrix with {} rank{}{}", c.per_node, c.per_node == 1 ? "" : "s",
                                     c.per_node == r.cores_per_node ? ", one per core" : "");
    } else {
      const Candidate& below = cands[chosen - 1];
      out.bound = "memory";
      out.bound_reason = fmt::format("{} node{} would need {:.2f} GiB per node, over the {:.2f} GiB usable; {} is the "
                                     "fewest that fit",
                                     below.nodes, below.nodes == 1 ? "" : "s",
                                     static_cast<double>(below.per_node) * below.memory.total() / 1073741824.0,
                                     usable_node / 1073741824.0, c.nodes);
    }
  }
  if (out.fits && full_below && out.ranks_per_node < full_below->per_node) {
    out.bound_reason += fmt::format("; only {} of the {} cores per node run a rank: {} ranks per node would need "
                                    "{:.2f} GiB per node", out.ranks_per_node, r.cores_per_node, full_below->per_node,
                                    static_cast<double>(full_below->per_node) * full_below->memory.total() / 1073741824.0);
    out.warnings.push_back(fmt::format("memory per node limits the run to {} rank{} on each {}-core node; nodes "
                                       "with more memory would use every core", out.ranks_per_node,
                                       out.ranks_per_node == 1 ? "" : "s", r.cores_per_node));
  }
  if (!m.calibrated_method.empty() && m.calibrated_method != out.method && m.matvecs_per_pair_low > 0)
    out.warnings.push_back(fmt::format("the calibration observed convergence with --method {}, this plan uses {}: its "
                                       "matvecs per pair may not carry over", m.calibrated_method, out.method));
  // Warnings about the method and the partition.
  if (out.method == "power" && out.pairs > 16)
    out.warnings.push_back(fmt::format("power iteration finds the {} pairs one after another; --method block or "
                                       "chebyshev is usually far cheaper for this many", out.pairs));
  if (out.block > out.heaviest_rows && out.ranks > 1)
    out.warnings.push_back(fmt::format("the block of {} vectors is wider than the heaviest rank's {} rows: too many "
                                       "pairs for this many ranks; use fewer ranks or fewer pairs",
                                       out.block, out.heaviest_rows));
  return out;
}

}  // namespace lodestone
