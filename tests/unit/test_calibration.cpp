// calibrate(): its figures are positive and consistent with the run it made, the file
// it writes is the one plan --calibration reads, the trial checkpoint is removed, and
// a solve that makes no progress within the budget is refused the same way on every rank.
#include <gtest/gtest.h>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "io/generators.hpp"
#include "io/matrix_writer.hpp"
#include "lodestone/calibration.hpp"
#include "lodestone/plan.hpp"
#include "plan/calibration.hpp"
#include "plan/model.hpp"
#include "support/collective.hpp"
#include "test_util.hpp"

using namespace lodestone;

namespace {

std::string laplace_file(MPI_Comm comm, std::int64_t n) {
  const std::string path = test::temp_path(comm, "cal-laplace.h5");
  auto rows = io::generate_laplace1d(comm, n);
  EXPECT_TRUE(io::write_csr_file(comm, path, "/matrix", n, true, rows).is_ok());
  return path;
}

std::size_t files_in(const std::string& dir) {
  std::size_t k = 0;
  for (const auto& e : std::filesystem::directory_iterator(dir)) k += e.path().filename().string().find("calibrate") != std::string::npos;
  return k;
}

}  // namespace

TEST(Calibration, MeasuresAConvergedSolve) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::string path = laplace_file(comm, 200);
  // A directory of its own, so that other runs' trial checkpoints cannot be counted here.
  const std::string dir = test::temp_path(comm, "cal-scratch");
  if (comm_rank(comm) == 0) std::filesystem::create_directories(dir);
  MPI_Barrier(comm);
  CalibrationRequest req;
  req.matrix_path = path;
  req.pairs = 2;
  req.method = "chebyshev";
  req.max_matvecs = 200000;
  req.scratch_directory = dir;
  auto c = calibrate(comm, req);
  ASSERT_TRUE(c.is_ok()) << c.status().message();
  EXPECT_EQ(c->method, "chebyshev");
  EXPECT_EQ(c->rows, 200);
  EXPECT_EQ(c->nnz, 3 * 200 - 2);
  EXPECT_EQ(c->ranks, comm_size(comm));
  EXPECT_EQ(c->block, plan::default_block("chebyshev", 2));
  EXPECT_EQ(c->converged, 2);
  EXPECT_FALSE(c->extrapolated);
  // Observed convergence: the range brackets the matvecs the solve used per pair.
  const double per_pair = static_cast<double>(c->matvecs) / 2.0;
  EXPECT_LE(c->matvecs_per_pair_low, per_pair);
  EXPECT_GE(c->matvecs_per_pair_high, per_pair);
  for (double v : {c->seconds_per_nonzero, c->reduction_latency_seconds, c->checkpoint_bytes_per_second,
                   c->read_bytes_per_second, c->dense_flops_per_second, c->checkpoint_bytes})
    EXPECT_TRUE(std::isfinite(v) && v > 0) << v;
  // The trial checkpoint held block + K vectors of 200 rows and is gone again.
  EXPECT_GT(c->checkpoint_bytes, 8.0 * 200 * static_cast<double>(c->block + 2));
  MPI_Barrier(comm);
  if (comm_rank(comm) == 0) {
    EXPECT_EQ(files_in(dir), 0u);
  }
  // Every rank holds the same figures.
  EXPECT_EQ(max_all(comm, c->seconds_per_nonzero), c->seconds_per_nonzero);
  EXPECT_EQ(max_all(comm, c->matvecs_per_pair_high), c->matvecs_per_pair_high);
}

TEST(Calibration, FileIsWhatPlanReads) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::string path = laplace_file(comm, 150);
  CalibrationRequest req;
  req.matrix_path = path;
  req.pairs = 1;
  req.method = "block";
  req.max_matvecs = 200000;
  req.scratch_directory = std::filesystem::path(path).parent_path().string();
  auto c = calibrate(comm, req);
  ASSERT_TRUE(c.is_ok()) << c.status().message();
  const std::string out = test::temp_path(comm, "cal.json");
  ASSERT_TRUE(write_calibration(comm, out, *c, {path}).is_ok());
  std::ifstream in(out);
  std::stringstream ss;
  ss << in.rdbuf();
  plan::MachineModel m;
  ASSERT_TRUE(plan::apply_calibration(out, ss.str(), m).is_ok());
  EXPECT_DOUBLE_EQ(m.seconds_per_nonzero, c->seconds_per_nonzero);
  // Global sums are timed on more than one rank only; on one the default stands.
  EXPECT_DOUBLE_EQ(m.reduction_latency, comm_size(comm) > 1 ? c->reduction_latency_seconds : plan::MachineModel{}.reduction_latency);
  EXPECT_DOUBLE_EQ(m.checkpoint_bandwidth, c->checkpoint_bytes_per_second);
  EXPECT_DOUBLE_EQ(m.read_bandwidth, c->read_bytes_per_second);
  EXPECT_DOUBLE_EQ(m.flop_rate, c->dense_flops_per_second);
  EXPECT_DOUBLE_EQ(m.matvecs_per_pair_low, c->matvecs_per_pair_low);
  EXPECT_DOUBLE_EQ(m.matvecs_per_pair_high, c->matvecs_per_pair_high);
  EXPECT_EQ(m.calibrated_method, "block");

  // The plan for the same matrix, ranks and K takes its figures from the file: a matrix
  // pass costs b x (the heaviest rank's nonzeros) x the measured seconds per nonzero.
  PlanRequest pr;
  pr.matrix_path = path;
  pr.pairs = 1;
  pr.method = "block";
  pr.scheduler = Scheduler::local;
  pr.cores_per_node = comm_size(comm);
  pr.node_memory = std::int64_t{8} << 30;
  pr.calibration_path = out;
  auto p = make_plan(comm, pr);
  ASSERT_TRUE(p.is_ok()) << p.status().message();
  EXPECT_NE(p->speed_source.find("calibration"), std::string::npos);
  EXPECT_NE(p->convergence_source.find("calibration"), std::string::npos);
  EXPECT_EQ(p->ranks, comm_size(comm));
  EXPECT_EQ(p->heaviest_nnz, c->heaviest_nnz);
  EXPECT_DOUBLE_EQ(p->iteration.matrix_passes,
                   static_cast<double>(c->block) * static_cast<double>(c->heaviest_nnz) * c->seconds_per_nonzero);
  EXPECT_EQ(p->matvecs_low, static_cast<std::int64_t>(std::ceil(c->matvecs_per_pair_low / c->block - 1e-12)) * c->block);
  // The output may not overwrite the matrix.
  EXPECT_FALSE(write_calibration(comm, path, *c, {path}).is_ok());
}

TEST(Calibration, NoProgressIsRefusedOnEveryRank) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::string path = laplace_file(comm, 400);
  CalibrationRequest req;
  req.matrix_path = path;
  req.pairs = 3;
  req.method = "power";
  req.max_matvecs = 2;  // not even a history to extrapolate from
  req.scratch_directory = std::filesystem::path(path).parent_path().string();
  auto c = calibrate(comm, req);
  ASSERT_FALSE(c.is_ok());
  EXPECT_EQ(c.status().kind(), ErrorKind::input);
  EXPECT_NE(c.status().message().find("--matvecs"), std::string::npos) << c.status().message();
}

TEST(Calibration, OtherVersionsAreRefused) {
  plan::MachineModel m;
  const std::string v2 = R"({"format": "lodestone-calibration", "version": 2, "seconds_per_nonzero": 1e-9})";
  Status s = plan::apply_calibration("c.json", v2, m);
  ASSERT_FALSE(s.is_ok());
  EXPECT_NE(s.message().find("version"), std::string::npos);
  const std::string bad = R"({"format": "lodestone-calibration", "version": 1, "dense_flops_per_second": -1})";
  EXPECT_FALSE(plan::apply_calibration("c.json", bad, m).is_ok());
  // A "format" of the wrong type is refused, not thrown.
  for (const char* text : {R"({"format": 1, "version": 1})", R"({"format": null})", R"({"format": ["x"]})"}) {
    Status f = plan::apply_calibration("c.json", text, m);
    ASSERT_FALSE(f.is_ok()) << text;
    EXPECT_NE(f.message().find("not a calibration file"), std::string::npos) << f.message();
  }
}
