// Every refusal on resume: another matrix (fingerprint, size), each
// incompatible option, a newer or unknown format version, a truncated file, a
// garbage file, a file of another kind; and on writing, row blocks that overlap.
// Each asserts the status and the message.
#include <gtest/gtest.h>
#include <hdf5.h>

#include <filesystem>
#include <fstream>

#include "checkpoint_fixture.hpp"
#include "io/h5.hpp"
#include "test_util.hpp"

using namespace lodestone;

namespace {

const std::int64_t kRows = 24;

std::string write_fixture(MPI_Comm comm, const std::string& name) {
  std::string path = test::temp_path(comm, name);
  Status s = write_checkpoint(comm, path, test::fixture_for_rank(comm, kRows));
  EXPECT_TRUE(s.is_ok()) << s.message();
  return path;
}

Result<Checkpoint> read_mine(MPI_Comm comm, const std::string& path) {
  auto r = even_split(kRows, comm_rank(comm), comm_size(comm));
  return read_checkpoint(comm, path, r.begin, r.end);
}

void expect_refusal(const Status& s, std::initializer_list<const char*> words) {
  ASSERT_FALSE(s.is_ok());
  EXPECT_EQ(s.kind(), ErrorKind::input);
  EXPECT_EQ(s.exit_code(), 1);
  for (const char* w : words) EXPECT_NE(s.message().find(w), std::string::npos) << "'" << w << "' not in: " << s.message();
}

// Rewrites one root attribute with serial HDF5 on rank 0.
void set_root_attribute(MPI_Comm comm, const std::string& path, const char* name, std::int64_t value,
                        const char* text = nullptr) {
  if (comm_rank(comm) == 0) {
    h5::Handle f(H5Fopen(path.c_str(), H5F_ACC_RDWR, H5P_DEFAULT));
    ASSERT_TRUE(f.valid());
    h5::Handle root(H5Gopen2(f.get(), "/", H5P_DEFAULT));
    Status s = text ? h5::write_string_attribute(root.get(), name, text) : h5::write_int_attribute(root.get(), name, value);
    EXPECT_TRUE(s.is_ok());
    root.close();
    EXPECT_TRUE(f.close_file());
  }
  MPI_Barrier(comm);
}

}  // namespace

TEST(CheckpointRefusals, SameRunIsAccepted) {
  MPI_Comm comm = MPI_COMM_WORLD;
  auto c = read_mine(comm, write_fixture(comm, "ok.ckpt.h5"));
  ASSERT_TRUE(c.is_ok()) << c.status().message();
  EXPECT_TRUE(check_resumable(*c, test::fixture_identity(kRows), "ok.h5").is_ok());
}

TEST(CheckpointRefusals, DifferentMatrix) {
  MPI_Comm comm = MPI_COMM_WORLD;
  auto c = read_mine(comm, write_fixture(comm, "m.ckpt.h5"));
  ASSERT_TRUE(c.is_ok()) << c.status().message();
  RunIdentity other = test::fixture_identity(kRows);
  other.matrix_fingerprint ^= 1;
  expect_refusal(check_resumable(*c, other, "m.h5"),
                 {"m.h5", "different matrix", "fingerprint", "fedcba9876543210", "fedcba9876543211"});
  RunIdentity bigger = test::fixture_identity(kRows + 1);
  expect_refusal(check_resumable(*c, bigger, "m.h5"), {"different matrix", "24 rows", "25 rows"});
}

TEST(CheckpointRefusals, EachIncompatibleOption) {
  MPI_Comm comm = MPI_COMM_WORLD;
  auto c = read_mine(comm, write_fixture(comm, "o.ckpt.h5"));
  ASSERT_TRUE(c.is_ok()) << c.status().message();
  const std::pair<const char*, const char*> changes[] = {{"pairs", "4"},        {"selection", "largest"},
                                                         {"method", "power"},   {"tolerance", "1e-10"},
                                                         {"seed", "8"},         {"block_size", "6"},
                                                         {"shift", "0.5"}};
  for (auto [name, value] : changes) {
    RunIdentity want = test::fixture_identity(kRows);
    const std::string was = want.options[name];
    want.options[name] = value;
    expect_refusal(check_resumable(*c, want, "o.h5"),
                   {"different options", (std::string("'") + name + "'").c_str(), was.c_str(), value});
  }
  // An option the checkpoint did not have.
  RunIdentity extra = test::fixture_identity(kRows);
  extra.options["filter_degree"] = "12";
  expect_refusal(check_resumable(*c, extra, "o.h5"), {"'filter_degree'", "not set", "12"});
}

TEST(CheckpointRefusals, NewerAndUnknownFormatVersion) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string path = write_fixture(comm, "v.ckpt.h5");
  set_root_attribute(comm, path, "format_version", kCheckpointFormatVersion + 1);
  expect_refusal(read_mine(comm, path).status(), {"format version 2", "newer", "up to 1"});
  set_root_attribute(comm, path, "format_version", 0);
  expect_refusal(read_mine(comm, path).status(), {"unknown checkpoint format version 0"});
}

TEST(CheckpointRefusals, NotACheckpoint) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string path = write_fixture(comm, "k.ckpt.h5");
  set_root_attribute(comm, path, "file_kind", 0, "result");
  EXPECT_FALSE(is_checkpoint_file(comm, path));
  expect_refusal(read_mine(comm, path).status(), {"not a checkpoint", "'result'"});
}

TEST(CheckpointRefusals, TruncatedFile) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string path = write_fixture(comm, "t.ckpt.h5");
  if (comm_rank(comm) == 0) std::filesystem::resize_file(path, std::filesystem::file_size(path) / 2);
  MPI_Barrier(comm);
  expect_refusal(read_mine(comm, path).status(), {"t.ckpt.h5", "truncated"});
}

TEST(CheckpointRefusals, GarbageFile) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string path = test::temp_path(comm, "g.ckpt.h5");
  if (comm_rank(comm) == 0) std::ofstream(path) << std::string(4096, 'x');
  MPI_Barrier(comm);
  EXPECT_FALSE(is_checkpoint_file(comm, path));
  expect_refusal(read_mine(comm, path).status(), {"g.ckpt.h5", "not an HDF5 file"});
}

TEST(CheckpointRefusals, FlippedValueFailsItsChecksum) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string path = write_fixture(comm, "c.ckpt.h5");
  if (comm_rank(comm) == 0) {
    h5::Handle f(H5Fopen(path.c_str(), H5F_ACC_RDWR, H5P_DEFAULT));
    h5::Handle d(H5Dopen2(f.get(), "/state/blocks/basis", H5P_DEFAULT));
    ASSERT_TRUE(d.valid());
    double v = 0;
    hsize_t start[2] = {2, 7}, count[2] = {1, 1}, one = 1;
    h5::Handle fs(H5Dget_space(d.get())), ms(H5Screate_simple(1, &one, nullptr));
    H5Sselect_hyperslab(fs.get(), H5S_SELECT_SET, start, nullptr, count, nullptr);
    H5Dread(d.get(), H5T_NATIVE_DOUBLE, ms.get(), fs.get(), H5P_DEFAULT, &v);
    v = std::nextafter(v, 2.0);  // the smallest possible change
    H5Dwrite(d.get(), H5T_NATIVE_DOUBLE, ms.get(), fs.get(), H5P_DEFAULT, &v);
    d.close();
    EXPECT_TRUE(f.close_file());
  }
  MPI_Barrier(comm);
  expect_refusal(read_mine(comm, path).status(), {"damaged checkpoint", "block 'basis'", "checksum"});
}

TEST(CheckpointRefusals, OverlappingRowBlocksAreNotWritten) {
  MPI_Comm comm = MPI_COMM_WORLD;
  if (comm_size(comm) < 2) GTEST_SKIP() << "needs two ranks";
  // Every rank after the first takes its rows one earlier: the counts still add up to
  // kRows, but one row is held twice and the last by no rank.
  auto r = even_split(kRows, comm_rank(comm), comm_size(comm));
  const std::int64_t shift = comm_rank(comm) > 0 ? 1 : 0;
  std::string path = test::temp_path(comm, "overlap.ckpt.h5");
  Status s = write_checkpoint(comm, path, test::fixture_checkpoint(kRows, r.begin - shift, r.end - shift));
  expect_refusal(s, {"contiguous"});
  EXPECT_FALSE(std::filesystem::exists(path));
}
