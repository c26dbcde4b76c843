// Collective stop and checkpoint decisions (state/run_clock.hpp).
#include "state/run_clock.hpp"

#include <algorithm>

#include "state/stop_signals.hpp"

namespace lodestone::state {

namespace {
constexpr double kSafety = 1.5;         // common practice: room for iteration-to-iteration variation
constexpr std::size_t kRemember = 8;    // costs remembered (the largest counts)
constexpr double kDefaultInterval = 600;
constexpr double kMaxGrowth = 4;        // growth assumed at most from one iteration to the next
}  // namespace

double default_checkpoint_interval(double time_budget) {
  if (time_budget <= 0) return kDefaultInterval;
  return std::min(kDefaultInterval, std::max(30.0, 0.05 * time_budget));
}

double checkpoint_interval(const ClockOptions& o, double write_cost) {
  if (o.checkpoint_every > 0) return o.checkpoint_every;
  return std::max(default_checkpoint_interval(o.time_budget), 20.0 * write_cost);
}

double next_iteration_estimate(const std::deque<double>& costs) {
  if (costs.empty()) return 0.0;
  double estimate = *std::max_element(costs.begin(), costs.end());
  if (costs.size() >= 2) {
    const double last = costs.back(), before = costs[costs.size() - 2];
    if (before > 0 && last > before) estimate = std::max(estimate, last * std::min(kMaxGrowth, last / before));
  }
  return estimate;
}

bool budget_exhausted(double time_budget, double elapsed, double iteration_cost, double write_cost) {
  if (time_budget <= 0) return false;
  const double reserve = std::min(10.0, 0.02 * time_budget);
  return elapsed + kSafety * (iteration_cost + write_cost) + reserve > time_budget;
}

RunClock::RunClock(MPI_Comm comm, ClockOptions options, double start)
    : comm_(comm), options_(options), start_(start), last_checkpoint_(MPI_Wtime()) {}

double RunClock::largest(const std::deque<double>& d) {
  return d.empty() ? 0.0 : *std::max_element(d.begin(), d.end());
}

void RunClock::iteration_finished(double seconds) {
  iteration_costs_.push_back(seconds);
  if (iteration_costs_.size() > kRemember) iteration_costs_.pop_front();
}

void RunClock::checkpoint_written(double seconds) {
  write_costs_.push_back(seconds);
  if (write_costs_.size() > kRemember) write_costs_.pop_front();
  last_checkpoint_ = MPI_Wtime();
}

double RunClock::elapsed() const { return MPI_Wtime() - start_; }

BoundaryDecision RunClock::at_boundary() {
  const double now = MPI_Wtime();
  double local[5] = {static_cast<double>(local_stop_signal()), now - start_, next_iteration_estimate(iteration_costs_),
                     largest(write_costs_), now - last_checkpoint_};
  double all[5];
  MPI_Allreduce(local, all, 5, MPI_DOUBLE, MPI_MAX, comm_);
  BoundaryDecision d;
  d.signal = static_cast<int>(all[0]);
  const bool write_timed = !write_costs_.empty();  // the same on every rank: writes are collective
  if (options_.checkpointing) {
    d.out_of_time = budget_exhausted(options_.time_budget, all[1], all[2], all[3]);
    d.checkpoint_due = all[4] >= checkpoint_interval(options_, all[3]) ||
                       (options_.time_budget > 0 && !write_timed) || d.stop();
  } else {
    d.out_of_time = budget_exhausted(options_.time_budget, all[1], all[2], 0.0);
  }
  return d;
}

}  // namespace lodestone::state
