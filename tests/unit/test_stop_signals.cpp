// A stop signal that reaches only one rank is seen by every rank at the next
// boundary; without a signal nobody stops.
#include <gtest/gtest.h>

#include <csignal>

#include "state/run_clock.hpp"
#include "state/stop_signals.hpp"
#include "support/collective.hpp"

using namespace lodestone;

class StopSignals : public ::testing::Test {
 protected:
  void SetUp() override {
    state::install_stop_handlers();
    state::clear_stop_flag();
  }
  void TearDown() override {
    state::clear_stop_flag();
    state::restore_stop_handlers();
  }
};

TEST_F(StopSignals, NoSignalNoStop) {
  EXPECT_FALSE(state::stop_requested(MPI_COMM_WORLD));
  EXPECT_EQ(state::stop_signal(MPI_COMM_WORLD), 0);
}

TEST_F(StopSignals, OneRankSignalledAllAgree) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const int sigs[] = {SIGTERM, SIGUSR1, SIGUSR2, SIGINT};
  for (int sig : sigs) {
    // Only the last rank receives it.
    if (comm_rank(comm) == comm_size(comm) - 1) std::raise(sig);
    EXPECT_EQ(state::local_stop_signal() != 0, comm_rank(comm) == comm_size(comm) - 1);
    EXPECT_TRUE(state::stop_requested(comm)) << state::signal_name(sig);
    EXPECT_EQ(state::stop_signal(comm), sig);
    state::clear_stop_flag();
    EXPECT_FALSE(state::stop_requested(comm));
  }
}

TEST_F(StopSignals, ClockReportsTheSignalAndAsksForACheckpoint) {
  MPI_Comm comm = MPI_COMM_WORLD;
  state::ClockOptions o;
  o.checkpointing = true;
  o.checkpoint_every = 3600;
  state::RunClock clock(comm, o, MPI_Wtime());
  clock.checkpoint_written(0.01);
  auto quiet = clock.at_boundary();
  EXPECT_FALSE(quiet.stop());
  EXPECT_FALSE(quiet.checkpoint_due);
  if (comm_rank(comm) == 0) std::raise(SIGUSR1);
  auto d = clock.at_boundary();
  EXPECT_TRUE(d.stop());
  EXPECT_EQ(d.signal, SIGUSR1);
  EXPECT_TRUE(d.checkpoint_due);
  EXPECT_FALSE(d.out_of_time);
}

// After the libraries' shutdown the handlers are set again (a no-op unless
// installed): PETSc's shutdown used to set SIGTERM back to its default, and a stop
// signal in a finished run's last moments killed it (exit 143).
TEST(StopSignalsRuntime, ReinstateKeepsTheHandlers) {
  state::install_stop_handlers();
  struct sigaction installed {};
  ASSERT_EQ(sigaction(SIGTERM, nullptr, &installed), 0);
  std::signal(SIGTERM, SIG_DFL);  // what a library's shutdown did
  state::reinstate_stop_handlers();
  struct sigaction now {};
  ASSERT_EQ(sigaction(SIGTERM, nullptr, &now), 0);
  EXPECT_EQ(now.sa_handler, installed.sa_handler);
  state::restore_stop_handlers();
  ASSERT_EQ(sigaction(SIGTERM, nullptr, &now), 0);
  EXPECT_EQ(now.sa_handler, SIG_DFL);
}
