// Test driver for kill-during-write trials (tests/cli/checkpoint_kill_during_write.sh).
//
//   checkpoint_kill_driver write PATH ROWS COLS GENERATIONS
//       writes checkpoints of ROWS x COLS values back to back, generation after
//       generation (continuing after the generation already in PATH, if any);
//       every value is a function of (generation, global row, column) and the
//       state carries the driver's own checksum of all values.
//   checkpoint_kill_driver check PATH ROWS COLS
//       reads PATH on this rank count, recomputes every value and the checksum,
//       and exits 0 if all match ("ok generation G" on stdout), 1 otherwise.
//   checkpoint_kill_driver stop-wait [deaf]
//       installs the stop handlers, prints "ready", and polls the agreed stop
//       flag; exits 3 when stopped. With "deaf" it never polls, so only a
//       second SIGINT (which ends it with 130) stops it before 30 s.
#include <mpi.h>
#include <unistd.h>

#include <cstdio>
#include <cstring>
#include <string>

#include "io/generators.hpp"
#include "io/partition.hpp"
#include "lodestone/checkpoint.hpp"
#include "lodestone/runtime.hpp"
#include "state/stop_signals.hpp"
#include "support/collective.hpp"

using namespace lodestone;

namespace {

double value(std::int64_t generation, std::int64_t row, std::int64_t col) {
  return io::hashed_uniform(static_cast<std::uint64_t>(generation), static_cast<std::uint64_t>(row),
                            static_cast<std::uint64_t>(col));
}

// The driver's own checksum: sum of the values' bit patterns, modulo 2^64.
std::int64_t content_sum(MPI_Comm comm, const StateBlock& b, std::int64_t local_rows) {
  std::uint64_t s = 0;
  for (double v : b.local) {
    std::uint64_t bits;
    std::memcpy(&bits, &v, sizeof bits);
    s += bits;
  }
  (void)local_rows;
  return static_cast<std::int64_t>(sum_all_u64(comm, s));
}

RunIdentity identity(std::int64_t rows) {
  RunIdentity id;
  id.matrix_fingerprint = 0x1234;
  id.rows = rows;
  id.options = {{"driver", "kill-test"}};
  return id;
}

int run_write(MPI_Comm comm, const std::string& path, std::int64_t rows, std::int64_t cols, std::int64_t count) {
  auto r = even_split(rows, comm_rank(comm), comm_size(comm));
  std::int64_t first = 1;
  if (checkpoint_exists(comm, path)) {
    auto old = read_checkpoint(comm, path, r.begin, r.end, {false, true});
    if (old) first = old->state.counters["generation"] + 1;
  }
  for (std::int64_t g = first; g < first + count; ++g) {
    Checkpoint c;
    c.identity = identity(rows);
    c.iterations = g;
    c.state.method = "driver";
    c.state.rows = rows;
    c.state.row_begin = r.begin;
    c.state.row_end = r.end;
    StateBlock b;
    b.columns = cols;
    for (std::int64_t j = 0; j < cols; ++j)
      for (std::int64_t i = r.begin; i < r.end; ++i) b.local.push_back(value(g, i, j));
    c.state.counters["generation"] = g;
    c.state.counters["content_sum"] = content_sum(comm, b, r.size());
    c.state.blocks["values"] = std::move(b);
    Status s = write_checkpoint(comm, path, c);
    if (!s) {
      if (comm_rank(comm) == 0) std::fprintf(stderr, "driver: %s\n", s.message().c_str());
      return 1;
    }
  }
  return 0;
}

int run_check(MPI_Comm comm, const std::string& path, std::int64_t rows, std::int64_t cols) {
  auto r = even_split(rows, comm_rank(comm), comm_size(comm));
  auto c = read_checkpoint(comm, path, r.begin, r.end);
  std::string error;
  if (!c) {
    error = c.status().message();
  } else {
    const std::int64_t g = c->state.counters["generation"];
    const StateBlock& b = c->state.blocks["values"];
    if (g < 1 || b.columns != cols) error = "wrong generation or shape";
    std::int64_t bad = 0;
    for (std::int64_t j = 0; j < b.columns && error.empty(); ++j)
      for (std::int64_t i = r.begin; i < r.end; ++i)
        bad += b.local[static_cast<std::size_t>(j * r.size() + (i - r.begin))] != value(g, i, j);
    bad = sum_all(comm, bad);
    if (error.empty() && bad) error = std::to_string(bad) + " values differ from generation " + std::to_string(g);
    if (error.empty() && content_sum(comm, b, r.size()) != c->state.counters["content_sum"])
      error = "the driver's checksum does not match";
    if (error.empty() && comm_rank(comm) == 0)
      std::printf("ok generation %lld%s%s\n", static_cast<long long>(g), c->note.empty() ? "" : " (", c->note.empty() ? "" : "previous generation)");
  }
  Status s = agree(comm, error.empty() ? Status::ok() : Status::input(error));
  if (!s && comm_rank(comm) == 0) std::fprintf(stderr, "check: %s\n", s.message().c_str());
  return s ? 0 : 1;
}

int run_stop_wait(MPI_Comm comm, bool deaf) {
  state::install_stop_handlers();
  MPI_Barrier(comm);
  if (comm_rank(comm) == 0) {
    std::printf("ready\n");
    std::fflush(stdout);
  }
  for (int k = 0; k < 3000; ++k) {  // at most about 30 s
    if (int sig = deaf ? 0 : state::stop_signal(comm)) {
      if (comm_rank(comm) == 0) std::printf("stopped by %s on %d rank(s)\n", state::signal_name(sig), comm_size(comm));
      return 3;
    }
    ::usleep(10000);
  }
  return 1;
}

}  // namespace

int main(int argc, char** argv) {
  int rc = 2;
  {
    Runtime runtime(&argc, &argv);
    MPI_Comm comm = MPI_COMM_WORLD;
    const std::string mode = argc > 1 ? argv[1] : "";
    if (mode == "write" && argc == 6)
      rc = run_write(comm, argv[2], std::stoll(argv[3]), std::stoll(argv[4]), std::stoll(argv[5]));
    else if (mode == "check" && argc == 5)
      rc = run_check(comm, argv[2], std::stoll(argv[3]), std::stoll(argv[4]));
    else if (mode == "stop-wait")
      rc = run_stop_wait(comm, argc > 2 && std::string(argv[2]) == "deaf");
    else if (comm_rank(comm) == 0)
      std::fprintf(stderr, "usage: checkpoint_kill_driver write PATH ROWS COLS GENERATIONS | check PATH ROWS COLS | stop-wait\n");
  }
  return rc;
}
