// Reading a text file line by line over a byte range, in bounded chunks.
//
// The parallel Matrix Market import gives each rank an even share of the file's
// bytes, moved forward to the next line start, so every line belongs to
// exactly one rank and no rank reads more than its share plus one line.
// LineReader walks such a range with pread and a buffer that holds one chunk
// (or one line, if a line is longer than a chunk), never the whole range. A line
// may be at most kMaxLineBytes long: a file without newlines (zero-filled, with
// CR-only line ends, not text at all) is refused, not buffered whole by one rank.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "lodestone/status.hpp"

namespace lodestone::io::mm {

// An input file opened for reading (closed on destruction).
class InputFile {
 public:
  static Result<InputFile> open(const std::string& path);
  InputFile(InputFile&& o) noexcept : fd_(o.fd_), size_(o.size_) { o.fd_ = -1; }
  InputFile(const InputFile&) = delete;
  InputFile& operator=(const InputFile&) = delete;
  InputFile& operator=(InputFile&&) = delete;
  ~InputFile();
  int fd() const { return fd_; }
  std::int64_t size() const { return size_; }

 private:
  InputFile(int fd, std::int64_t size) : fd_(fd), size_(size) {}
  int fd_ = -1;
  std::int64_t size_ = 0;
};

// The longest line, without its newline, that a Matrix Market file may have;
// real data lines are under 100 bytes, comments a few hundred.
inline constexpr std::size_t kMaxLineBytes = std::size_t{1} << 20;

class LineReader {
 public:
  // Reads bytes [begin, end) of the file, at most chunk_bytes per read, lines of
  // at most max_line bytes (tests pass a small one).
  LineReader(int fd, std::int64_t begin, std::int64_t end, std::size_t chunk_bytes,
             std::size_t max_line = kMaxLineBytes);
  // The next line without its newline; false at the end of the range, on a read
  // error or at a line longer than max_line (see status()). The view is valid
  // until the next call.
  bool next(std::string_view& line);
  // Byte offset in the file where the next line starts.
  std::int64_t offset() const { return file_pos_ - static_cast<std::int64_t>(len_ - pos_); }
  const Status& status() const { return status_; }

 private:
  bool fill();
  int fd_;
  std::int64_t file_pos_, end_;
  std::size_t chunk_;
  std::size_t max_line_;
  std::vector<char> buf_;
  std::size_t pos_ = 0, len_ = 0;
  Status status_;
};

// The message for a line longer than max_line bytes, after "FILE: line N: ".
std::string too_long_message(std::size_t max_line = kMaxLineBytes);

// The first line start at or after byte b, where lo <= b <= size and lo is a
// line start. Returns size if no line starts there; fails if the line running
// through byte b is longer than max_line.
Result<std::int64_t> line_start_at_or_after(int fd, std::int64_t lo, std::int64_t b, std::int64_t size,
                                            std::size_t max_line = kMaxLineBytes);

struct ByteRange {
  std::int64_t begin = 0;
  std::int64_t end = 0;
};

// Part `part` of `parts` of the bytes [lo, size), both ends moved to line starts.
Result<ByteRange> line_aligned_share(int fd, std::int64_t lo, std::int64_t size, int part, int parts,
                                     std::size_t max_line = kMaxLineBytes);

}  // namespace lodestone::io::mm
