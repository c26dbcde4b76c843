// Fuzz target: the Matrix Market line parsers (io/mm_parse.hpp).
//
// The input is the text of a Matrix Market file. Its first line goes to the
// banner parser and its second to the size parser; every further line is parsed
// as a data line under that banner and size, and also under a fixed banner and
// size, so mutations of data lines are exercised even when the header is broken.
// Accepted lines must obey the format's rules: indices inside the matrix, the
// stored triangle for symmetric and skew-symmetric files, finite values, 1 for
// pattern entries. The array layout cursor must walk only stored positions.
// A refusal must be an input error with a message. Anything else aborts.
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <string_view>

#include "io/mm_parse.hpp"

namespace mm = lodestone::io::mm;
using lodestone::ErrorKind;

namespace {
[[noreturn]] void fail(const char* what, std::string_view line) {
  std::fprintf(stderr, "fuzz oracle: %s (line '%.*s')\n", what, static_cast<int>(line.size()), line.data());
  std::abort();
}

template <class R>
bool accepted(const R& r, std::string_view line) {
  if (r) return true;
  if (r.status().kind() != ErrorKind::input || r.status().message().empty())
    fail("a refusal is not an input error with a message", line);
  return false;
}

bool stored(const mm::Banner& b, std::int64_t row, std::int64_t col) {
  if (b.symmetry == mm::Symmetry::symmetric) return row >= col;
  if (b.symmetry == mm::Symmetry::skew_symmetric) return row > col;
  return true;
}

void check_data_line(std::string_view line, const mm::Banner& b, const mm::Size& s) {
  if (b.format == mm::Format::coordinate) {
    auto e = mm::parse_coordinate_line(line, b, s);
    if (!accepted(e, line)) return;
    if (e->row < 0 || e->row >= s.rows || e->col < 0 || e->col >= s.cols) fail("an index is outside the matrix", line);
    if (!stored(b, e->row, e->col)) fail("an entry outside the stored triangle was accepted", line);
    if (!std::isfinite(e->value)) fail("a value is not finite", line);
    if (b.field == mm::Field::pattern && e->value != 1.0) fail("a pattern entry is not 1", line);
    if (b.field == mm::Field::integer && e->value != std::trunc(e->value)) fail("an integer entry has a fraction", line);
  } else {
    auto v = mm::parse_array_line(line, b);
    if (accepted(v, line) && !std::isfinite(*v)) fail("a value is not finite", line);
  }
}

// The cursor at k (and the k that follow) must point into the stored part.
void check_cursor(const mm::Banner& b, const mm::Size& s, std::uint64_t seed) {
  if (b.format != mm::Format::array || s.entries <= 0) return;
  const std::int64_t k = static_cast<std::int64_t>(seed % static_cast<std::uint64_t>(s.entries));
  mm::ArrayCursor c(s.rows, b.symmetry, k);
  for (std::int64_t i = k; i < s.entries && i < k + 64; ++i) {
    if (c.row() < 0 || c.row() >= s.rows || c.col() < 0 || c.col() >= s.cols) fail("the array cursor left the matrix", "");
    if (!stored(b, c.row(), c.col())) fail("the array cursor left the stored triangle", "");
    c.next();
  }
}
}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size > 8192) return 0;
  std::string_view text(reinterpret_cast<const char*>(data), size);
  const mm::Banner fixed_banner{mm::Format::coordinate, mm::Field::real, mm::Symmetry::symmetric};
  const mm::Size fixed_size{5, 5, 10};
  mm::Banner banner = fixed_banner;
  mm::Size msize = fixed_size;
  bool have_banner = false, have_size = false;
  std::uint64_t seed = 1469598103934665603ULL;
  int index = 0;
  while (!text.empty()) {
    const std::size_t nl = text.find('\n');
    const std::string_view line = text.substr(0, nl);
    text.remove_prefix(nl == std::string_view::npos ? text.size() : nl + 1);
    for (char ch : line) seed = (seed ^ static_cast<unsigned char>(ch)) * 1099511628211ULL;
    mm::is_skippable(line);
    if (index == 0) {
      auto b = mm::parse_banner(line);
      if (accepted(b, line)) banner = *b, have_banner = true;
    } else if (index == 1 && have_banner) {
      auto s = mm::parse_size(line, banner);
      if (accepted(s, line)) {
        if (s->rows < 1 || s->rows != s->cols || s->entries < 0) fail("a size line gave an impossible size", line);
        msize = *s, have_size = true;
        check_cursor(banner, msize, seed);
      }
    } else {
      if (have_size) check_data_line(line, banner, msize);
      check_data_line(line, fixed_banner, fixed_size);
    }
    ++index;
  }
  return 0;
}
