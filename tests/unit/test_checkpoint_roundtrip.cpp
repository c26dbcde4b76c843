// A checkpoint written by all ranks reads back the same global data on all
// ranks, on a smaller sub-communicator (resume on fewer ranks), and with an
// uneven row split; the previous generation is kept and used as a fallback.
#include <gtest/gtest.h>

#include <cmath>
#include <cstring>
#include <filesystem>
#include <fstream>

#include "checkpoint_fixture.hpp"
#include "test_util.hpp"

using namespace lodestone;

namespace {

bool same_bits(double a, double b) { return std::memcmp(&a, &b, sizeof a) == 0 || (std::isnan(a) && std::isnan(b)); }

// Every value this rank read matches the fixture for its rows.
void expect_matches_fixture(const Checkpoint& got, std::int64_t rows, std::int64_t begin, std::int64_t end) {
  Checkpoint want = test::fixture_checkpoint(rows, begin, end);
  EXPECT_EQ(got.identity.matrix_fingerprint, want.identity.matrix_fingerprint);
  EXPECT_EQ(got.identity.rows, rows);
  EXPECT_EQ(got.identity.options, want.identity.options);
  EXPECT_EQ(got.iterations, 42);
  EXPECT_EQ(got.matvecs, 210);
  EXPECT_EQ(got.converged, 1);
  EXPECT_EQ(got.elapsed_seconds, 3.25);
  EXPECT_EQ(got.state.method, "block");
  EXPECT_EQ(got.state.row_begin, begin);
  EXPECT_EQ(got.state.row_end, end);
  ASSERT_EQ(got.state.blocks.size(), want.state.blocks.size());
  for (const auto& [name, b] : want.state.blocks) {
    ASSERT_TRUE(got.state.blocks.count(name)) << name;
    const StateBlock& g = got.state.blocks.at(name);
    EXPECT_EQ(g.columns, b.columns) << name;
    ASSERT_EQ(g.local.size(), b.local.size()) << name;
    for (std::size_t i = 0; i < b.local.size(); ++i) ASSERT_EQ(g.local[i], b.local[i]) << name << " at " << i;
  }
  EXPECT_EQ(got.state.arrays, want.state.arrays);
  EXPECT_EQ(got.state.counters, want.state.counters);
  ASSERT_EQ(got.history.size(), want.history.size());
  for (std::size_t r = 0; r < want.history.size(); ++r) {
    const auto &g = got.history[r], &w = want.history[r];
    EXPECT_EQ(g.iteration, w.iteration);
    EXPECT_EQ(g.matvecs, w.matvecs);
    EXPECT_EQ(g.seconds, w.seconds);
    EXPECT_EQ(g.converged, w.converged);
    ASSERT_EQ(g.estimates.size(), 3u);
    ASSERT_EQ(g.residuals.size(), 3u);
    for (std::size_t j = 0; j < 3; ++j) {
      EXPECT_TRUE(same_bits(g.estimates[j], w.estimates[j]));
      EXPECT_TRUE(same_bits(g.residuals[j], j < w.residuals.size() ? w.residuals[j] : std::nan("")));
    }
  }
}

}  // namespace

TEST(CheckpointRoundTrip, AllRanksThenSubCommunicator) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t rows = 101;
  const std::string path = test::temp_path(comm, "rt.ckpt.h5");
  { Status w = write_checkpoint(comm, path, test::fixture_for_rank(comm, rows)); ASSERT_TRUE(w.is_ok()) << w.message(); }
  EXPECT_TRUE(is_checkpoint_file(comm, path));
  EXPECT_TRUE(checkpoint_exists(comm, path));

  // Read back on all ranks with the same split.
  auto r = even_split(rows, comm_rank(comm), comm_size(comm));
  auto all = read_checkpoint(comm, path, r.begin, r.end);
  ASSERT_TRUE(all.is_ok()) << all.status().message();
  EXPECT_EQ(all->written_by_ranks, comm_size(comm));
  EXPECT_EQ(all->format_version, kCheckpointFormatVersion);
  EXPECT_EQ(all->read_from, path);
  EXPECT_TRUE(all->note.empty());
  expect_matches_fixture(*all, rows, r.begin, r.end);

  // Read back on a smaller sub-communicator: the first max(1, p-1) ranks.
  const int p = comm_size(comm), q = std::max(1, p - 1);
  MPI_Comm sub;
  MPI_Comm_split(comm, comm_rank(comm) < q ? 0 : MPI_UNDEFINED, comm_rank(comm), &sub);
  if (sub != MPI_COMM_NULL) {
    auto s = even_split(rows, comm_rank(sub), comm_size(sub));
    auto few = read_checkpoint(sub, path, s.begin, s.end);
    EXPECT_TRUE(few.is_ok()) << few.status().message();
    if (few) {
      EXPECT_EQ(few->written_by_ranks, p);
      expect_matches_fixture(*few, rows, s.begin, s.end);
    }
    MPI_Comm_free(&sub);
  }
  MPI_Barrier(comm);
}

TEST(CheckpointRoundTrip, WrittenBySubCommunicatorReadByAllUnevenRows) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t rows = 37;
  const int p = comm_size(comm), q = std::max(1, p / 2);
  const std::string path = test::temp_path(comm, "sub.ckpt.h5");
  MPI_Comm sub;
  MPI_Comm_split(comm, comm_rank(comm) < q ? 0 : MPI_UNDEFINED, comm_rank(comm), &sub);
  if (sub != MPI_COMM_NULL) {
    Status w = write_checkpoint(sub, path, test::fixture_for_rank(sub, rows));
    EXPECT_TRUE(w.is_ok()) << w.message();
    MPI_Comm_free(&sub);
  }
  MPI_Barrier(comm);
  // Uneven split on all ranks: the last rank takes everything from row 3*rank on, others 3 rows each;
  // one rank may hold no rows at all.
  const int rank = comm_rank(comm);
  std::int64_t begin = std::min<std::int64_t>(rows, 3 * rank);
  std::int64_t end = rank == p - 1 ? rows : std::min<std::int64_t>(rows, 3 * (rank + 1));
  if (p > 1 && rank == 0) end = begin;  // rank 0 holds no rows
  if (p > 1 && rank == 1) begin = 0;
  auto all = read_checkpoint(comm, path, begin, end);
  ASSERT_TRUE(all.is_ok()) << all.status().message();
  EXPECT_EQ(all->written_by_ranks, q);
  expect_matches_fixture(*all, rows, begin, end);
}

TEST(CheckpointRoundTrip, KeepsPreviousGenerationAndFallsBackToIt) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::int64_t rows = 20;
  const std::string path = test::temp_path(comm, "gen.ckpt.h5");
  const std::string previous = previous_checkpoint_path(path);
  Checkpoint first = test::fixture_for_rank(comm, rows);
  { Status w = write_checkpoint(comm, path, first); ASSERT_TRUE(w.is_ok()) << w.message(); }
  Checkpoint second = first;
  second.iterations = 43;
  { Status w = write_checkpoint(comm, path, second); ASSERT_TRUE(w.is_ok()) << w.message(); }
  auto r = even_split(rows, comm_rank(comm), comm_size(comm));
  auto now = read_checkpoint(comm, path, r.begin, r.end);
  ASSERT_TRUE(now.is_ok()) << now.status().message();
  EXPECT_EQ(now->iterations, 43);
  auto before = read_checkpoint(comm, previous, r.begin, r.end, {true, false});
  ASSERT_TRUE(before.is_ok()) << before.status().message();
  EXPECT_EQ(before->iterations, 42);

  // No temporary files are left beside the checkpoint.
  if (comm_rank(comm) == 0) {
    const auto dir = std::filesystem::path(path).parent_path();
    const std::string stem = "." + std::filesystem::path(path).filename().string();
    for (const auto& e : std::filesystem::directory_iterator(dir))
      EXPECT_NE(e.path().filename().string().rfind(stem, 0), 0u) << e.path();
  }

  // FILE damaged (overwritten with garbage): the previous generation serves, with a note.
  if (comm_rank(comm) == 0) std::ofstream(path, std::ios::trunc) << "not a checkpoint at all";
  MPI_Barrier(comm);
  auto fallback = read_checkpoint(comm, path, r.begin, r.end);
  ASSERT_TRUE(fallback.is_ok()) << fallback.status().message();
  EXPECT_EQ(fallback->iterations, 42);
  EXPECT_EQ(fallback->read_from, previous);
  EXPECT_NE(fallback->note.find("using the previous checkpoint"), std::string::npos) << fallback->note;

  // FILE missing (killed between the renames where hard links are unsupported): same.
  if (comm_rank(comm) == 0) std::filesystem::remove(path);
  MPI_Barrier(comm);
  EXPECT_TRUE(checkpoint_exists(comm, path));
  auto missing = read_checkpoint(comm, path, r.begin, r.end);
  ASSERT_TRUE(missing.is_ok()) << missing.status().message();
  EXPECT_EQ(missing->read_from, previous);

  // Without the fallback, the damage is reported.
  auto strict = read_checkpoint(comm, path, r.begin, r.end, {true, false});
  ASSERT_FALSE(strict.is_ok());
  EXPECT_EQ(strict.status().kind(), ErrorKind::input);
  EXPECT_NE(strict.status().message().find("no such file"), std::string::npos) << strict.status().message();
}

TEST(CheckpointRoundTrip, SummaryWithoutBlocks) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::string path = test::temp_path(comm, "summary.ckpt.h5");
  { Status w = write_checkpoint(comm, path, test::fixture_for_rank(comm, 16)); ASSERT_TRUE(w.is_ok()) << w.message(); }
  auto s = read_checkpoint(comm, path, 0, 0, {false, true});
  ASSERT_TRUE(s.is_ok()) << s.status().message();
  EXPECT_EQ(s->state.blocks.at("basis").columns, 5);
  EXPECT_TRUE(s->state.blocks.at("basis").local.empty());
  EXPECT_EQ(s->history.size(), 4u);
}
