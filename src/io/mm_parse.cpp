// Line parsers of the Matrix Market format (io/mm_parse.hpp).
#include "io/mm_parse.hpp"

#include <fmt/format.h>

#include <algorithm>
#include <cctype>
#include <charconv>
#include <cmath>
#include <cstdlib>
#include <limits>
#include <optional>
#include <utility>
#include <vector>

namespace lodestone::io::mm {
namespace {

// Splits on spaces and tabs; a trailing carriage return (CRLF files) is ignored.
std::vector<std::string_view> words(std::string_view line) {
  std::vector<std::string_view> out;
  std::size_t i = 0;
  while (i < line.size()) {
    while (i < line.size() && (line[i] == ' ' || line[i] == '\t' || line[i] == '\r')) ++i;
    std::size_t j = i;
    while (j < line.size() && line[j] != ' ' && line[j] != '\t' && line[j] != '\r') ++j;
    if (j > i) out.push_back(line.substr(i, j - i));
    i = j;
  }
  return out;
}

std::string lower(std::string_view s) {
  std::string out(s);
  for (auto& c : out) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return out;
}

std::optional<std::int64_t> to_int(std::string_view s) {
  if (!s.empty() && s[0] == '+') s.remove_prefix(1);
  if (s.empty() || s[0] == '+') return std::nullopt;
  std::int64_t v = 0;
  auto [p, ec] = std::from_chars(s.data(), s.data() + s.size(), v);
  if (ec != std::errc() || p != s.data() + s.size()) return std::nullopt;
  return v;
}

enum class RealError { none, not_number, not_finite };

RealError to_real(std::string_view s, double& out) {
  std::string_view t = s;
  if (!t.empty() && t[0] == '+') t.remove_prefix(1);
  if (t.empty() || t[0] == '+') return RealError::not_number;
  auto [p, ec] = std::from_chars(t.data(), t.data() + t.size(), out);
  if (p != t.data() + t.size() || ec == std::errc::invalid_argument) return RealError::not_number;
  if (ec == std::errc::result_out_of_range) {
    // Underflow reads as (nearly) zero; overflow is not a finite number.
    std::string copy(t);
    out = std::strtod(copy.c_str(), nullptr);
    if (std::isinf(out)) return RealError::not_finite;
    return RealError::none;
  }
  if (!std::isfinite(out)) return RealError::not_finite;
  return RealError::none;
}

Status bad(std::string text) { return Status::input(std::move(text)); }

}  // namespace

std::string_view compression_of(std::string_view first_bytes) {
  static constexpr std::pair<std::string_view, std::string_view> kSignatures[] = {
      {std::string_view("\x1f\x8b", 2), "gzip"},
      {std::string_view("\xfd" "7zXZ\0", 6), "xz"},
      {std::string_view("\x28\xb5\x2f\xfd", 4), "zstd"},
  };
  for (const auto& [magic, name] : kSignatures)
    if (first_bytes.substr(0, magic.size()) == magic) return name;
  return {};
}

// Quoted, with a NUL or a control byte that would cut the message or reach the
// terminal shown as \xHH instead; shortened so the message stays one short line.
std::string quote(std::string_view text, std::size_t keep) {
  const bool cut = text.size() > keep + 3;
  std::string out = "'";
  for (unsigned char c : cut ? text.substr(0, keep) : text) {
    if (c >= 0x20 && c < 0x7f) out += static_cast<char>(c);
    else out += fmt::format("\\x{:02x}", c);
  }
  out += cut ? "...'" : "'";
  return out;
}

namespace {

Result<double> parse_value(std::string_view tok, Field field) {
  if (field == Field::integer) {
    auto v = to_int(tok);
    if (!v) {
      double d = 0;
      if (to_real(tok, d) == RealError::none) return bad(fmt::format("value {} is not an integer (field 'integer')", quote(tok)));
      return bad(fmt::format("value {} is not a number", quote(tok)));
    }
    return static_cast<double>(*v);
  }
  double d = 0;
  switch (to_real(tok, d)) {
    case RealError::not_number: return bad(fmt::format("value {} is not a number", quote(tok)));
    case RealError::not_finite: return bad(fmt::format("value {} is not finite (NaN and Inf are refused)", quote(tok)));
    case RealError::none: break;
  }
  return d;
}

Result<std::int64_t> parse_index(std::string_view tok, const char* which, std::int64_t n) {
  auto v = to_int(tok);
  if (!v) return bad(fmt::format("{} index {} is not an integer", which, quote(tok)));
  if (*v < 1 || *v > n) return bad(fmt::format("{} index {} is out of range 1..{} (indices are 1-based)", which, *v, n));
  return *v - 1;
}

}  // namespace

const char* format_name(Format f) { return f == Format::coordinate ? "coordinate" : "array"; }
const char* field_name(Field f) {
  return f == Field::real ? "real" : f == Field::integer ? "integer" : "pattern";
}
const char* symmetry_name(Symmetry s) {
  return s == Symmetry::general ? "general" : s == Symmetry::symmetric ? "symmetric" : "skew-symmetric";
}

bool is_skippable(std::string_view line) {
  for (char c : line) {
    if (c == '%') return true;
    if (c != ' ' && c != '\t' && c != '\r') return false;
  }
  return true;
}

Result<Banner> parse_banner(std::string_view line) {
  auto w = words(line);
  if (w.empty() || lower(w[0]) != "%%matrixmarket")
    return bad(fmt::format("expected the banner '%%MatrixMarket matrix FORMAT FIELD SYMMETRY', found {}",
                           quote(line.substr(0, std::min<std::size_t>(line.size(), 60)))));
  if (w.size() != 5)
    return bad(fmt::format("the banner has {} words; expected '%%MatrixMarket matrix FORMAT FIELD SYMMETRY'", w.size()));
  if (lower(w[1]) != "matrix") return bad(fmt::format("object {} is not supported (only 'matrix')", quote(w[1])));
  Banner b;
  const std::string format = lower(w[2]), field = lower(w[3]), sym = lower(w[4]);
  if (format == "coordinate") b.format = Format::coordinate;
  else if (format == "array") b.format = Format::array;
  else return bad(fmt::format("unknown format {} (expected coordinate or array)", quote(w[2])));
  if (field == "real") b.field = Field::real;
  else if (field == "integer") b.field = Field::integer;
  else if (field == "pattern") b.field = Field::pattern;
  else if (field == "complex") return bad("complex matrices are not supported (real arithmetic only)");
  else return bad(fmt::format("unknown field {} (expected real, integer or pattern)", quote(w[3])));
  if (sym == "general") b.symmetry = Symmetry::general;
  else if (sym == "symmetric") b.symmetry = Symmetry::symmetric;
  else if (sym == "skew-symmetric") b.symmetry = Symmetry::skew_symmetric;
  else if (sym == "hermitian") return bad("hermitian matrices are not supported (real arithmetic only)");
  else return bad(fmt::format("unknown symmetry {} (expected general, symmetric or skew-symmetric)", quote(w[4])));
  if (b.field == Field::pattern && b.format == Format::array)
    return bad("field 'pattern' is only allowed with the coordinate format");
  return b;
}

Result<Size> parse_size(std::string_view line, const Banner& banner) {
  auto w = words(line);
  const bool coo = banner.format == Format::coordinate;
  const std::size_t want = coo ? 3 : 2;
  if (w.size() != want)
    return bad(fmt::format("bad size line {}: expected '{}'", quote(line), coo ? "ROWS COLS ENTRIES" : "ROWS COLS"));
  std::int64_t v[3] = {0, 0, 0};
  for (std::size_t i = 0; i < want; ++i) {
    auto x = to_int(w[i]);
    if (!x || *x < 0) return bad(fmt::format("bad size line: {} is not a non-negative integer", quote(w[i])));
    v[i] = *x;
  }
  Size s{v[0], v[1], v[2]};
  if (s.rows < 1 || s.cols < 1) return bad("bad size line: the matrix must have at least one row and one column");
  if (s.rows != s.cols)
    return bad(fmt::format("the matrix is {} x {}, but eigenpairs need a square matrix", s.rows, s.cols));
  if (!coo) {
    const std::int64_t n = s.rows;
    if (n > 3037000499LL) return bad(fmt::format("bad size line: {} x {} is too large for the array format", n, n));
    s.entries = banner.symmetry == Symmetry::general     ? n * n
                : banner.symmetry == Symmetry::symmetric ? n * (n + 1) / 2
                                                         : n * (n - 1) / 2;
  }
  return s;
}

Result<Entry> parse_coordinate_line(std::string_view line, const Banner& banner, const Size& size) {
  auto w = words(line);
  const bool pattern = banner.field == Field::pattern;
  const std::size_t want = pattern ? 2 : 3;
  if (w.size() < want)
    return bad(fmt::format("expected '{}', found {}", pattern ? "ROW COL" : "ROW COL VALUE", quote(line)));
  Entry e;
  auto r = parse_index(w[0], "row", size.rows);
  if (!r) return r.status();
  auto c = parse_index(w[1], "column", size.cols);
  if (!c) return c.status();
  e.row = *r;
  e.col = *c;
  if (w.size() > want) {
    if (pattern) return bad(fmt::format("a pattern entry holds only ROW COL, found a value {}", quote(w[2])));
    return bad(fmt::format("unexpected text {} after the value", quote(w[3])));
  }
  if (pattern) {
    e.value = 1.0;
  } else {
    auto v = parse_value(w[2], banner.field);
    if (!v) return v.status();
    e.value = *v;
  }
  if (banner.symmetry == Symmetry::symmetric && e.col > e.row)
    return bad(fmt::format("entry ({}, {}) lies above the diagonal; a symmetric file stores only the lower triangle",
                           e.row + 1, e.col + 1));
  if (banner.symmetry == Symmetry::skew_symmetric && e.col >= e.row)
    return bad(fmt::format("entry ({}, {}) is not below the diagonal; a skew-symmetric file stores only the strict "
                           "lower triangle", e.row + 1, e.col + 1));
  return e;
}

Result<double> parse_array_line(std::string_view line, const Banner& banner) {
  auto w = words(line);
  if (w.empty()) return bad("expected a value");
  if (w.size() > 1) return bad(fmt::format("expected one value per line (array format), found {}", quote(line)));
  return parse_value(w[0], banner.field);
}

// Column j of the stored part starts at row first_row(j) and holds n - first_row(j) values.
std::int64_t ArrayCursor::first_row(std::int64_t col) const {
  return symmetry_ == Symmetry::general ? 0 : symmetry_ == Symmetry::symmetric ? col : col + 1;
}

ArrayCursor::ArrayCursor(std::int64_t n, Symmetry symmetry, std::int64_t k) : n_(n), symmetry_(symmetry) {
  // Values stored before column j: sum over c < j of (n - first_row(c)).
  auto start = [&](std::int64_t j) -> __int128 {
    const __int128 jj = j, nn = n;
    if (symmetry == Symmetry::general) return jj * nn;
    if (symmetry == Symmetry::symmetric) return jj * nn - jj * (jj - 1) / 2;
    return jj * nn - jj * (jj + 1) / 2;
  };
  std::int64_t lo = 0, hi = n;  // largest j in [0, n) with start(j) <= k
  while (hi - lo > 1) {
    const std::int64_t mid = lo + (hi - lo) / 2;
    if (start(mid) <= k) lo = mid;
    else hi = mid;
  }
  col_ = lo;
  row_ = first_row(lo) + static_cast<std::int64_t>(k - start(lo));
  if (row_ >= n_) {  // k past the last value of a column (only when columns are empty)
    col_ = n_;
    row_ = 0;
  }
}

void ArrayCursor::next() {
  ++row_;
  while (row_ >= n_ && col_ < n_) {
    ++col_;
    row_ = col_ < n_ ? first_row(col_) : 0;
  }
}

}  // namespace lodestone::io::mm
