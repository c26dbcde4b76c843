// Writes that fail part-way (the file-size limit, as `ulimit -f` sets it, lowered
// inside the test process): a results file or checkpoint too large for the limit
// is refused before anything is written, with a message naming the limit; and an
// HDF5 file whose close fails (its final flush cannot be written) leaves the
// process able to shut down cleanly. HDF5 1.10 frees the file's state on a failed
// close but keeps its identifier, and its own shutdown in MPI_Finalize crashed on
// it; this binary ends through that shutdown, so a regression fails the test (a
// rank killed by SIGSEGV) rather than passing silently. It has a binary of its
// own because a failed close changes how the process shuts down.
#include <gtest/gtest.h>
#include <sys/resource.h>

#include <csignal>
#include <filesystem>
#include <string>
#include <vector>

#include "io/h5.hpp"
#if defined(__SANITIZE_ADDRESS__)
#include <sanitizer/lsan_interface.h>
#endif
#include "io/partition.hpp"
#include "lodestone/checkpoint.hpp"
#include "lodestone/result.hpp"
#include "support/collective.hpp"
#include "test_util.hpp"

using namespace lodestone;

namespace {

// Lowers the soft file-size limit of this process for the scope; SIGXFSZ is
// ignored by Runtime, so a write past it fails with EFBIG instead of a signal.
class SizeLimit {
 public:
  explicit SizeLimit(rlim_t bytes) {
    getrlimit(RLIMIT_FSIZE, &saved_);
    rlimit lowered = saved_;
    lowered.rlim_cur = bytes;
    ok_ = setrlimit(RLIMIT_FSIZE, &lowered) == 0;
  }
  ~SizeLimit() { setrlimit(RLIMIT_FSIZE, &saved_); }
  bool ok() const { return ok_; }

 private:
  rlimit saved_{};
  bool ok_ = false;
};

SolveResult big_result(MPI_Comm comm, std::int64_t rows, std::int64_t k) {
  SolveResult r;
  auto part = even_split(rows, comm_rank(comm), comm_size(comm));
  r.rows = rows, r.row_begin = part.begin, r.row_end = part.end;
  for (std::int64_t j = 0; j < k; ++j) {
    r.eigenvalues.push_back(1.0 / static_cast<double>(j + 1));
    r.eigenvalues_imag.push_back(0.0);
    r.residual_norms.push_back(1e-12);
  }
  r.vectors.assign(static_cast<std::size_t>(part.size() * k), 0.25);
  r.converged = k, r.method = "block", r.selection = "magnitude", r.tolerance = 1e-8, r.norm_estimate = 1;
  r.ranks = comm_size(comm);
  return r;
}

bool no_temporaries(const std::string& final_path) {
  const auto dir = std::filesystem::path(final_path).parent_path();
  const std::string stem = "." + std::filesystem::path(final_path).filename().string() + ".partial";
  for (const auto& e : std::filesystem::directory_iterator(dir))
    if (e.path().filename().string().rfind(stem, 0) == 0) return false;
  return true;
}

}  // namespace

TEST(HostileWriteFailure, ResultsFileBeyondTheLimitIsRefusedBeforeWriting) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::string path = test::temp_path(comm, "too-big-result.h5");
  const auto r = big_result(comm, 20000, 2);  // 320 kB of vectors
  SizeLimit limit(64 * 1024);
  ASSERT_TRUE(limit.ok());
  Status s = write_result(comm, path, r);
  ASSERT_FALSE(s.is_ok());
  EXPECT_NE(s.message().find("file-size limit"), std::string::npos) << s.message();
  EXPECT_NE(s.message().find(path), std::string::npos) << s.message();
  if (comm_rank(comm) == 0) {
    EXPECT_FALSE(std::filesystem::exists(path));
    EXPECT_TRUE(no_temporaries(path));
  }
}

TEST(HostileWriteFailure, CheckpointBeyondTheLimitIsRefusedBeforeWriting) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::string path = test::temp_path(comm, "too-big.ckpt.h5");
  Checkpoint c;
  const std::int64_t rows = 20000;
  auto part = even_split(rows, comm_rank(comm), comm_size(comm));
  c.identity.rows = rows;
  c.state.method = "block", c.state.rows = rows, c.state.row_begin = part.begin, c.state.row_end = part.end;
  c.state.blocks["basis"] = StateBlock{3, std::vector<double>(static_cast<std::size_t>(3 * part.size()), 0.5)};
  SizeLimit limit(64 * 1024);
  ASSERT_TRUE(limit.ok());
  Status s = write_checkpoint(comm, path, c);
  ASSERT_FALSE(s.is_ok());
  EXPECT_NE(s.message().find("file-size limit"), std::string::npos) << s.message();
  if (comm_rank(comm) == 0) {
    EXPECT_FALSE(std::filesystem::exists(path));
    EXPECT_TRUE(no_temporaries(path));
  }
}

// Below the size check: a raw parallel HDF5 file that outgrows the limit. The
// write and the close fail; the failure is remembered so the process (this test
// binary, when it exits through MPI_Finalize) shuts down without a crash. What
// HDF5 allocated for the file it could not close stays allocated (its shutdown is
// skipped), so under LeakSanitizer that part is allocated with leak checks off.
TEST(HostileWriteFailure, FailedCloseDoesNotCrashTheShutdown) {
  MPI_Comm comm = MPI_COMM_WORLD;
  const std::string path = test::temp_path(comm, "outgrown.h5");
#if defined(__SANITIZE_ADDRESS__)
  __lsan_disable();
#endif
  {
    SizeLimit limit(32 * 1024);
    ASSERT_TRUE(limit.ok());
    auto file = h5::create(comm, path);
    ASSERT_TRUE(file.is_ok()) << file.status().message();
    const std::int64_t n = 40000;  // 320 kB
    Status w;
    {
      auto ds = h5::create_dataset(file->get(), "values", H5T_IEEE_F64LE, {n});
      auto part = even_split(n, comm_rank(comm), comm_size(comm));
      std::vector<double> v(static_cast<std::size_t>(part.size()), 1.0);
      w = ds ? h5::write_range(ds->get(), H5T_NATIVE_DOUBLE, part.begin, part.size(), v.data()) : ds.status();
    }
    Status all = agree(comm, w);
    const bool closed = file->close_file();
    EXPECT_FALSE(all.is_ok() && closed) << "the file outgrew the limit, yet writing and closing it succeeded";
    EXPECT_FALSE(closed) << "the close was expected to fail (its final flush passes the limit)";
    EXPECT_TRUE(h5::a_close_failed());
  }
#if defined(__SANITIZE_ADDRESS__)
  __lsan_enable();
#endif
  if (comm_rank(comm) == 0) std::filesystem::remove(path);
}
