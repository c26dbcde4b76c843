// Line-aligned byte shares and chunked line reading (io/mm_lines.hpp).
#include <gtest/gtest.h>

#include <fstream>
#include <string>
#include <vector>

#include "io/mm_lines.hpp"
#include "support/collective.hpp"
#include "test_util.hpp"

using namespace lodestone;
using namespace lodestone::io::mm;

namespace {
std::string write_text(MPI_Comm comm, const std::string& name, const std::string& text) {
  std::string path = test::temp_path(comm, name);
  if (comm_rank(comm) == 0) std::ofstream(path, std::ios::binary) << text;
  MPI_Barrier(comm);
  return path;
}

std::vector<std::string> lines_of(const std::string& text) {
  std::vector<std::string> out;
  std::size_t i = 0;
  while (i < text.size()) {
    std::size_t j = text.find('\n', i);
    if (j == std::string::npos) j = text.size();
    out.push_back(text.substr(i, j - i));
    i = j + 1;
  }
  return out;
}
}  // namespace

TEST(MmLines, SharesCoverEveryLineOnceForAnyChunkAndPartCount) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string text = "header\n\n1 2 3\na much longer line that is longer than a small chunk\nx\n\n\nlast line no newline";
  std::string path = write_text(comm, "lines.txt", text);
  auto file = InputFile::open(path);
  ASSERT_TRUE(file.is_ok()) << file.status().message();
  const auto want = lines_of(text);
  for (std::size_t chunk : {1, 2, 5, 16, 4096})
    for (int parts = 1; parts <= 9; ++parts) {
      std::vector<std::string> got;
      std::int64_t previous_end = 0;
      for (int k = 0; k < parts; ++k) {
        auto share = line_aligned_share(file->fd(), 0, file->size(), k, parts);
        ASSERT_TRUE(share.is_ok());
        EXPECT_EQ(share->begin, previous_end) << "shares must be contiguous";
        previous_end = share->end;
        LineReader r(file->fd(), share->begin, share->end, chunk);
        std::string_view line;
        while (r.next(line)) got.emplace_back(line);
        EXPECT_TRUE(r.status().is_ok());
      }
      EXPECT_EQ(previous_end, file->size());
      EXPECT_EQ(got, want) << "chunk " << chunk << " parts " << parts;
    }
}

TEST(MmLines, OffsetPointsAtTheNextLine) {
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string path = write_text(comm, "offset.txt", "ab\ncde\n");
  auto file = InputFile::open(path);
  ASSERT_TRUE(file.is_ok());
  LineReader r(file->fd(), 0, file->size(), 2);
  std::string_view line;
  ASSERT_TRUE(r.next(line));
  EXPECT_EQ(line, "ab");
  EXPECT_EQ(r.offset(), 3);
  ASSERT_TRUE(r.next(line));
  EXPECT_EQ(line, "cde");
  EXPECT_EQ(r.offset(), 7);
  EXPECT_FALSE(r.next(line));
}

TEST(MmLines, MissingFileIsNamed) {
  auto file = InputFile::open("/nonexistent/dir/matrix.mtx");
  ASSERT_FALSE(file.is_ok());
  EXPECT_NE(file.status().message().find("/nonexistent/dir/matrix.mtx: cannot open"), std::string::npos);
}

TEST(MmLines, LongLinesAreRefusedWhateverTheChunk) {
  // With a cap of 8 bytes a line of 8 passes and one of 9 is refused, whatever
  // the chunk size: the buffer never has to hold a whole over-long line.
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string path = write_text(comm, "long.txt", "12345678\n123456789\nx\n");
  auto file = InputFile::open(path);
  ASSERT_TRUE(file.is_ok());
  for (std::size_t chunk : {1, 3, 8, 9, 64}) {
    LineReader r(file->fd(), 0, file->size(), chunk, 8);
    std::string_view line;
    ASSERT_TRUE(r.next(line)) << "chunk " << chunk;
    EXPECT_EQ(line, "12345678");
    EXPECT_FALSE(r.next(line)) << "chunk " << chunk;
    ASSERT_FALSE(r.status().is_ok()) << "chunk " << chunk;
    EXPECT_EQ(r.status().message(), "longer than 8 bytes (a file with CR-only line ends, or not a text file?)");
  }
}

TEST(MmLines, FileWithoutNewlinesIsRefusedEverywhere) {
  // A zero-filled file: one endless line. Reading it and placing a share
  // boundary inside it both fail instead of buffering it whole.
  MPI_Comm comm = MPI_COMM_WORLD;
  std::string path = write_text(comm, "zeros.txt", std::string(100, '\0'));
  auto file = InputFile::open(path);
  ASSERT_TRUE(file.is_ok());
  LineReader r(file->fd(), 0, file->size(), 4, 8);
  std::string_view line;
  EXPECT_FALSE(r.next(line));
  EXPECT_FALSE(r.status().is_ok());
  auto share = line_aligned_share(file->fd(), 0, file->size(), 1, 2, 8);
  ASSERT_FALSE(share.is_ok());
  EXPECT_EQ(share.status().message(),
            "the line running through byte 50 is longer than 8 bytes (a file with CR-only line ends, or not a text file?)");
  // The same file with a cap above its size is one (last) line.
  LineReader whole(file->fd(), 0, file->size(), 4, 100);
  ASSERT_TRUE(whole.next(line));
  EXPECT_EQ(line.size(), 100u);
}
