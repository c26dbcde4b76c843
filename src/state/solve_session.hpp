// The checkpoint side of a solve: resume at the start, and at every iteration
// boundary decide together (signals, time budget, cadence) whether to write a
// checkpoint and whether to stop. The solve loop (api/solver.cpp) calls
// resume() instead of the method's setup() and boundary() after each step.
#pragma once

#include <mpi.h>

#include <functional>
#include <memory>
#include <vector>

#include "algebra/operator.hpp"
#include "lodestone/checkpoint.hpp"
#include "lodestone/matrix.hpp"
#include "methods/method.hpp"
#include "state/run_clock.hpp"

namespace lodestone::state {

class SolveSession {
 public:
  // Collective. An inactive session (no path) does nothing and costs nothing.
  static Result<std::unique_ptr<SolveSession>> open(const Matrix& matrix, const CheckpointPlan& plan,
                                                    RunIdentity identity);
  ~SolveSession();
  SolveSession(const SolveSession&) = delete;
  SolveSession& operator=(const SolveSession&) = delete;

  bool active() const { return !plan_.path.empty(); }

  // Collective. With --resume and an existing checkpoint: reads it, refuses a
  // different matrix or options, restores the method and the operator's matvec
  // count, and returns true with the history and solve time so far.
  Result<bool> resume(methods::Method& method, algebra::Operator& op, const methods::Problem& problem,
                      std::vector<HistoryRecord>& history, double& seconds_before,
                      const std::function<void(const std::string&)>& note);

  // Collective; after every iteration. Writes a checkpoint when one is due;
  // returns Status::stopped (after writing) when the run must stop early.
  Status boundary(methods::Method& method, algebra::Operator& op, const std::vector<HistoryRecord>& history,
                  std::int64_t pairs, double solve_seconds, double iteration_seconds);

  // Collective. Writes a checkpoint now.
  Status write(methods::Method& method, algebra::Operator& op, const std::vector<HistoryRecord>& history,
               std::int64_t pairs, double solve_seconds);

 private:
  SolveSession(const Matrix& matrix, CheckpointPlan plan, RunIdentity identity, RunClock clock);
  const Matrix& matrix_;
  CheckpointPlan plan_;
  RunIdentity identity_;
  RunClock clock_;
};

}  // namespace lodestone::state
