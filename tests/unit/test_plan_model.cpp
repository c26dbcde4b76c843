// The planner's memory and time model against hand-computed values, and the
// planner's choices on small generated matrices.
#include <gtest/gtest.h>

#include <cmath>
#include <fstream>

#include "io/generators.hpp"
#include "io/matrix_writer.hpp"
#include "lodestone/plan.hpp"
#include "plan/model.hpp"
#include "support/collective.hpp"
#include "test_util.hpp"

using namespace lodestone;

namespace {
plan::MachineModel round_model() {
  plan::MachineModel m;
  m.index_bytes = 4;
  m.library_overhead = 1000;
  m.memory_bandwidth = 1e9;
  return m;
}
}  // namespace

TEST(PlanModel, BlockDefaults) {
  EXPECT_EQ(plan::default_block("block", 1), 3);       // K + 2
  EXPECT_EQ(plan::default_block("block", 4), 6);       // K + 2
  EXPECT_EQ(plan::default_block("block", 7), 11);      // K + ceil(K/2) = 7 + 4
  EXPECT_EQ(plan::default_block("chebyshev", 4), 8);   // K + 4
  EXPECT_EQ(plan::default_block("chebyshev", 20), 30); // K + K/2
  EXPECT_EQ(plan::log2_ceil(1), 0);
  EXPECT_EQ(plan::log2_ceil(4), 2);
  EXPECT_EQ(plan::log2_ceil(5), 3);
}

TEST(PlanModel, MemoryOfTheHeaviestRankByHand) {
  const auto m = round_model();
  const auto s = plan::method_shape("block", 4, 0);  // block of 6, 3 blocks held
  ASSERT_EQ(s.block, 6);
  plan::PartitionStats part;
  part.parts = 4;
  part.heaviest_rows = 250;
  part.heaviest_nnz = 1000;
  part.max_rows = 260;
  const std::int64_t n = 1000;
  const std::int64_t ghosts = plan::ghost_estimate(false, n, part);
  EXPECT_EQ(ghosts, 750);  // min(n - rows, nnz) = min(750, 1000)
  auto mem = plan::rank_memory(m, s, false, true, n, part, ghosts);
  EXPECT_DOUBLE_EQ(mem.matrix, 1000 * 12.0 + 250 * 12.0);        // nnz (8 + 4) + rows 3 x 4
  // The end outweighs 3 working blocks of 6 (18): X and A X (12) and 3 blocks of K = 4 (12).
  EXPECT_DOUBLE_EQ(mem.vectors, 8.0 * 260 * 24);
  EXPECT_DOUBLE_EQ(mem.locked, 8.0 * 260 * 4);
  // Receive and send buffers of b values and one index, and the matrix's own ghost bookkeeping (8 + 10 i).
  EXPECT_DOUBLE_EQ(mem.halo, 750 * (16.0 * 6 + 4) + 750 * (8.0 + 40.0));
  EXPECT_DOUBLE_EQ(mem.read_buffers, 1000 * 20.0 + 251 * 8.0 + 250 * 8.0);  // chunk x (8+8+4), offsets, two counts
  EXPECT_DOUBLE_EQ(mem.symmetry_check, 2 * 15000.0);  // declared symmetric: transpose and difference
  EXPECT_DOUBLE_EQ(mem.library, 1000);
  // Solving (49920 + 8320 + 75000 + 36000 = 169240) outweighs loading (max(24008, 30000) = 30000).
  const double peak = 15000 + 1000 + 169240;
  EXPECT_DOUBLE_EQ(mem.peak(), peak);
  EXPECT_DOUBLE_EQ(mem.margin, 0.2 * peak);
  EXPECT_DOUBLE_EQ(mem.total(), 1.2 * peak);
  // One vector in a block and no ghosts: loading is the peak.
  auto one = plan::rank_memory(m, plan::method_shape("power", 1, 0), false, true, n, part, 0);
  EXPECT_DOUBLE_EQ(one.peak(), 15000 + 1000 + 30000);  // power: 5 + 1 vectors of 260 rows = 12480 < 30000
  auto nonsym = plan::rank_memory(m, s, false, false, n, part, ghosts);
  EXPECT_EQ(nonsym.symmetry_check, 0);
  // krylov, K = 4: a basis of m = max(2K+1, K+16) = 20 (+1) alone while iterating; at the end
  // the basis (21) and 3 K-wide blocks (12), 33 vectors.
  auto kry = plan::rank_memory(m, plan::method_shape("krylov", 4, 0), false, false, n, part, ghosts);
  EXPECT_DOUBLE_EQ(kry.vectors, 8.0 * 260 * 33);
  // K = 30: m = 61; iterating 62 vectors, at the end 62 + 90 = 152.
  auto kry30 = plan::rank_memory(m, plan::method_shape("krylov", 30, 0), false, false, n, part, ghosts);
  EXPECT_DOUBLE_EQ(kry30.vectors, 8.0 * 260 * 152);
  // Dense, declared symmetric: checked in place, one value per row and one piece of another
  // rank's columns (250 x 250 values here, under the piece's cap); on one rank no piece.
  auto dense = plan::rank_memory(m, s, true, true, n, part, plan::ghost_estimate(true, n, part));
  EXPECT_DOUBLE_EQ(dense.matrix, 8.0 * 250 * 1000);
  EXPECT_DOUBLE_EQ(dense.symmetry_check, 8.0 * (250 + 250 * 250));
  part.parts = 1;
  part.heaviest_rows = part.max_rows = 1000;
  EXPECT_DOUBLE_EQ(plan::rank_memory(m, s, true, true, n, part, 0).symmetry_check, 8.0 * 1000);
}

TEST(PlanModel, IterationTimeByHand) {
  const auto m = round_model();
  const auto s = plan::method_shape("block", 4, 0);
  plan::PartitionStats part;
  part.parts = 4;
  part.heaviest_rows = 250;
  part.heaviest_nnz = 1000;
  part.max_rows = 260;
  auto t = plan::iteration_time(m, s, false, 1000, part, 750);
  // Matrix: 1000 x 12 + 251 x 4 bytes; vectors: 8 x 6 x ((250 + 750) + 250) bytes; at 1 GB/s.
  EXPECT_NEAR(t.matrix_passes, (13004.0 + 60000.0) / 1e9, 1e-15);
  // Halo: min(p-1, 6) = 3 messages of 5 us, plus 8 x 6 x 750 bytes at 5 GB/s.
  EXPECT_NEAR(t.halo, 3 * 5e-6 + 36000.0 / 5e9, 1e-15);
  // Reductions: 4 per iteration x log2(4) stages x 5 us.
  EXPECT_NEAR(t.reductions, 8 * 5e-6, 1e-15);
  // Dense: 6 b^2 = 216 flops per row over 260 rows at 2 Gflop/s.
  EXPECT_NEAR(t.dense, 216.0 * 260 / 2e9, 1e-15);
  // One rank: no halo, no reductions, no ghosts.
  part.parts = 1;
  EXPECT_EQ(plan::ghost_estimate(false, 1000, part), 0);
  auto t1 = plan::iteration_time(m, s, false, 1000, part, 0);
  EXPECT_EQ(t1.halo, 0);
  EXPECT_EQ(t1.reductions, 0);
  // Chebyshev: the filter degree multiplies the matrix passes.
  const auto c = plan::method_shape("chebyshev", 4, 6);
  auto tc = plan::iteration_time(m, c, false, 1000, part, 0);
  EXPECT_NEAR(tc.matrix_passes, 10 * t1.matrix_passes, 1e-15);
  // A calibrated speed replaces the bandwidth estimate: b x nnz x s per pass.
  auto mc = m;
  mc.seconds_per_nonzero = 2e-9;
  EXPECT_NEAR(plan::iteration_time(mc, s, false, 1000, part, 0).matrix_passes, 6 * 1000 * 2e-9, 1e-18);
}

namespace {
// declared_symmetric false: the same entries, declared not symmetric.
std::string write_laplace1d(MPI_Comm comm, std::int64_t n, bool declared_symmetric = true) {
  const std::string path = test::temp_path(comm, declared_symmetric ? "plan-model.h5" : "plan-model-ns.h5");
  auto rows = io::generate_laplace1d(comm, n);
  EXPECT_TRUE(io::write_csr_file(comm, path, "/matrix", n, declared_symmetric, rows).is_ok());
  return path;
}
}  // namespace

TEST(PlanModel, PlannerPicksTheFewestNodesThatHoldTheMatrix) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 200000;  // 1-D Laplacian: 3n - 2 nonzeros
  const std::string path = write_laplace1d(comm, n);
  PlanRequest r;
  r.matrix_path = path;
  r.pairs = 4;
  r.scheduler = Scheduler::slurm;
  r.cores_per_node = 2;
  r.node_memory = std::int64_t{1} << 40;
  auto big = make_plan(comm, r);
  ASSERT_TRUE(big.is_ok()) << big.status().message();
  EXPECT_EQ(big->nodes, 1);
  EXPECT_EQ(big->ranks, 2);
  EXPECT_EQ(big->bound, "memory");
  EXPECT_EQ(big->method, "chebyshev");  // auto, symmetric
  EXPECT_EQ(big->nnz, 3 * n - 2);
  // Two ranks on a 1-D Laplacian: weights split evenly, 100000 rows each; the
  // heaviest rank holds the boundary row's 2 nonzeros less one (2n - 1 or so).
  EXPECT_EQ(big->heaviest_rows + big->max_rows >= n, true);
  EXPECT_NEAR(static_cast<double>(big->heaviest_nnz), 1.5 * n, 2.0);

  // Node memory just below what one node needs for 2 ranks: by default the planner
  // runs 1 rank on 1 node (fewest nodes first) and says so ...
  const double one_node = big->node_memory_used / (1.0 - 0.05);
  r.node_memory = static_cast<std::int64_t>(one_node) - 1;
  auto half = make_plan(comm, r);
  ASSERT_TRUE(half.is_ok()) << half.status().message();
  EXPECT_EQ(half->nodes, 1);
  EXPECT_EQ(half->ranks_per_node, 1);
  EXPECT_NE(half->bound_reason.find("only 1 of the 2 cores"), std::string::npos) << half->bound_reason;
  ASSERT_FALSE(half->warnings.empty());
  // ... and with 2 ranks per node required it must take two nodes.
  r.ranks_per_node = 2;
  auto two = make_plan(comm, r);
  ASSERT_TRUE(two.is_ok()) << two.status().message();
  EXPECT_EQ(two->nodes, 2);
  EXPECT_EQ(two->bound, "memory");
  EXPECT_LE(two->node_memory_used, two->node_memory_usable);
  EXPECT_NE(two->bound_reason.find("1 node would need"), std::string::npos) << two->bound_reason;

  // Too little memory for any allocation: a plan that says it does not fit.
  r.node_memory = 1024 * 1024;
  r.max_nodes = 4;
  auto none = make_plan(comm, r);
  ASSERT_TRUE(none.is_ok());
  EXPECT_FALSE(none->fits);
  ASSERT_FALSE(none->warnings.empty());
  EXPECT_NE(none->warnings[0].find("does not fit"), std::string::npos);
}

TEST(PlanModel, ChainedJobsAndCheckpointsByHand) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t n = 10000;
  const std::string path = write_laplace1d(comm, n);
  // A calibration that makes the arithmetic round: 1 us per nonzero, 100 matvecs per pair.
  const std::string cal = test::temp_path(comm, "cal.json");
  if (comm_rank(comm) == 0) {
    std::ofstream(cal) << R"({"format": "lodestone-calibration", "version": 1, "seconds_per_nonzero": 1e-6,
      "read_bytes_per_second": 1e12, "checkpoint_bytes_per_second": 1e12, "matvecs_per_pair": [100, 100]})";
  }
  MPI_Barrier(comm);
  PlanRequest r;
  r.matrix_path = path;
  r.pairs = 2;
  r.method = "power";
  r.scheduler = Scheduler::pbs;
  r.cores_per_node = 1;
  r.node_memory = std::int64_t{1} << 34;
  r.nodes = 1;
  r.max_walltime = 5 * 60;
  r.calibration_path = cal;
  auto p = make_plan(comm, r);
  ASSERT_TRUE(p.is_ok()) << p.status().message();
  // One rank holds all 3n - 2 = 29998 nonzeros: a matvec takes 29998 us.
  EXPECT_EQ(p->ranks, 1);
  EXPECT_EQ(p->matvecs_low, 200);
  EXPECT_EQ(p->iterations_high, 200);
  const double t_pass = 29998e-6;
  EXPECT_NEAR(p->iteration.matrix_passes, t_pass, 1e-12);
  // Dense work of power: 4 K flops per row = 8 x 10000 / 2e9.
  EXPECT_NEAR(p->iteration.dense, 8.0 * 10000 / 2e9, 1e-15);
  const double t_iter = t_pass + 8.0 * 10000 / 2e9;
  // Margin: max(60, ceil(30 + t_iter + 2 x checkpoint write)) = 60 s; usable per job 300 - 60 - load.
  EXPECT_EQ(p->signal_margin, 60);
  EXPECT_EQ(p->job_walltime, 300);
  // Checkpoint interval: usable / 4 = ~60 s, raised to the 300 s floor, capped at half a job (120 s).
  EXPECT_EQ(p->checkpoint_interval, 119);  // half of 240 s less the (tiny) load time, rounded down
  // Checkpoint: K + 1 = 3 vectors of n doubles, plus 1 MiB.
  EXPECT_DOUBLE_EQ(p->checkpoint_bytes, 3.0 * 8 * n + 1048576.0);
  // 200 iterations x ~30 ms = ~6 s: one job.
  EXPECT_NEAR(p->solve_seconds_high, 200 * t_iter, 1e-6);
  EXPECT_EQ(p->jobs_high, 1);

  // Now 1000 matvecs per pair at 1 ms per nonzero: 2000 x 29.998 s = 59996 s, in jobs
  // of 240 s usable (less the load time, ~0) -> ceil(59996 (+ checkpoint writes) / 240) = 250.
  if (comm_rank(comm) == 0) {
    std::ofstream(cal) << R"({"format": "lodestone-calibration", "version": 1, "seconds_per_nonzero": 1e-3,
      "read_bytes_per_second": 1e12, "checkpoint_bytes_per_second": 1e12, "matvecs_per_pair": [1000, 1000]})";
  }
  MPI_Barrier(comm);
  auto q = make_plan(comm, r);
  ASSERT_TRUE(q.is_ok()) << q.status().message();
  // The margin grows with the iteration: ceil(30 + 29.998 + 0.00016 + tiny) = 60.
  EXPECT_EQ(q->signal_margin, 60);
  EXPECT_EQ(q->jobs_high, static_cast<std::int64_t>(std::ceil(q->solve_seconds_high / (240.0 - q->load_seconds))));
  EXPECT_GE(q->jobs_high, 250);
  EXPECT_LE(q->jobs_high, 251);
  EXPECT_EQ(q->signal_slack, 0);

  // Slurm may warn up to 60 s early (sbatch --signal): a Slurm job has 300 - 60 - 60 = 180 s
  // usable, less the load: ceil(59996 / 180) = 334 jobs, and the interval half of that.
  r.scheduler = Scheduler::slurm;
  auto sl = make_plan(comm, r);
  ASSERT_TRUE(sl.is_ok()) << sl.status().message();
  EXPECT_EQ(sl->signal_margin, 60);
  EXPECT_EQ(sl->signal_slack, 60);
  EXPECT_EQ(sl->checkpoint_interval, 89);
  EXPECT_EQ(sl->jobs_high, static_cast<std::int64_t>(std::ceil(sl->solve_seconds_high / (180.0 - sl->load_seconds))));
  EXPECT_GE(sl->jobs_high, 334);
  EXPECT_LE(sl->jobs_high, 335);
  EXPECT_TRUE(sl->fits);
  // Two-minute jobs: PBS keeps 60 s less the load after its margin, room for a 30 s
  // iteration; Slurm's early warning leaves nothing, and the plan does not fit.
  r.max_walltime = 2 * 60;
  auto short_slurm = make_plan(comm, r);
  ASSERT_TRUE(short_slurm.is_ok());
  EXPECT_FALSE(short_slurm->fits);
  ASSERT_FALSE(short_slurm->warnings.empty());
  EXPECT_NE(short_slurm->warnings.back().find("60 s by which Slurm may warn early"), std::string::npos)
      << short_slurm->warnings.back();
  r.scheduler = Scheduler::pbs;
  auto short_pbs = make_plan(comm, r);
  ASSERT_TRUE(short_pbs.is_ok());
  EXPECT_TRUE(short_pbs->fits);
}

TEST(PlanModel, BadCalibrationIsAnInputError) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::string path = write_laplace1d(comm, 100);
  const std::string cal = test::temp_path(comm, "bad-cal.json");
  if (comm_rank(comm) == 0) std::ofstream(cal) << R"({"format": "lodestone-calibration", "version": 1, "seconds_per_nonzero": -1})";
  MPI_Barrier(comm);
  PlanRequest r;
  r.matrix_path = path;
  r.scheduler = Scheduler::local;
  r.cores_per_node = 2;
  r.node_memory = std::int64_t{1} << 30;
  r.calibration_path = cal;
  auto p = make_plan(comm, r);
  ASSERT_FALSE(p.is_ok());
  EXPECT_EQ(p.status().kind(), ErrorKind::input);
  EXPECT_NE(p.status().message().find("seconds_per_nonzero"), std::string::npos);
}

// The planner refuses what the solve would refuse, in the same words: a plan for a
// run that cannot start is worse than no plan.
TEST(PlanModel, RefusesWhatTheSolveWouldRefuse) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::string path = write_laplace1d(comm, 100);
  PlanRequest r;
  r.matrix_path = path;
  r.scheduler = Scheduler::local;
  r.cores_per_node = 2;
  r.node_memory = std::int64_t{1} << 30;
  r.pairs = 4;
  auto refusal = [&](const std::string& method, std::int64_t block) {
    r.method = method;
    r.block_size = block;
    auto p = make_plan(comm, r);
    if (p.is_ok()) return std::string("(planned)");
    EXPECT_EQ(p.status().kind(), ErrorKind::usage) << p.status().message();
    return p.status().message();
  };
  EXPECT_NE(refusal("block", 3).find("--block-size 3 is smaller than --pairs 4"), std::string::npos);
  // auto is chebyshev on this symmetric matrix, which needs a guard vector beyond K.
  EXPECT_NE(refusal("auto", 4).find("no guard vector beyond --pairs 4; give 5 or more"), std::string::npos);
  EXPECT_NE(refusal("chebyshev", 4).find("no guard vector"), std::string::npos);
  EXPECT_EQ(refusal("chebyshev", 5), "(planned)");
  EXPECT_EQ(refusal("block", 4), "(planned)");
  EXPECT_EQ(refusal("power", 1), "(planned)");  // one vector: --block-size does not apply
  EXPECT_NE(refusal("lanczos", 0).find("expected auto, power, block, chebyshev or krylov"), std::string::npos);
  r.solve.selection = "sideways";
  EXPECT_NE(refusal("block", 0).find("--select 'sideways': expected magnitude, largest or smallest"),
            std::string::npos);
  r.matrix_path = write_laplace1d(comm, 100, false);
  r.solve.selection = "smallest";
  EXPECT_NE(refusal("krylov", 0).find("--select smallest needs a symmetric matrix"), std::string::npos);
  r.solve.selection = "largest";
  EXPECT_NE(refusal("block", 0).find("--select largest on a matrix not declared symmetric needs --method krylov"),
            std::string::npos);
  EXPECT_NE(refusal("power", 0).find("needs --method krylov"), std::string::npos);
  EXPECT_EQ(refusal("krylov", 0), "(planned)");
  EXPECT_EQ(refusal("auto", 0), "(planned)");
}

TEST(PlanModel, MoreNodesWhenTheyCutChainedJobs) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::string path = write_laplace1d(comm, 200000);
  const std::string cal = test::temp_path(comm, "cal-time.json");
  if (comm_rank(comm) == 0)
    std::ofstream(cal) << R"({"format": "lodestone-calibration", "version": 1, "seconds_per_nonzero": 1e-6,
      "matvecs_per_pair": [1000, 1000]})";
  MPI_Barrier(comm);
  PlanRequest r;
  r.matrix_path = path;
  r.pairs = 2;
  r.method = "power";
  r.scheduler = Scheduler::slurm;
  r.cores_per_node = 2;
  r.node_memory = std::int64_t{1} << 36;
  r.max_walltime = 5 * 60;
  r.calibration_path = cal;
  // One node (2 ranks, ~300000 nonzeros each): 2000 iterations of ~0.3 s = ~600 s, in
  // Slurm jobs of ~180 s usable (300 s less the 60 s margin and the 60 s by which Slurm
  // may warn early): 4 jobs. Four nodes (8 ranks): ~150 s, one job, with the same
  // node-seconds, so the planner takes more nodes and says it is time bound.
  auto p = make_plan(comm, r);
  ASSERT_TRUE(p.is_ok()) << p.status().message();
  EXPECT_EQ(p->bound, "time") << p->bound_reason;
  EXPECT_EQ(p->nodes, 4);
  EXPECT_EQ(p->jobs_high, 1);
  EXPECT_NE(p->bound_reason.find("1 node would hold the matrix but need up to 4 chained jobs"), std::string::npos)
      << p->bound_reason;
  // Fixed to one node, the same request spans four jobs.
  r.nodes = 1;
  auto q = make_plan(comm, r);
  ASSERT_TRUE(q.is_ok());
  EXPECT_EQ(q->bound, "given");
  EXPECT_EQ(q->jobs_high, 4);
}
