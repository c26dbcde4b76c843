// Parallel Matrix Market import (io/mm_import.hpp).
#include "io/mm_import.hpp"

#include <fmt/format.h>
#include <unistd.h>

#include <algorithm>
#include <limits>
#include <new>

#include "io/atomic_output.hpp"
#include "io/mm_entries.hpp"
#include "io/mm_lines.hpp"
#include "io/partition.hpp"
#include "support/collective.hpp"

namespace lodestone::io {
namespace {

using mm::Banner;
using mm::Entry;
using mm::LineReader;

// What rank 0 learns from the top of the file.
struct Header {
  Banner banner;
  mm::Size size;
  std::int64_t size_line = 0;   // line number of the size line
  std::int64_t data_begin = 0;  // byte offset of the line after it
  std::int64_t data_line = 0;   // line number of that line
};

Status at_line(const std::string& path, std::int64_t line, const Status& defect) {
  return Status::input(fmt::format("{}: line {}: {}", path, line, defect.message()));
}

// Refuses a compressed file by its first bytes, before any line is looked for.
Status check_not_compressed(const mm::InputFile& file, const std::string& path) {
  char first[8] = {};
  ssize_t got = ::pread(file.fd(), first, sizeof first, 0);
  auto kind = mm::compression_of(std::string_view(first, got > 0 ? static_cast<std::size_t>(got) : 0));
  if (kind.empty()) return Status::ok();
  return Status::input(fmt::format("{}: the file is compressed ({}); decompress it first and import the result",
                                   path, kind));
}

Result<Header> read_header(const mm::InputFile& file, const std::string& path, const ImportOptions& options) {
  LODESTONE_TRY(check_not_compressed(file, path));
  LineReader r(file.fd(), 0, file.size(), options.chunk_bytes, options.max_line_bytes);
  std::string_view line;
  Header h;
  if (!r.next(line)) {
    if (!r.status()) return at_line(path, 1, r.status());
    return Status::input(fmt::format("{}: line 1: the file is empty; expected the banner "
                                     "'%%MatrixMarket matrix FORMAT FIELD SYMMETRY'", path));
  }
  auto banner = mm::parse_banner(line);
  if (!banner) return at_line(path, 1, banner.status());
  h.banner = *banner;
  std::int64_t number = 1;
  bool found = false;
  while (r.next(line)) {
    ++number;
    if (mm::is_skippable(line)) continue;
    auto size = mm::parse_size(line, h.banner);
    if (!size) return at_line(path, number, size.status());
    h.size = *size;
    found = true;
    break;
  }
  if (!r.status()) return at_line(path, number + 1, r.status());
  if (!found) return at_line(path, number + 1, Status::input("the file ends before the size line"));
  h.size_line = number;
  h.data_begin = r.offset();
  h.data_line = number + 1;
  return h;
}

// Rank 0 reads the header; everyone receives it or the agreed failure.
Result<Header> share_header(MPI_Comm comm, const mm::InputFile* file, const std::string& path,
                            const ImportOptions& options) {
  Result<Header> h = Status::input("no header");
  if (comm_rank(comm) == 0) h = read_header(*file, path, options);
  LODESTONE_TRY(agree(comm, comm_rank(comm) == 0 ? h.status() : Status::ok()));
  std::int64_t packed[9] = {};
  if (comm_rank(comm) == 0) {
    const Header& x = *h;
    std::int64_t v[9] = {static_cast<std::int64_t>(x.banner.format), static_cast<std::int64_t>(x.banner.field),
                         static_cast<std::int64_t>(x.banner.symmetry), x.size.rows, x.size.cols, x.size.entries,
                         x.size_line, x.data_begin, x.data_line};
    std::copy(v, v + 9, packed);
  }
  MPI_Bcast(packed, 9, MPI_INT64_T, 0, comm);
  Header x;
  x.banner = {static_cast<mm::Format>(packed[0]), static_cast<mm::Field>(packed[1]),
              static_cast<mm::Symmetry>(packed[2])};
  x.size = {packed[3], packed[4], packed[5]};
  x.size_line = packed[6];
  x.data_begin = packed[7];
  x.data_line = packed[8];
  return x;
}

// Adds an entry and, for the symmetric kinds, its mirror image.
void route(EntryRouter& router, const Banner& b, const Entry& e) {
  router.add(e);
  if (b.symmetry != mm::Symmetry::general && e.row != e.col)
    router.add({e.col, e.row, b.symmetry == mm::Symmetry::skew_symmetric ? -e.value : e.value});
}

// Walks this rank's lines in rounds. on_data(line) parses one data line and
// routes its entries, or returns the defect; check(line) only parses it.
// Collective: every rank leaves together; a defect on any rank stops all ranks at
// the end of the round. Ranks before the first failing one then check the rest of
// their lines (an earlier rank may hold an earlier defect that a later round would
// have reached), so the defect named is the first in the file on any number of
// ranks, and count them so its line number can be computed. Returns the agreed status.
template <class OnData, class Check>
Status route_lines(MPI_Comm comm, const std::string& path, LineReader& reader, EntryRouter& router,
                   std::int64_t first_line, std::int64_t round, OnData on_data, Check check) {
  const int rank = comm_rank(comm), size = comm_size(comm);
  std::int64_t lines = 0;
  Status defect;
  std::int64_t defect_line = 0;  // 1-based within this rank's share
  bool done = false;
  // The next line through parse (on_data or check); at the end of the share, done.
  const auto step = [&](auto&& parse) {
    std::string_view line;
    if (!reader.next(line)) {
      done = true;
      if (!reader.status()) defect = reader.status(), defect_line = lines + 1;
      return;
    }
    ++lines;
    if (mm::is_skippable(line)) return;
    Status s = parse(line);
    if (!s) defect = s, defect_line = lines;
  };
  int failed_first = size;
  for (;;) {
    while (!done && defect && router.pending() < round) step(on_data);
    router.exchange();
    int local[2] = {done || !defect ? 1 : 0, defect ? size : rank};
    int global[2] = {0, 0};
    MPI_Allreduce(local, global, 2, MPI_INT, MPI_MIN, comm);
    failed_first = global[1];
    if (failed_first < size || global[0] == 1) break;
  }
  if (failed_first < size) {
    if (rank < failed_first)
      while (!done && defect) step(check);
    const std::int64_t before = exclusive_prefix_sum(comm, lines);
    if (!defect) defect = at_line(path, first_line + before + defect_line - 1, defect);
  }
  return agree(comm, defect);
}

// True if an array data line holds more than one word (one value per line is the rule).
bool several_values(std::string_view line) {
  auto blank = [](char c) { return c == ' ' || c == '\t' || c == '\r'; };
  std::size_t i = 0;
  while (i < line.size() && blank(line[i])) ++i;
  while (i < line.size() && !blank(line[i])) ++i;
  while (i < line.size() && blank(line[i])) ++i;
  return i < line.size();
}

// Pass one of the array format: data lines in this rank's share, and all its
// lines up to a read defect. The first line with several values is kept: if the
// count is then wrong, that line, not the count, is the defect to name.
struct LineCount {
  std::int64_t data = 0;
  std::int64_t lines = 0;
  Status defect;
  std::int64_t several_at = 0;  // 1-based within the share; 0 if none
  Status several;
};

LineCount count_data_lines(const mm::InputFile& file, mm::ByteRange range, const Banner& banner,
                           const ImportOptions& options) {
  LineReader r(file.fd(), range.begin, range.end, options.chunk_bytes, options.max_line_bytes);
  std::string_view line;
  LineCount c;
  while (r.next(line)) {
    ++c.lines;
    if (mm::is_skippable(line)) continue;
    ++c.data;
    if (c.several_at == 0 && several_values(line)) {
      c.several_at = c.lines;
      c.several = mm::parse_array_line(line, banner).status();
    }
  }
  c.defect = r.status();
  return c;
}

std::string count_message(const std::string& path, const Header& h, std::int64_t found) {
  const bool more = found > h.size.entries;
  if (h.banner.format == mm::Format::coordinate)
    return fmt::format("{}: line {}: the size line declares {} entries, but the file holds {} ({})", path,
                       h.size_line, h.size.entries, found, more ? "too many entries" : "too few entries");
  const char* stored = h.banner.symmetry == mm::Symmetry::general     ? ""
                       : h.banner.symmetry == mm::Symmetry::symmetric ? " (only its lower triangle)"
                                                                      : " (only its strict lower triangle)";
  return fmt::format("{}: line {}: a {} {} x {} array stores {} values{}, but the file holds {} ({})", path,
                     h.size_line, mm::symmetry_name(h.banner.symmetry), h.size.rows, h.size.cols, h.size.entries,
                     stored, found, more ? "too many entries" : "too few entries");
}

}  // namespace

Result<MatrixMarketRows> read_matrix_market(MPI_Comm comm, const std::string& path, const ImportOptions& options) {
  const int rank = comm_rank(comm), size = comm_size(comm);
  auto file = mm::InputFile::open(path);
  LODESTONE_TRY(agree(comm, file.status()));
  auto header = share_header(comm, &*file, path, options);
  if (!header) return header.status();
  const Header h = *header;
  const std::int64_t n = h.size.rows;

  auto share = mm::line_aligned_share(file->fd(), h.data_begin, file->size(), rank, size, options.max_line_bytes);
  Status s = share ? Status::ok() : Status::input(fmt::format("{}: {}", path, share.status().message()));
  LODESTONE_TRY(agree(comm, s));

  EntryRouter router(comm, n);
  LineReader reader(file->fd(), share->begin, share->end, options.chunk_bytes, options.max_line_bytes);
  const std::int64_t round = bounded_round(comm, options.round_entries);
  std::int64_t data_lines = 0;

  if (h.banner.format == mm::Format::coordinate) {
    s = route_lines(comm, path, reader, router, h.data_line, round, [&](std::string_view line) {
      auto e = mm::parse_coordinate_line(line, h.banner, h.size);
      if (!e) return e.status();
      ++data_lines;
      route(router, h.banner, *e);
      return Status::ok();
    }, [&](std::string_view line) { return mm::parse_coordinate_line(line, h.banner, h.size).status(); });
    LODESTONE_TRY(s);
    const std::int64_t found = sum_all(comm, data_lines);
    if (found != h.size.entries) return Status::input(count_message(path, h, found));
  } else {
    const LineCount mine = count_data_lines(*file, *share, h.banner, options);
    // Ranks before the first failing one counted all their lines: its line number follows.
    const std::int64_t lines_before = exclusive_prefix_sum(comm, mine.lines);
    s = mine.defect ? Status::ok() : at_line(path, h.data_line + lines_before + mine.lines, mine.defect);
    LODESTONE_TRY(agree(comm, s));
    const std::int64_t found = sum_all(comm, mine.data);
    if (found != h.size.entries) {
      // Several values on one line make the count wrong: name the first such line.
      const std::int64_t none = std::numeric_limits<std::int64_t>::max();
      const std::int64_t at = mine.several_at ? h.data_line + lines_before + mine.several_at - 1 : none;
      const std::int64_t first = min_all(comm, at);
      if (first == none) return Status::input(count_message(path, h, found));
      return agree(comm, at == first ? at_line(path, at, mine.several) : Status::ok());
    }
    const std::int64_t first = exclusive_prefix_sum(comm, mine.data);
    mm::ArrayCursor at(n, h.banner.symmetry, first);
    s = route_lines(comm, path, reader, router, h.data_line, round, [&](std::string_view line) {
      auto v = mm::parse_array_line(line, h.banner);
      if (!v) return v.status();
      ++data_lines;
      if (*v != 0.0) route(router, h.banner, {at.row(), at.col(), *v});
      at.next();
      return Status::ok();
    }, [&](std::string_view line) { return mm::parse_array_line(line, h.banner).status(); });
    LODESTONE_TRY(s);
  }

  MatrixMarketRows out;
  out.banner = h.banner;
  out.n = n;
  out.file_entries = sum_all(comm, data_lines);
  out.symmetric = h.banner.symmetry == mm::Symmetry::symmetric;
  // A tiny file can declare a huge size: running out of memory for this rank's
  // row offsets is a refusal with a message, agreed by all ranks, not an abort.
  Status memory;
  try {
    out.rows = assemble_rows(even_split(n, rank, size), router.received());
  } catch (const std::bad_alloc&) {
    memory = Status::input(fmt::format("{}: line {}: not enough memory for the rows of a {} x {} matrix on {} rank(s); "
                                       "use more ranks", path, h.size_line, n, n, size));
  }
  LODESTONE_TRY(agree(comm, memory));
  if (sum_all(comm, out.rows.offsets.back()) == 0)
    return Status::input(fmt::format("{}: line {}: the matrix has no stored entries (an all-zero matrix has no "
                                     "dominant eigenpairs to find)", path, h.size_line));
  return out;
}

Result<MatrixMarketRows> import_matrix_market(MPI_Comm comm, const std::string& input, const std::string& output,
                                              const ImportOptions& options) {
  // Check the output path (not the input, directory writable) before spending
  // time on reading; the write itself makes its own temporary name later.
  {
    auto early = AtomicOutput::begin(comm, output, {input});
    if (!early) return early.status();
  }
  auto m = read_matrix_market(comm, input, options);
  if (!m) return m.status();
  LODESTONE_TRY(write_csr_file(comm, output, options.group, m->n, m->symmetric, m->rows, {input}));
  return m;
}

}  // namespace lodestone::io
