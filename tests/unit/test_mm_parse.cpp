// The pure Matrix Market line parsers (io/mm_parse.hpp): banner, size line,
// data lines and the array format's column-major positions.
#include <gtest/gtest.h>

#include <string>
#include <vector>

#include "io/mm_parse.hpp"

using namespace lodestone;
using namespace lodestone::io::mm;

namespace {
Banner banner(const std::string& line) {
  auto b = parse_banner(line);
  EXPECT_TRUE(b.is_ok()) << b.status().message();
  return b.is_ok() ? *b : Banner{};
}
std::string error_of(const Status& s) { return s.is_ok() ? std::string("(no error)") : s.message(); }
bool has(const std::string& text, const std::string& part) { return text.find(part) != std::string::npos; }
}  // namespace

TEST(MmBanner, ReadsEveryAcceptedKind) {
  for (const char* f : {"coordinate", "array"})
    for (const char* v : {"real", "integer", "pattern"})
      for (const char* s : {"general", "symmetric", "skew-symmetric"}) {
        const std::string line = std::string("%%MatrixMarket matrix ") + f + " " + v + " " + s;
        auto b = parse_banner(line);
        if (std::string(f) == "array" && std::string(v) == "pattern") {
          ASSERT_FALSE(b.is_ok()) << line;
          EXPECT_TRUE(has(b.status().message(), "pattern")) << b.status().message();
          continue;
        }
        ASSERT_TRUE(b.is_ok()) << line << ": " << b.status().message();
        EXPECT_STREQ(format_name(b->format), f);
        EXPECT_STREQ(field_name(b->field), v);
        EXPECT_STREQ(symmetry_name(b->symmetry), s);
      }
}

TEST(MmBanner, WordsAreCaseInsensitiveAndSpacingFree) {
  Banner b = banner("%%MatrixMarket   MATRIX\tCoordinate Real  Symmetric\r");
  EXPECT_EQ(b.format, Format::coordinate);
  EXPECT_EQ(b.field, Field::real);
  EXPECT_EQ(b.symmetry, Symmetry::symmetric);
}

TEST(MmBanner, RefusesWhatItCannotRead) {
  EXPECT_TRUE(has(error_of(parse_banner("%%MatrixMarket matrix coordinate complex general").status()), "complex"));
  EXPECT_TRUE(has(error_of(parse_banner("%%MatrixMarket matrix coordinate real hermitian").status()), "hermitian"));
  EXPECT_TRUE(has(error_of(parse_banner("%%MatrixMarket matrix sparse real general").status()), "unknown format 'sparse'"));
  EXPECT_TRUE(has(error_of(parse_banner("%%MatrixMarket matrix coordinate double general").status()), "unknown field 'double'"));
  EXPECT_TRUE(has(error_of(parse_banner("%%MatrixMarket matrix coordinate real upper").status()), "unknown symmetry 'upper'"));
  EXPECT_TRUE(has(error_of(parse_banner("%%MatrixMarket vector coordinate real general").status()), "object 'vector'"));
  EXPECT_TRUE(has(error_of(parse_banner("%MatrixMarket matrix coordinate real general").status()), "expected the banner"));
  EXPECT_TRUE(has(error_of(parse_banner("").status()), "expected the banner"));
  EXPECT_TRUE(has(error_of(parse_banner("%%MatrixMarket matrix coordinate real").status()), "has 4 words"));
}

TEST(MmSize, CoordinateAndArray) {
  Banner coo = banner("%%MatrixMarket matrix coordinate real general");
  auto s = parse_size("  5  5  8", coo);
  ASSERT_TRUE(s.is_ok()) << s.status().message();
  EXPECT_EQ(s->rows, 5);
  EXPECT_EQ(s->entries, 8);
  // Array sizes count the stored part: all, the lower triangle, the strict lower triangle.
  EXPECT_EQ(parse_size("4 4", banner("%%MatrixMarket matrix array real general"))->entries, 16);
  EXPECT_EQ(parse_size("4 4", banner("%%MatrixMarket matrix array real symmetric"))->entries, 10);
  EXPECT_EQ(parse_size("4 4", banner("%%MatrixMarket matrix array real skew-symmetric"))->entries, 6);
}

TEST(MmSize, RefusesBadSizeLines) {
  Banner coo = banner("%%MatrixMarket matrix coordinate real general");
  Banner arr = banner("%%MatrixMarket matrix array real general");
  EXPECT_TRUE(has(error_of(parse_size("5 5", coo).status()), "ROWS COLS ENTRIES"));
  EXPECT_TRUE(has(error_of(parse_size("5 5 8", arr).status()), "ROWS COLS"));
  EXPECT_TRUE(has(error_of(parse_size("5 x 8", coo).status()), "'x' is not a non-negative integer"));
  EXPECT_TRUE(has(error_of(parse_size("5 5 -1", coo).status()), "'-1' is not a non-negative integer"));
  EXPECT_TRUE(has(error_of(parse_size("0 0 0", coo).status()), "at least one row"));
  EXPECT_TRUE(has(error_of(parse_size("4 3 2", coo).status()), "4 x 3, but eigenpairs need a square matrix"));
}

// The example file in the Matrix Market format specification (NIST, "The
// Matrix Market Exchange Formats: Initial Design"): a 5 x 5 real general
// matrix with 8 entries, recalled from memory.
TEST(MmEntry, SpecificationCoordinateExampleLines) {
  Banner b = banner("%%MatrixMarket matrix coordinate real general");
  Size size = parse_size("  5  5  8", b).value();
  const std::vector<std::string> lines = {"    1     1   1.000e+00", "    2     2   1.050e+01", "    3     3   1.500e-02",
                                          "    1     4   6.000e+00", "    4     2   2.505e+02", "    4     4  -2.800e+02",
                                          "    4     5   3.332e+01", "    5     5   1.200e+01"};
  const std::vector<Entry> want = {{0, 0, 1.0},    {1, 1, 10.5},  {2, 2, 0.015},   {0, 3, 6.0},
                                   {3, 1, 250.5},  {3, 3, -280.0}, {3, 4, 33.32}, {4, 4, 12.0}};
  for (std::size_t k = 0; k < lines.size(); ++k) {
    auto e = parse_coordinate_line(lines[k], b, size);
    ASSERT_TRUE(e.is_ok()) << e.status().message();
    EXPECT_EQ(e->row, want[k].row);
    EXPECT_EQ(e->col, want[k].col);
    EXPECT_DOUBLE_EQ(e->value, want[k].value);
  }
}

TEST(MmEntry, FieldsAndSpelling) {
  Size size{3, 3, 1};
  auto e = parse_coordinate_line("2\t1\t+7\r", banner("%%MatrixMarket matrix coordinate integer general"), size);
  ASSERT_TRUE(e.is_ok()) << e.status().message();
  EXPECT_EQ(e->value, 7.0);
  e = parse_coordinate_line("3 2", banner("%%MatrixMarket matrix coordinate pattern general"), size);
  ASSERT_TRUE(e.is_ok()) << e.status().message();
  EXPECT_EQ(e->value, 1.0);
  e = parse_coordinate_line("1 1 -.5E-3", banner("%%MatrixMarket matrix coordinate real general"), size);
  ASSERT_TRUE(e.is_ok()) << e.status().message();
  EXPECT_DOUBLE_EQ(e->value, -0.0005);
  e = parse_coordinate_line("1 1 1e-400", banner("%%MatrixMarket matrix coordinate real general"), size);
  ASSERT_TRUE(e.is_ok()) << "underflow reads as zero: " << e.status().message();
  EXPECT_EQ(e->value, 0.0);
}

TEST(MmEntry, RefusesDefects) {
  Size size{3, 3, 1};
  Banner real = banner("%%MatrixMarket matrix coordinate real general");
  Banner integer = banner("%%MatrixMarket matrix coordinate integer general");
  Banner pattern = banner("%%MatrixMarket matrix coordinate pattern general");
  Banner sym = banner("%%MatrixMarket matrix coordinate real symmetric");
  Banner skew = banner("%%MatrixMarket matrix coordinate real skew-symmetric");
  auto err = [&](const std::string& line, const Banner& b) { return error_of(parse_coordinate_line(line, b, size).status()); };
  EXPECT_TRUE(has(err("0 1 1.0", real), "row index 0 is out of range 1..3 (indices are 1-based)"));
  EXPECT_TRUE(has(err("1 4 1.0", real), "column index 4 is out of range 1..3"));
  EXPECT_TRUE(has(err("1.5 1 1.0", real), "row index '1.5' is not an integer"));
  EXPECT_TRUE(has(err("1 1", real), "expected 'ROW COL VALUE'"));
  EXPECT_TRUE(has(err("1 1 2.0 3.0", real), "unexpected text '3.0'"));
  EXPECT_TRUE(has(err("1 1 abc", real), "value 'abc' is not a number"));
  EXPECT_TRUE(has(err("1 1 1.0x", real), "value '1.0x' is not a number"));
  EXPECT_TRUE(has(err("1 1 nan", real), "not finite"));
  EXPECT_TRUE(has(err("1 1 -inf", real), "not finite"));
  EXPECT_TRUE(has(err("1 1 1e999", real), "not finite"));
  EXPECT_TRUE(has(err("1 1 1.5", integer), "value '1.5' is not an integer"));
  EXPECT_TRUE(has(err("1 1 2.0", pattern), "pattern entry holds only ROW COL"));
  EXPECT_TRUE(has(err("1 2 1.0", sym), "above the diagonal"));
  EXPECT_TRUE(has(err("2 2 1.0", skew), "strict lower triangle"));
  EXPECT_TRUE(parse_coordinate_line("2 2 1.0", sym, size).is_ok());
  EXPECT_TRUE(parse_coordinate_line("3 1 1.0", skew, size).is_ok());
}

TEST(MmArray, ValueLines) {
  Banner real = banner("%%MatrixMarket matrix array real general");
  EXPECT_DOUBLE_EQ(parse_array_line("  2.5e1 ", real).value(), 25.0);
  EXPECT_TRUE(has(error_of(parse_array_line("1.0 2.0", real).status()), "one value per line"));
  EXPECT_TRUE(has(error_of(parse_array_line("Inf", real).status()), "not finite"));
}

TEST(MmArray, CursorWalksTheStoredPartColumnByColumn) {
  const std::int64_t n = 4;
  struct Case {
    Symmetry s;
    std::vector<std::pair<int, int>> want;  // (row, col) in file order
  };
  std::vector<Case> cases = {
      {Symmetry::general, {}},
      {Symmetry::symmetric, {}},
      {Symmetry::skew_symmetric, {}},
  };
  for (int j = 0; j < n; ++j)
    for (int i = 0; i < n; ++i) {
      cases[0].want.push_back({i, j});
      if (i >= j) cases[1].want.push_back({i, j});
      if (i > j) cases[2].want.push_back({i, j});
    }
  for (const auto& c : cases) {
    // Starting anywhere gives the same positions as walking from the start.
    for (std::size_t start = 0; start < c.want.size(); ++start) {
      ArrayCursor at(n, c.s, static_cast<std::int64_t>(start));
      for (std::size_t k = start; k < c.want.size(); ++k, at.next()) {
        EXPECT_EQ(at.row(), c.want[k].first) << symmetry_name(c.s) << " start " << start << " k " << k;
        EXPECT_EQ(at.col(), c.want[k].second) << symmetry_name(c.s) << " start " << start << " k " << k;
      }
    }
  }
}

TEST(MmLines, CommentsAndBlankLinesAreSkipped) {
  EXPECT_TRUE(is_skippable("% a comment"));
  EXPECT_TRUE(is_skippable("   \t"));
  EXPECT_TRUE(is_skippable(""));
  EXPECT_TRUE(is_skippable("\r"));
  EXPECT_FALSE(is_skippable(" 1 2 3"));
}

TEST(MmQuote, BytesOutsidePrintableTextAreEscaped) {
  EXPECT_EQ(quote(std::string_view("a\0b\x1f" "c", 5)), "'a\\x00b\\x1fc'");
  EXPECT_EQ(quote("\xff\t"), "'\\xff\\x09'");
  EXPECT_EQ(quote(std::string(40, 'a')), "'" + std::string(40, 'a') + "'");
  std::string escaped;
  for (int i = 0; i < 37; ++i) escaped += "\\x01";
  EXPECT_EQ(quote(std::string(41, '\x01')), "'" + escaped + "...'");
  // A NUL inside a value no longer cuts the message short.
  auto v = parse_array_line(std::string_view("1\0x", 3), banner("%%MatrixMarket matrix array real general"));
  ASSERT_FALSE(v.is_ok());
  EXPECT_EQ(v.status().message(), "value '1\\x00x' is not a number");
}

TEST(MmCompression, SignaturesAreNamed) {
  EXPECT_EQ(compression_of(std::string_view("\x1f\x8b\x08\x00", 4)), "gzip");
  EXPECT_EQ(compression_of(std::string_view("\xfd" "7zXZ\0\0", 7)), "xz");
  EXPECT_EQ(compression_of("\x28\xb5\x2f\xfd"), "zstd");
  EXPECT_EQ(compression_of("%%MatrixMarket matrix coordinate real general"), "");
  EXPECT_EQ(compression_of("\x1f"), "");
  EXPECT_EQ(compression_of(""), "");
}
