// Chunked line reading over byte ranges (io/mm_lines.hpp).
#include "io/mm_lines.hpp"

#include <fcntl.h>
#include <fmt/format.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstring>

namespace lodestone::io::mm {

Result<InputFile> InputFile::open(const std::string& path) {
  int fd = ::open(path.c_str(), O_RDONLY);
  if (fd < 0) return Status::input(fmt::format("{}: cannot open: {}", path, std::strerror(errno)));
  struct stat st {};
  if (::fstat(fd, &st) != 0 || !S_ISREG(st.st_mode)) {
    ::close(fd);
    return Status::input(fmt::format("{}: not a regular file", path));
  }
  return InputFile(fd, static_cast<std::int64_t>(st.st_size));
}

InputFile::~InputFile() {
  if (fd_ >= 0) ::close(fd_);
}

std::string too_long_message(std::size_t max_line) {
  return fmt::format("longer than {} bytes (a file with CR-only line ends, or not a text file?)", max_line);
}

LineReader::LineReader(int fd, std::int64_t begin, std::int64_t end, std::size_t chunk_bytes, std::size_t max_line)
    : fd_(fd), file_pos_(begin), end_(end), chunk_(std::max<std::size_t>(chunk_bytes, 1)), max_line_(max_line) {}

// Appends up to one chunk after the unread part; false if nothing was added.
bool LineReader::fill() {
  if (file_pos_ >= end_ || !status_) return false;
  if (pos_ > 0) {
    std::memmove(buf_.data(), buf_.data() + pos_, len_ - pos_);
    len_ -= pos_;
    pos_ = 0;
  }
  const std::size_t want = static_cast<std::size_t>(std::min<std::int64_t>(static_cast<std::int64_t>(chunk_), end_ - file_pos_));
  if (buf_.size() < len_ + want) buf_.resize(std::max(len_ + want, 2 * buf_.size()));
  std::size_t got = 0;
  while (got < want) {
    ssize_t r = ::pread(fd_, buf_.data() + len_ + got, want - got, static_cast<off_t>(file_pos_ + static_cast<std::int64_t>(got)));
    if (r < 0 && errno == EINTR) continue;
    if (r <= 0) {
      status_ = Status::input(r < 0 ? fmt::format("read failed: {}", std::strerror(errno))
                                    : std::string("the file became shorter while it was read"));
      return false;
    }
    got += static_cast<std::size_t>(r);
  }
  len_ += got;
  file_pos_ += static_cast<std::int64_t>(got);
  return true;
}

bool LineReader::next(std::string_view& line) {
  std::size_t searched = pos_;
  for (;;) {
    const char* begin = buf_.data() + pos_;
    const void* nl = len_ > searched ? std::memchr(buf_.data() + searched, '\n', len_ - searched) : nullptr;
    const std::size_t at = nl ? static_cast<std::size_t>(static_cast<const char*>(nl) - buf_.data()) : len_;
    // The same verdict whatever the chunk size: a line is refused once it has
    // more than max_line bytes, and the buffer never holds much more than that.
    if (at - pos_ > max_line_) {
      status_ = Status::input(too_long_message(max_line_));
      return false;
    }
    if (nl) {
      line = std::string_view(begin, at - pos_);
      pos_ = at + 1;
      return true;
    }
    const std::size_t done = len_ - pos_;  // bytes already searched, relative to pos_
    if (!fill()) break;
    searched = pos_ + done;
  }
  if (!status_ || pos_ >= len_) return false;
  line = std::string_view(buf_.data() + pos_, len_ - pos_);  // last line, no newline
  pos_ = len_;
  return true;
}

Result<std::int64_t> line_start_at_or_after(int fd, std::int64_t lo, std::int64_t b, std::int64_t size,
                                            std::size_t max_line) {
  if (b <= lo) return lo;
  if (b >= size) return size;
  // b starts a line if the byte before it is a newline; otherwise skip to after the next one.
  LineReader r(fd, b - 1, size, 4096, max_line);
  std::string_view line;
  if (!r.next(line)) {
    if (r.status().is_ok()) return size;
    // Which line this is would take counting every line before it: say where it is.
    return Status::input(fmt::format("the line running through byte {} is {}", b, r.status().message()));
  }
  return r.offset();
}

Result<ByteRange> line_aligned_share(int fd, std::int64_t lo, std::int64_t size, int part, int parts,
                                     std::size_t max_line) {
  const std::int64_t bytes = size - lo;
  auto at = [&](int k) { return lo + static_cast<std::int64_t>(static_cast<__int128>(bytes) * k / parts); };
  auto b = line_start_at_or_after(fd, lo, at(part), size, max_line);
  if (!b) return b.status();
  auto e = line_start_at_or_after(fd, lo, at(part + 1), size, max_line);
  if (!e) return e.status();
  return ByteRange{*b, *e};
}

}  // namespace lodestone::io::mm
