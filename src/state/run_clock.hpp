// When to write a checkpoint and when to stop: the signal flag, the time
// budget and the checkpoint cadence, decided by all ranks together.
//
// The solve loop tells the clock how long each iteration and each checkpoint
// write took on this rank; at every iteration boundary at_boundary() does one
// reduction (maximum over ranks of the stop signal, the elapsed time and the
// observed costs), so every rank takes the same decision.
//
// Time budget: continuing means one more iteration and then, possibly, a
// checkpoint write before the budget ends. The run stops at a boundary when
//   elapsed + 1.5 * (iteration cost + checkpoint cost) + reserve > budget,
// where the write cost is the largest observed over the last few writes, the
// iteration cost the largest over the last few iterations or, when the last
// iteration cost more than the one before, the last times that growth (at most
// 4): a method whose iterations grow (Chebyshev raising its filter degree) is
// expected to go on growing. Both are maxima over all ranks; 1.5 is a safety
// factor for variation (common practice), and reserve = min(10 s, 2% of the
// budget) covers start-up of the write and exit. Until a checkpoint write has been timed, the first boundary
// asks for one so that its cost is known.
//
// Cadence: with --checkpoint-every the interval is as given. By default it is
// 10 minutes, or 5% of the time budget when that is shorter (but at least
// 30 s), and never less than 20 times the observed write time, so writing
// checkpoints costs at most about 5% of the run.
#pragma once

#include <mpi.h>

#include <deque>

namespace lodestone::state {

struct ClockOptions {
  double time_budget = 0;       // seconds from `start`; 0: none
  double checkpoint_every = 0;  // seconds; 0: the default cadence
  bool checkpointing = false;   // a checkpoint file was given
};

// What every rank decided at one boundary.
struct BoundaryDecision {
  int signal = 0;               // a stop signal some rank received, or 0
  bool out_of_time = false;     // the time budget says stop now
  bool checkpoint_due = false;  // write a checkpoint now (also true when stopping with checkpointing)
  bool stop() const { return signal != 0 || out_of_time; }
};

// The pure rules, for tests and for the clock below.
double default_checkpoint_interval(double time_budget);
double checkpoint_interval(const ClockOptions& o, double write_cost);
bool budget_exhausted(double time_budget, double elapsed, double iteration_cost, double write_cost);
// The next iteration's expected cost from the last few (oldest first).
double next_iteration_estimate(const std::deque<double>& costs);

class RunClock {
 public:
  // `start` is the MPI_Wtime() the budget counts from (the job's start).
  RunClock(MPI_Comm comm, ClockOptions options, double start);
  void iteration_finished(double seconds);
  void checkpoint_written(double seconds);
  // Collective.
  BoundaryDecision at_boundary();
  double elapsed() const;
  const ClockOptions& options() const { return options_; }

 private:
  static double largest(const std::deque<double>& d);
  MPI_Comm comm_;
  ClockOptions options_;
  double start_;
  double last_checkpoint_;  // MPI_Wtime of the last write (or the start)
  std::deque<double> iteration_costs_, write_costs_;
};

}  // namespace lodestone::state
