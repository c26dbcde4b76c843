// Boundary streaming and stitching for many candidate rank counts (plan/partition_scan.hpp).
#include "plan/partition_scan.hpp"

#include <fmt/format.h>

#include <algorithm>

#include "io/h5.hpp"
#include "io/layout.hpp"
#include "io/partition.hpp"
#include "support/collective.hpp"

namespace lodestone::plan {

BoundaryScanner::BoundaryScanner(std::vector<int> parts, std::int64_t n, std::int64_t nnz, std::int64_t begin,
                                 std::int64_t prev_weight)
    : parts_(std::move(parts)), n_(n), nnz_(nnz), total_(static_cast<long double>(nnz) + static_cast<long double>(n)) {
  next_k_.assign(parts_.size(), 0);
  local_.assign(parts_.size(), Local{});
  if (begin == 0) return;
  // Boundaries whose target is <= the weight of row begin-1 lie before this slice.
  for (std::size_t c = 0; c < parts_.size(); ++c) {
    const std::int64_t p = parts_[c];
    std::int64_t k = static_cast<std::int64_t>(static_cast<long double>(prev_weight) * p / total_);
    k = std::clamp<std::int64_t>(k, 0, p + 1);
    while (k <= p && target(c, k) <= static_cast<long double>(prev_weight)) ++k;
    while (k > 0 && target(c, k - 1) > static_cast<long double>(prev_weight)) --k;
    next_k_[c] = k;
  }
}

// Same expression as io::balanced_split, so the boundaries agree exactly.
long double BoundaryScanner::target(std::size_t c, std::int64_t k) const {
  return total_ * k / parts_[c];
}

void BoundaryScanner::boundary(std::size_t c, std::int64_t row, std::int64_t off) {
  Local& l = local_[c];
  if (l.count == 0) {
    l.first_row = row;
    l.first_off = off;
  } else {
    const std::int64_t rows = row - l.last_row, nnz = off - l.last_off;
    if (nnz > l.inner_heaviest_nnz) {
      l.inner_heaviest_nnz = nnz;
      l.inner_heaviest_rows = rows;
      l.inner_heaviest_first = l.last_row;
    }
    l.inner_max_rows = std::max(l.inner_max_rows, rows);
    if (rows == 0) ++l.inner_empty;
  }
  l.last_row = row;
  l.last_off = off;
  ++l.count;
}

void BoundaryScanner::feed(std::int64_t first_row, std::span<const std::int64_t> chunk) {
  if (chunk.empty()) return;
  const auto weight = [&](std::size_t i) {
    return static_cast<long double>(chunk[i]) + static_cast<long double>(first_row + static_cast<std::int64_t>(i));
  };
  const long double last_w = weight(chunk.size() - 1);
  for (std::size_t c = 0; c < parts_.size(); ++c) {
    const std::int64_t p = parts_[c];
    std::size_t lo = 0;
    while (next_k_[c] <= p) {
      const long double t = target(c, next_k_[c]);
      if (t > last_w) break;
      // First index at or after lo whose weight reaches t (weights strictly increase).
      std::size_t a = lo, b = chunk.size();
      while (a < b) {
        const std::size_t mid = a + (b - a) / 2;
        if (weight(mid) >= t) b = mid;
        else a = mid + 1;
      }
      boundary(c, first_row + static_cast<std::int64_t>(a), chunk[a]);
      lo = a;
      ++next_k_[c];
    }
  }
}

std::vector<PartitionStats> stitch(const std::vector<int>& parts,
                                   const std::vector<std::vector<BoundaryScanner::Local>>& slices) {
  std::vector<PartitionStats> out(parts.size());
  for (std::size_t c = 0; c < parts.size(); ++c) {
    PartitionStats& st = out[c];
    st.parts = parts[c];
    std::int64_t heaviest = -1;
    bool have_prev = false;
    std::int64_t prev_row = 0, prev_off = 0;
    auto part = [&](std::int64_t rows, std::int64_t nnz, std::int64_t first) {
      if (nnz > heaviest) {
        heaviest = nnz;
        st.heaviest_nnz = nnz;
        st.heaviest_rows = rows;
        st.heaviest_first_row = first;
      }
      st.max_rows = std::max(st.max_rows, rows);
      if (rows == 0) ++st.empty_parts;
    };
    for (const auto& s : slices) {
      const BoundaryScanner::Local& l = s[c];
      if (l.count == 0) continue;
      if (have_prev) part(l.first_row - prev_row, l.first_off - prev_off, prev_row);
      if (l.count > 1) {
        if (l.inner_heaviest_nnz > heaviest) {
          heaviest = l.inner_heaviest_nnz;
          st.heaviest_nnz = l.inner_heaviest_nnz;
          st.heaviest_rows = l.inner_heaviest_rows;
          st.heaviest_first_row = l.inner_heaviest_first;
        }
        st.max_rows = std::max(st.max_rows, l.inner_max_rows);
        st.empty_parts += l.inner_empty;
      }
      have_prev = true;
      prev_row = l.last_row;
      prev_off = l.last_off;
    }
  }
  return out;
}

PartitionStats dense_partition(std::int64_t n, int parts) {
  PartitionStats st;
  st.parts = parts;
  const RowRange first = even_split(n, 0, parts);  // the first parts are the largest
  st.heaviest_rows = first.size();
  st.heaviest_nnz = first.size() * n;
  st.heaviest_first_row = 0;
  st.max_rows = first.size();
  st.empty_parts = parts > n ? parts - n : 0;
  return st;
}

Result<std::vector<PartitionStats>> scan_partitions(MPI_Comm comm, const OpenMatrix& matrix,
                                                    const std::vector<int>& parts, std::int64_t chunk_rows) {
  const std::string& path = matrix.path;
  const std::string& group = matrix.group;
  const std::int64_t n = matrix.facts.rows;
  const std::int64_t nnz = matrix.facts.nnz;  // the length of column_indices, checked by open_matrix
  const hid_t g = matrix.group_handle.get();
  Status s;
  if (matrix.facts.layout != Layout::csr) s = Status::input(fmt::format("{}: group '{}' is not a CSR matrix", path, group));
  else if (H5Lexists(g, layout::kRowOffsets, H5P_DEFAULT) <= 0)
    s = Status::input(fmt::format("{}: group '{}': missing dataset '{}'", path, group, layout::kRowOffsets));
  h5::Handle off;
  if (s) {
    off = h5::Handle(H5Dopen2(g, layout::kRowOffsets, H5P_DEFAULT));
    auto so = h5::dataset_shape(off.get());
    if (!so || so->dims.size() != 1 || so->dims[0] != n + 1)
      s = Status::input(fmt::format("{}: dataset '{}/row_offsets' must have length rows+1 = {}", path, group, n + 1));
  }
  LODESTONE_TRY(agree(comm, s));

  // This rank's even slice of row indices; the last rank also owns row n.
  const int rank = comm_rank(comm), size = comm_size(comm);
  const RowRange even = even_split(n, rank, size);
  const std::int64_t own_end = even.end + (rank == size - 1 ? 1 : 0);
  // Weight of the row before the slice.
  std::int64_t prev = 0;
  const bool need_prev = even.begin > 0 && own_end > even.begin;
  Status rs = h5::read_range(off.get(), H5T_NATIVE_INT64, need_prev ? even.begin - 1 : 0, need_prev ? 1 : 0, &prev);
  LODESTONE_TRY(agree(comm, rs));
  BoundaryScanner scanner(parts, n, nnz, even.begin, prev + even.begin - 1);

  const std::int64_t chunk = std::max<std::int64_t>(1, chunk_rows);
  const std::int64_t mine = own_end - even.begin;
  const std::int64_t rounds = max_all(comm, (mine + chunk - 1) / chunk);
  std::vector<std::int64_t> buf;
  std::int64_t last = need_prev ? prev : -1;
  for (std::int64_t r = 0; r < rounds; ++r) {
    const std::int64_t b = even.begin + r * chunk;
    const std::int64_t count = std::clamp<std::int64_t>(own_end - b, 0, chunk);
    buf.resize(static_cast<std::size_t>(count));
    Status cs = h5::read_range(off.get(), H5T_NATIVE_INT64, count ? b : 0, count, buf.data());
    // The scan trusts monotone offsets; check them as they pass.
    for (std::int64_t i = 0; cs && i < count; ++i) {
      const std::int64_t v = buf[static_cast<std::size_t>(i)];
      if (v < 0 || v > nnz || v < last || (b + i == 0 && v != 0) || (b + i == n && v != nnz))
        cs = Status::input(fmt::format("{}: dataset '{}/row_offsets' is invalid at row {} (value {}); "
                                       "run 'lodestone inspect --check' for details", path, group, b + i, v));
      last = v;
    }
    LODESTONE_TRY(agree(comm, cs));
    scanner.feed(b, buf);
  }

  // Gather every rank's per-candidate summary (O(ranks x candidates) numbers).
  constexpr int kFields = 10;
  const std::size_t nc = parts.size();
  std::vector<std::int64_t> mine_flat(nc * kFields), all(static_cast<std::size_t>(size) * nc * kFields);
  for (std::size_t c = 0; c < nc; ++c) {
    const auto& l = scanner.locals()[c];
    std::int64_t* f = &mine_flat[c * kFields];
    f[0] = l.count; f[1] = l.first_row; f[2] = l.first_off; f[3] = l.last_row; f[4] = l.last_off;
    f[5] = l.inner_heaviest_nnz; f[6] = l.inner_heaviest_rows; f[7] = l.inner_heaviest_first;
    f[8] = l.inner_max_rows; f[9] = l.inner_empty;
  }
  MPI_Allgather(mine_flat.data(), static_cast<int>(mine_flat.size()), MPI_INT64_T, all.data(),
                static_cast<int>(mine_flat.size()), MPI_INT64_T, comm);
  std::vector<std::vector<BoundaryScanner::Local>> slices(static_cast<std::size_t>(size),
                                                          std::vector<BoundaryScanner::Local>(nc));
  for (int r = 0; r < size; ++r)
    for (std::size_t c = 0; c < nc; ++c) {
      const std::int64_t* f = &all[(static_cast<std::size_t>(r) * nc + c) * kFields];
      auto& l = slices[static_cast<std::size_t>(r)][c];
      l.count = f[0]; l.first_row = f[1]; l.first_off = f[2]; l.last_row = f[3]; l.last_off = f[4];
      l.inner_heaviest_nnz = f[5]; l.inner_heaviest_rows = f[6]; l.inner_heaviest_first = f[7];
      l.inner_max_rows = f[8]; l.inner_empty = f[9];
    }
  return stitch(parts, slices);
}

}  // namespace lodestone::plan
