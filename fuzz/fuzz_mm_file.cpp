// Fuzz target: importing a whole Matrix Market file (io/mm_import.hpp) on one rank.
//
// The input is written as the file's bytes. It is imported twice: with large
// read chunks, and with tiny read chunks and exchange rounds chosen from the
// input (so lines straddle buffer boundaries and rounds end mid-file). Both runs
// must agree exactly: the same refusal message, or the same rows. Accepted rows
// must be proper CSR (offsets rising from 0, columns strictly increasing inside
// [0, n), finite values). Files declaring more than 4096 rows are skipped: the
// harness keeps every input small; memory for huge declared sizes is a separate
// question (see the report of the robustness work).
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <optional>
#include <string>
#include <string_view>

#include "io/mm_import.hpp"
#include "io/mm_parse.hpp"
#include "matrix_spec.hpp"

namespace mm = lodestone::io::mm;
using lodestone::ErrorKind;

namespace {
[[noreturn]] void fail(const std::string& what) {
  std::fprintf(stderr, "fuzz oracle: %s\n", what.c_str());
  std::abort();
}

// The size the file declares, or 0 if its header does not parse.
std::int64_t declared_rows(std::string_view text) {
  std::optional<mm::Banner> banner;
  bool first = true;
  while (!text.empty()) {
    const std::size_t nl = text.find('\n');
    const std::string_view line = text.substr(0, nl);
    text.remove_prefix(nl == std::string_view::npos ? text.size() : nl + 1);
    if (first) {
      auto b = mm::parse_banner(line);
      if (!b) return 0;
      banner = *b;
      first = false;
      continue;
    }
    if (mm::is_skippable(line)) continue;
    auto s = mm::parse_size(line, *banner);
    return s ? s->rows : 0;
  }
  return 0;
}

void check_rows(const lodestone::io::MatrixMarketRows& m) {
  const auto& r = m.rows;
  if (r.row_begin != 0 || r.local_rows() != m.n) fail("one rank does not hold every row");
  if (r.offsets.front() != 0) fail("offsets do not start at 0");
  if (r.offsets.back() != static_cast<std::int64_t>(r.columns.size()) || r.columns.size() != r.values.size())
    fail("offsets, columns and values disagree in length");
  for (std::int64_t i = 0; i < m.n; ++i) {
    const std::int64_t b = r.offsets[static_cast<std::size_t>(i)], e = r.offsets[static_cast<std::size_t>(i) + 1];
    if (e < b) fail("offsets decrease");
    for (std::int64_t k = b; k < e; ++k) {
      const std::int64_t c = r.columns[static_cast<std::size_t>(k)];
      if (c < 0 || c >= m.n) fail("a column is outside the matrix");
      if (k > b && c <= r.columns[static_cast<std::size_t>(k) - 1]) fail("a row's columns are not strictly increasing");
      if (!std::isfinite(r.values[static_cast<std::size_t>(k)])) fail("a value is not finite");
    }
  }
}
}  // namespace

extern "C" int LLVMFuzzerInitialize(int*, char***) {
  lodestone::fuzz::start_runtime();
  return 0;
}

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  if (size > 8192) return 0;
  const std::string_view text(reinterpret_cast<const char*>(data), size);
  if (declared_rows(text) > 4096) return 0;
  static const std::string path = lodestone::fuzz::scratch_path("mm") + ".mtx";
  {
    std::ofstream out(path, std::ios::binary | std::ios::trunc);
    out.write(text.data(), static_cast<std::streamsize>(text.size()));
  }
  lodestone::io::ImportOptions big, small;
  small.chunk_bytes = 1 + size % 13;
  small.round_entries = 1 + static_cast<std::int64_t>(size % 5);
  auto a = lodestone::io::read_matrix_market(MPI_COMM_SELF, path, big);
  auto b = lodestone::io::read_matrix_market(MPI_COMM_SELF, path, small);
  std::filesystem::remove(path);
  if (a.is_ok() != b.is_ok()) fail("the read chunk size changed whether the file is accepted");
  if (!a) {
    if (a.status().kind() != ErrorKind::input || a.status().message().empty())
      fail("a refusal is not an input error with a message");
    if (a.status().message() != b.status().message())
      fail("the read chunk size changed the message: '" + a.status().message() + "' vs '" + b.status().message() + "'");
    return 0;
  }
  check_rows(*a);
  if (a->n != b->n || a->file_entries != b->file_entries || a->symmetric != b->symmetric ||
      a->rows.offsets != b->rows.offsets || a->rows.columns != b->rows.columns || a->rows.values != b->rows.values)
    fail("the read chunk size changed the imported rows");
  return 0;
}
