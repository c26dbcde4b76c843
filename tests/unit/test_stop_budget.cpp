// The time-budget and cadence rules (state/run_clock.hpp), on given costs: no clocks.
#include <gtest/gtest.h>

#include "state/run_clock.hpp"

using namespace lodestone::state;

TEST(StopBudget, StopsWhenTheNextIterationAndAWriteWouldNotFit) {
  // Budget 100 s: reserve min(10, 2) = 2 s; need 1.5 * (iteration + write).
  EXPECT_FALSE(budget_exhausted(100, 50, 10, 10));   // 50 + 30 + 2 = 82
  EXPECT_FALSE(budget_exhausted(100, 67.9, 10, 10)); // 99.9
  EXPECT_TRUE(budget_exhausted(100, 68.1, 10, 10));  // 100.1
  EXPECT_TRUE(budget_exhausted(100, 99, 0, 0));       // the reserve alone
  EXPECT_FALSE(budget_exhausted(0, 1e9, 1e9, 1e9));   // no budget
  // A long budget keeps a reserve of at most 10 s.
  EXPECT_FALSE(budget_exhausted(36000, 35989, 0, 0));
  EXPECT_TRUE(budget_exhausted(36000, 35991, 0, 0));
}

TEST(StopBudget, NextIterationFollowsGrowingCosts) {
  EXPECT_EQ(next_iteration_estimate({}), 0.0);
  EXPECT_EQ(next_iteration_estimate({5}), 5.0);
  EXPECT_EQ(next_iteration_estimate({4, 6, 5}), 6.0);    // falling: the largest
  EXPECT_EQ(next_iteration_estimate({1, 2, 4}), 8.0);    // doubling: doubles again
  EXPECT_EQ(next_iteration_estimate({9, 2, 3}), 9.0);    // 3 x 1.5 = 4.5 < the largest
  EXPECT_EQ(next_iteration_estimate({1, 10}), 40.0);     // growth counted at most 4x
  // A filter whose degree doubles each iteration: 60 s, then 120 s. With 200 s of budget
  // left, the next iteration (240 s) must not be started.
  EXPECT_TRUE(budget_exhausted(1000, 800, next_iteration_estimate({60, 120}), 1));
  EXPECT_FALSE(budget_exhausted(1000, 800, next_iteration_estimate({120, 120}), 1));
}

TEST(StopBudget, Cadence) {
  EXPECT_EQ(default_checkpoint_interval(0), 600);         // no budget: 10 minutes
  EXPECT_EQ(default_checkpoint_interval(86400), 600);     // long budget: still 10 minutes
  EXPECT_EQ(default_checkpoint_interval(3600), 180);      // 5% of an hour
  EXPECT_EQ(default_checkpoint_interval(100), 30);        // never below 30 s
  ClockOptions o;
  EXPECT_EQ(checkpoint_interval(o, 1), 600);
  EXPECT_EQ(checkpoint_interval(o, 60), 1200);            // writes cost at most ~5%
  o.checkpoint_every = 5;
  EXPECT_EQ(checkpoint_interval(o, 60), 5);               // asked for explicitly: as given
}

TEST(StopBudget, FirstBoundaryAsksForATimedCheckpointUnderABudget) {
  ClockOptions o;
  o.checkpointing = true;
  o.time_budget = 3600;
  RunClock clock(MPI_COMM_WORLD, o, MPI_Wtime());
  auto d = clock.at_boundary();
  EXPECT_TRUE(d.checkpoint_due);
  EXPECT_FALSE(d.stop());
  clock.checkpoint_written(0.001);
  clock.iteration_finished(0.001);
  EXPECT_FALSE(clock.at_boundary().checkpoint_due);
  // A budget already spent: stop, and write the checkpoint while stopping.
  RunClock late(MPI_COMM_WORLD, o, MPI_Wtime() - 3599);
  late.checkpoint_written(0.001);
  auto s = late.at_boundary();
  EXPECT_TRUE(s.out_of_time);
  EXPECT_TRUE(s.checkpoint_due);
}
