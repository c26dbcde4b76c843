// Parsing the lines of a Matrix Market file (the NIST exchange format).
//
// Pure functions, one per kind of line: the banner (first line), the size
// line, and the data lines of the coordinate and array formats. They know
// nothing of files, ranks or line numbers: each returns the value or a Status
// whose message describes the defect in a few words; the caller prefixes the
// file name and line number. Indices come back 0-based.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>

#include "lodestone/status.hpp"

namespace lodestone::io::mm {

enum class Format { coordinate, array };
enum class Field { real, integer, pattern };
enum class Symmetry { general, symmetric, skew_symmetric };

struct Banner {
  Format format = Format::coordinate;
  Field field = Field::real;
  Symmetry symmetry = Symmetry::general;
};

struct Size {
  std::int64_t rows = 0;
  std::int64_t cols = 0;
  // Data lines the file must hold: the declared count (coordinate), or the
  // values of the stored part of the matrix (array; only the lower triangle
  // for symmetric, the strict lower triangle for skew-symmetric).
  std::int64_t entries = 0;
};

struct Entry {
  std::int64_t row = 0;  // 0-based
  std::int64_t col = 0;  // 0-based
  double value = 0;
};

const char* format_name(Format f);
const char* field_name(Field f);
const char* symmetry_name(Symmetry s);

// A comment line starts with '%'; a blank line holds only spaces and tabs.
// Both may appear anywhere after the banner and are skipped.
bool is_skippable(std::string_view line);

// The compression a file's first bytes announce ("gzip", say), or "" if none:
// such a file must be decompressed before it is imported.
std::string_view compression_of(std::string_view first_bytes);

// File text fit for a one-line message: bytes outside printable ASCII are
// written as \xHH, and text longer than `keep` bytes is cut short with "...".
std::string quote(std::string_view text, std::size_t keep = 37);

// "%%MatrixMarket matrix <format> <field> <symmetry>", words case-insensitive.
// Refuses complex and hermitian (real arithmetic only), pattern with array.
Result<Banner> parse_banner(std::string_view line);

// "M N NNZ" (coordinate) or "M N" (array); refuses a non-square matrix.
Result<Size> parse_size(std::string_view line, const Banner& banner);

// "I J [VALUE]" with 1-based I, J in range; the value must be present for
// real and integer fields and absent for pattern (which reads as 1). For
// symmetric files only the lower triangle may be stored, for skew-symmetric
// only the strict lower triangle.
Result<Entry> parse_coordinate_line(std::string_view line, const Banner& banner, const Size& size);

// One value per line (array format).
Result<double> parse_array_line(std::string_view line, const Banner& banner);

// Where the array format's k-th stored value (0-based) goes: the file lists
// the stored part of the matrix column by column. next() moves to k+1.
class ArrayCursor {
 public:
  ArrayCursor(std::int64_t n, Symmetry symmetry, std::int64_t k);
  std::int64_t row() const { return row_; }
  std::int64_t col() const { return col_; }
  void next();

 private:
  std::int64_t first_row(std::int64_t col) const;
  std::int64_t n_;
  Symmetry symmetry_;
  std::int64_t row_ = 0, col_ = 0;
};

}  // namespace lodestone::io::mm
