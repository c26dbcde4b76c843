// Plan: sizing a solve for a cluster, and the batch script that runs it.
//
// Before a long run a user needs to know how many nodes and ranks to ask for,
// how much memory each rank will use, how long it will take and how many
// batch jobs of the allowed walltime it will span. make_plan answers from the
// matrix file itself — its metadata and, read in chunks, its row_offsets; never
// the entries — under the same nonzero-balanced partition the reader uses, so
// the memory figures are for the heaviest rank, not an average. Times come
// from a stated performance model (docs/performance-model.md): bandwidth-bound
// matrix passes, halo exchange, reductions growing with log2 of the rank count,
// with defaults that a calibration file measured on the target machine
// replaces. job_script turns a plan into a Slurm, PBS or plain mpirun script
// that runs `lodestone solve --checkpoint --resume`, forwards the scheduler's
// warning signal to the solver and requeues (or chains the next job) until the
// solve finishes. Every user value that reaches the script is validated and
// shell-quoted.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <string>
#include <vector>

#include "lodestone/status.hpp"

namespace lodestone {

enum class Scheduler { slurm, pbs, local };
const char* scheduler_name(Scheduler s);

// The solve's own options that a plan passes on to its script unchanged (they
// are solve's options of the same names); unset: the solve's default. make_plan
// refuses what solve would refuse for this matrix and method.
struct SolveChoices {
  std::string selection;        // magnitude | largest | smallest; empty: solve's default
  double tolerance = 0;         // 0: solve's default
  bool has_seed = false;
  std::uint64_t seed = 0;
  bool has_shift = false;
  double shift = 0;
};

struct PlanRequest {
  std::string matrix_path;
  std::string group = "/matrix";
  std::int64_t pairs = 1;
  std::string method = "auto";            // auto | power | block | chebyshev
  std::int64_t block_size = 0;            // 0: the model's default for the method
  Scheduler scheduler = Scheduler::slurm;
  std::int64_t cores_per_node = 0;        // required
  std::int64_t node_memory = 0;           // bytes, required
  std::int64_t ranks_per_node = 0;        // 0: one rank per core
  std::int64_t max_walltime = 0;          // seconds per job; 0: none given
  std::int64_t nodes = 0;                 // 0: the planner chooses
  std::int64_t max_nodes = 64;            // largest allocation the planner will propose
  std::string calibration_path;           // JSON written by `lodestone calibrate`; empty: defaults
  // Ghost (halo) rows per rank when the user knows them (e.g. 2 x nx for a 2-D grid split
  // in row blocks); 0: the bound min(n - rows, nonzeros of the rank), since column indices are not read.
  std::int64_t ghost_rows = 0;
  SolveChoices solve;
};

// Bytes one rank needs (the heaviest rank of the partition). Loading and solving
// do not overlap, nor do reading and the symmetry check: the peak is the matrix
// and the library plus the largest of the solve's vectors, the reader's buffers
// and the symmetry check's buffers; then the safety margin.
struct MemoryBreakdown {
  double matrix = 0;          // its rows of the matrix, as PETSc holds them
  double vectors = 0;         // the working block(s) of vectors          (while solving)
  double locked = 0;          // converged (locked) vectors               (while solving)
  double halo = 0;            // ghost values and their index map         (while solving)
  double read_buffers = 0;    // chunk buffers and per-row counts         (while loading)
  double symmetry_check = 0;  // checking a matrix declared symmetric          (while loading)
  double library = 0;         // MPI, PETSc and HDF5 themselves
  double margin = 0;          // safety margin on the peak
  double solving() const { return vectors + locked + halo; }
  // The reader's buffers are freed before the symmetry check starts.
  double loading() const { return read_buffers > symmetry_check ? read_buffers : symmetry_check; }
  double peak() const { return matrix + library + (solving() > loading() ? solving() : loading()); }
  double total() const { return peak() + margin; }
};

// Seconds for one iteration on the heaviest rank, and what it is made of.
struct IterationTime {
  double matrix_passes = 0;  // streaming the matrix and vectors through memory
  double halo = 0;           // exchanging ghost values
  double reductions = 0;     // global sums (dot products, norms)
  double dense = 0;          // orthonormalization and small projected problems
  double total() const { return matrix_passes + halo + reductions + dense; }
};

struct Plan {
  // The matrix.
  std::string matrix_path, group;
  std::int64_t rows = 0, nnz = 0;
  bool symmetric = false;
  bool dense = false;
  // The method as the model sees it.
  std::string method;                 // power | block | chebyshev (auto resolved)
  std::string method_reason;          // why auto chose it
  std::int64_t pairs = 0, block = 0, filter_degree = 0;
  std::int64_t block_given = 0;       // --block-size as given, passed to the script's solve; 0: none
  SolveChoices solve;                 // passed to the script's solve
  // The allocation.
  Scheduler scheduler = Scheduler::slurm;
  std::int64_t nodes = 0, ranks_per_node = 0, ranks = 0, cores_per_node = 0;
  std::int64_t node_memory = 0;
  std::string bound;                  // "memory", "time" or "given"
  std::string bound_reason;           // one sentence
  // The heaviest rank.
  std::int64_t heaviest_rows = 0, heaviest_nnz = 0, max_rows = 0, ghosts = 0;
  bool ghosts_given = false;          // from --ghost-rows rather than the upper bound
  MemoryBreakdown memory;
  double node_memory_used = 0;        // ranks_per_node x memory.total()
  double node_memory_usable = 0;      // node memory less the share kept for the system
  // Time.
  IterationTime iteration;
  std::int64_t matvecs_per_iteration = 0;
  std::int64_t matvecs_low = 0, matvecs_high = 0;
  std::int64_t iterations_low = 0, iterations_high = 0;
  double load_seconds = 0;
  double solve_seconds_low = 0, solve_seconds_high = 0;   // compute + checkpoints, excluding loads
  double total_seconds_low = 0, total_seconds_high = 0;   // everything, over all jobs
  std::string convergence_source;     // "defaults (...)" or the calibration file
  std::string speed_source;
  // Jobs.
  std::int64_t job_walltime = 0;      // seconds requested per job
  std::int64_t jobs_low = 1, jobs_high = 1;
  std::int64_t signal_margin = 0;     // seconds before the limit the solver is told to stop
  std::int64_t signal_slack = 0;      // seconds by which the warning may come early (Slurm: 60)
  std::int64_t checkpoint_interval = 0;
  double checkpoint_bytes = 0, checkpoint_seconds = 0;
  std::vector<std::string> warnings;
  bool fits = true;                   // false: the run cannot be placed as asked
};

// Collective over comm: sizes the run. A request that does not fit is still a
// plan (fits = false, with warnings); malformed requests are usage errors.
Result<Plan> make_plan(MPI_Comm comm, const PlanRequest& request);

// The sizing summary a person reads (several lines, ending in a newline).
std::string describe_plan(const Plan& plan);

// What the batch script needs beyond the plan.
struct JobOptions {
  std::string job_name = "lodestone";
  std::string account;           // Slurm --account / PBS -A; empty: none
  std::string partition;         // Slurm --partition / PBS -q; empty: none
  std::string script_path;       // where the script will live (PBS resubmits it)
  std::string result_path;       // solve --out
  std::string checkpoint_path;   // solve --checkpoint
  std::string lodestone = "lodestone";  // the command to run
};

// The script text, or a usage Status naming the value that was refused.
Result<std::string> job_script(const Plan& plan, const JobOptions& options);

// Refuses values no script may carry (empty, control characters, newlines) and,
// for names, anything but letters, digits and . _ - (job name: first a letter).
Status check_script_path(const std::string& what, const std::string& value);
Status check_script_name(const std::string& what, const std::string& value);
// Refuses a matrix, --result, --checkpoint (or its FILE.previous) and script that are
// not all different files: the job would overwrite one with another at run time.
Status check_job_paths(const std::string& matrix, const JobOptions& options);
// Single-quotes a value for the shell: abc -> 'abc', it's -> 'it'\''s'.
std::string shell_quote(const std::string& value);

}  // namespace lodestone
