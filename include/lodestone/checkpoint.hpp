// Checkpoint: a solve's complete state on disk, to continue it in another job.
//
// A checkpoint pairs a method's SolverState (solver_state.hpp) with the run's
// identity — the matrix it belongs to (fingerprint and size) and the options
// that must not change on resume (pairs, selection, method, tolerance, seed,
// block size, shift, passed as name -> text) — plus the history so far and the
// iteration and matvec counters. Distributed blocks are stored by global row and
// written collectively, each rank its own rows, so a checkpoint written by p
// ranks reads back on any other number of ranks.
//
// Writing is atomic and durable: the file is written under a temporary name in
// the same directory, flushed and fsynced, and only then renamed over FILE; the
// checkpoint it replaces is kept as FILE.previous. A kill at any instant leaves
// FILE (or, for one short window, only FILE.previous) naming a complete
// checkpoint; reading falls back to FILE.previous when FILE is missing or
// damaged. Reading refuses, with one message naming what differs, a checkpoint
// of another matrix, one with an incompatible option, a newer format version,
// and a damaged file. See docs/checkpoint-file.md for the layout.
#pragma once

#include <mpi.h>

#include <cstdint>
#include <map>
#include <string>
#include <vector>

#include "lodestone/result.hpp"
#include "lodestone/solver_state.hpp"
#include "lodestone/status.hpp"

namespace lodestone {

// What a checkpoint belongs to; every field must match on resume.
struct RunIdentity {
  std::uint64_t matrix_fingerprint = 0;
  std::int64_t rows = 0;
  // Options that must not change on resume, as the solver spells them
  // (e.g. "pairs" -> "5", "tolerance" -> "1e-08"); compared as text.
  std::map<std::string, std::string> options;
};

struct Checkpoint {
  RunIdentity identity;
  SolverState state;
  std::vector<HistoryRecord> history;
  std::int64_t iterations = 0;
  std::int64_t matvecs = 0;
  std::int64_t converged = 0;       // pairs locked so far
  double elapsed_seconds = 0;       // solve time spent so far, all jobs together

  // Filled in when read (write_checkpoint sets them in the file itself).
  std::int64_t format_version = 0;
  std::string written_at;           // UTC, ISO 8601
  std::int64_t written_by_ranks = 0;
  std::string read_from;            // the path actually read (FILE or FILE.previous)
  std::string note;                 // set when the previous generation was used, and why
};

// How a solve checkpoints and stops early (SolveOptions::checkpoint).
struct CheckpointPlan {
  std::string path;                  // empty: no checkpoints, no early stop
  bool resume = false;               // continue from `path` if it (or its previous generation) exists
  double every_seconds = 0;          // 0: the default cadence (10 min, or 5% of a time budget)
  double time_budget_seconds = 0;    // 0: none; otherwise stop in time, counted from clock_start
  double clock_start = -1;           // MPI_Wtime() when the job started; < 0: when the solve starts
  std::vector<std::string> inputs;   // files the checkpoint must never overwrite
};

// Local. A usage error for options that need a checkpoint path when none is
// given (solve() checks this too; a command line checks it before any file is read).
Status check_checkpoint_plan(const CheckpointPlan& plan);

// Takes the stop signals (SIGTERM, SIGINT, SIGUSR1, SIGUSR2) from now on, as a
// solve with a checkpoint does once it starts. Call it before Matrix::load when the
// solve will checkpoint: a signal that arrives while the matrix loads is then kept,
// and the solve stops with a checkpoint at its first iteration boundary (status
// stopped) instead of the process dying by the signal.
void catch_stop_signals();

// The checkpoint layout version this build writes and the newest it reads.
inline constexpr std::int64_t kCheckpointFormatVersion = 1;

// The name the previous generation of `path` is kept under.
std::string previous_checkpoint_path(const std::string& path);

// Collective. True if `path` or its previous generation exists (same on every rank).
bool checkpoint_exists(MPI_Comm comm, const std::string& path);

// Collective. True if `path` is an HDF5 file whose root says file_kind = "checkpoint".
bool is_checkpoint_file(MPI_Comm comm, const std::string& path);

// Collective. Writes `ckpt` (this rank's rows of every block are
// ckpt.state.row_begin..row_end; ranks' ranges must tile 0..rows in rank order,
// as a matrix's ownership ranges do) atomically and durably; refuses to
// overwrite any of `inputs`.
Status write_checkpoint(MPI_Comm comm, const std::string& path, const Checkpoint& ckpt,
                        const std::vector<std::string>& inputs = {});

struct CheckpointReadOptions {
  bool read_blocks = true;          // false: identity, counters, history only (for inspect)
  bool allow_previous = true;       // fall back to FILE.previous if FILE is missing or damaged
};

// Collective. Reads a checkpoint; this rank receives rows [row_begin, row_end)
// of every block (pass the matrix's own row range). Checks the file kind,
// format version and content checksums; does not check the identity.
Result<Checkpoint> read_checkpoint(MPI_Comm comm, const std::string& path, std::int64_t row_begin,
                                   std::int64_t row_end, const CheckpointReadOptions& options = {});

// Same on every rank. Refuses a checkpoint whose matrix or options differ from
// `expected`, naming what differs and both values.
Status check_resumable(const Checkpoint& ckpt, const RunIdentity& expected, const std::string& path);

}  // namespace lodestone
