// Row-partitioned parallel read of a CSR matrix into a PETSc AIJ matrix.
//
// Three collective steps, none of which holds a global-length array:
//  1. each rank reads an even slice of row_offsets, validates it, and the ranks
//     agree on nonzero-balanced row boundaries (io/partition.hpp);
//  2. each rank reads its own column indices in chunks, validates them and
//     counts, per row, entries inside and outside its diagonal block, which is
//     exactly PETSc's preallocation;
//  3. each rank reads its columns and values again in chunks, checks values and
//     inserts them straight into the preallocated matrix, so no second full copy
//     of the local rows exists at any time.
#include <fmt/format.h>

#include <algorithm>
#include <cmath>
#include <vector>

#include "io/fingerprint.hpp"
#include "io/h5.hpp"
#include "io/layout.hpp"
#include "io/matrix_reader.hpp"
#include "io/partition.hpp"
#include "support/collective.hpp"
#include "support/petsc_status.hpp"

namespace lodestone::io {
namespace {

struct CsrDatasets {
  h5::Handle offsets, columns, values;
  std::int64_t nnz = 0;
};

Result<h5::Handle> open_dataset(hid_t group, const char* name, const MatrixHeader& h) {
  if (H5Lexists(group, name, H5P_DEFAULT) <= 0)
    return Status::input(fmt::format("{}: group '{}': missing dataset '{}'", h.file, h.group, name));
  hid_t d = H5Dopen2(group, name, H5P_DEFAULT);
  if (d < 0) return Status::input(fmt::format("{}: group '{}': '{}' is not a dataset", h.file, h.group, name));
  return h5::Handle(d);
}

Result<CsrDatasets> open_csr(hid_t group, const MatrixHeader& h) {
  auto where = [&](const char* ds, const std::string& what) {
    return Status::input(fmt::format("{}: dataset '{}/{}': {}", h.file, h.group, ds, what));
  };
  CsrDatasets d;
  auto off = open_dataset(group, layout::kRowOffsets, h);
  if (!off) return off.status();
  auto col = open_dataset(group, layout::kColumnIndices, h);
  if (!col) return col.status();
  auto val = open_dataset(group, layout::kValues, h);
  if (!val) return val.status();
  auto so = h5::dataset_shape(off->get());
  auto sc = h5::dataset_shape(col->get());
  auto sv = h5::dataset_shape(val->get());
  if (!so || !sc || !sv) return Status::input(fmt::format("{}: cannot read dataset shapes", h.file));
  if (so->type_class != H5T_INTEGER) return where(layout::kRowOffsets, "must hold integers");
  if (so->dims.size() != 1) return where(layout::kRowOffsets, "must be one-dimensional");
  if (so->dims[0] != h.rows + 1)
    return where(layout::kRowOffsets, fmt::format("has length {}, expected rows+1 = {}", so->dims[0], h.rows + 1));
  if (sc->type_class != H5T_INTEGER) return where(layout::kColumnIndices, "must hold integers (int32 or int64)");
  if (sc->dims.size() != 1) return where(layout::kColumnIndices, "must be one-dimensional");
  if (sv->type_class != H5T_FLOAT) return where(layout::kValues, "must hold floating-point numbers (float64 or float32)");
  if (sv->dims.size() != 1) return where(layout::kValues, "must be one-dimensional for layout 'csr'");
  if (sv->dims[0] != sc->dims[0])
    return where(layout::kValues, fmt::format("has length {}, but column_indices has length {}", sv->dims[0], sc->dims[0]));
  // Sorted, unique columns allow at most cols entries per row. Checked before
  // anything is allocated or read, so an absurd length in a damaged or hostile
  // header costs nothing.
  if (sc->dims[0] / h.rows > h.cols || (sc->dims[0] / h.rows == h.cols && sc->dims[0] % h.rows != 0))
    return where(layout::kColumnIndices, fmt::format("has {} entries, more than a {} x {} matrix can hold", sc->dims[0],
                                                     h.rows, h.cols));
  d.nnz = sc->dims[0];
  d.offsets = std::move(*off);
  d.columns = std::move(*col);
  d.values = std::move(*val);
  return d;
}

// Step 1: validate an even slice of row_offsets.
Status check_offsets_slice(const MatrixHeader& h, RowRange range, const std::vector<std::int64_t>& s, std::int64_t nnz) {
  auto bad = [&](const std::string& what) {
    return Status::input(fmt::format("{}: dataset '{}/row_offsets': {}", h.file, h.group, what));
  };
  if (range.begin == 0 && s[0] != 0) return bad(fmt::format("starts at {}, must start at 0", s[0]));
  for (std::size_t i = 0; i < s.size(); ++i) {
    const std::int64_t r = range.begin + static_cast<std::int64_t>(i);
    if (s[i] < 0 || s[i] > nnz)
      return bad(fmt::format("entry {} is {}, outside [0, nnz = {}]", r, s[i], nnz));
    if (i > 0 && s[i] < s[i - 1])
      return bad(fmt::format("decreases at row {} ({} after {})", r - 1, s[i], s[i - 1]));
  }
  if (range.end == h.rows && s.back() != nnz)
    return bad(fmt::format("ends at {}, but column_indices holds {} entries", s.back(), nnz));
  return Status::ok();
}

// Walks the local rows alongside a flat run of entries [k0, k0+count).
struct RowCursor {
  const std::vector<std::int64_t>* off;  // local offsets, global values
  std::int64_t row = 0;                  // local row index
  void seek(std::int64_t k) {
    while ((*off)[static_cast<std::size_t>(row) + 1] <= k) ++row;
  }
};

}  // namespace

Result<Matrix> read_csr(MPI_Comm comm, hid_t group, const MatrixHeader& h, const LoadOptions& options) {
  const int rank = comm_rank(comm), size = comm_size(comm);
  auto opened = open_csr(group, h);
  LODESTONE_TRY(agree(comm, opened.status()));
  CsrDatasets& ds = *opened;
  const std::int64_t n = h.rows;
  const std::int64_t chunk = std::max<std::int64_t>(1, options.chunk_entries);
  const int node_ranks = ranks_on_node(comm);
  auto named = [&](const Status& st) { return st ? st : Status::input(fmt::format("{}: {}", h.file, st.message())); };
  // Memory this rank needs for `rows` rows holding `entries` entries: offsets and
  // preallocation counts, the chunk buffers, and PETSc's own copy (values,
  // column indices, row pointers).
  const double idx = sizeof(PetscInt);
  auto share = [&](double rows, double entries) {
    return rows * (8.0 + 4.0 * idx) + std::min(static_cast<double>(chunk), entries) * (16.0 + idx) + entries * (8.0 + idx);
  };

  // Step 0: the average share, from the dataset lengths alone, before anything
  // is allocated or read.
  LODESTONE_TRY(agree(comm, fits_in_memory(h, share(static_cast<double>(n) / size, static_cast<double>(ds.nnz) / size),
                                           node_ranks)));

  // Step 1: even slice of offsets, validation and balanced boundaries.
  RowRange even = even_split(n, rank, size);
  std::vector<std::int64_t> slice;
  Status s = allocate(h, [&] { slice.resize(static_cast<std::size_t>(even.size() + 1)); });
  LODESTONE_TRY(agree(comm, s));
  s = named(h5::read_range(ds.offsets.get(), H5T_NATIVE_INT64, even.begin, even.size() + 1, slice.data()));
  if (s) s = check_offsets_slice(h, even, slice, ds.nnz);
  LODESTONE_TRY(agree(comm, s));
  std::vector<std::int64_t> bounds = balanced_split(comm, even, slice, n, ds.nnz);
  slice = {};
  const RowRange mine{bounds[static_cast<std::size_t>(rank)], bounds[static_cast<std::size_t>(rank) + 1]};
  const std::int64_t m = mine.size();

  std::vector<std::int64_t> off;
  LODESTONE_TRY(agree(comm, allocate(h, [&] { off.resize(static_cast<std::size_t>(m + 1)); })));
  LODESTONE_TRY(agree(comm, named(h5::read_range(ds.offsets.get(), H5T_NATIVE_INT64, mine.begin, m + 1, off.data()))));
  const std::int64_t k_begin = off.front(), k_end = off.back();
  const std::int64_t local_nnz = k_end - k_begin;
  const std::int64_t buffered = std::min(chunk, std::max<std::int64_t>(local_nnz, 1));
  Status width;
  if (local_nnz > max_index())
    width = Status::input(fmt::format("{}: {} nonzeros on one rank exceed this build's index range; use more ranks or "
                                      "rebuild against petsc64", h.file, local_nnz));
  // This rank's own share, now that the balanced boundaries are known.
  if (width) width = fits_in_memory(h, share(static_cast<double>(m), static_cast<double>(local_nnz)), node_ranks);
  LODESTONE_TRY(agree(comm, width));

  const std::int64_t rounds = max_all(comm, (local_nnz + chunk - 1) / chunk);
  std::vector<std::int64_t> cols;
  std::vector<PetscInt> d_nnz, o_nnz;
  LODESTONE_TRY(agree(comm, allocate(h, [&] {
    cols.resize(static_cast<std::size_t>(buffered));
    d_nnz.assign(static_cast<std::size_t>(m), 0);
    o_nnz.assign(static_cast<std::size_t>(m), 0);
  })));

  // Step 2: validate columns and count the preallocation. A rank that finds a
  // defect stops looking but keeps taking part in the collective reads; the
  // ranks agree once at the end, so the defect reported is the first in the
  // file (ranks hold rows in order), whichever chunk it was found in.
  Status rs;
  {
    RowCursor cur{&off};
    std::int64_t last = -1;  // column of the previous entry, carried across chunks
    for (std::int64_t round = 0; round < rounds; ++round) {
      const std::int64_t k0 = k_begin + round * chunk;
      const std::int64_t count = rs ? std::clamp<std::int64_t>(k_end - k0, 0, chunk) : 0;
      Status read = h5::read_range(ds.columns.get(), H5T_NATIVE_INT64, count ? k0 : 0, count, cols.data());
      if (rs && !read) rs = named(read);
      for (std::int64_t i = 0; rs && i < count; ++i) {
        const std::int64_t k = k0 + i;
        cur.seek(k);
        const std::int64_t c = cols[static_cast<std::size_t>(i)];
        const std::int64_t grow = mine.begin + cur.row;
        const bool first_in_row = (k == off[static_cast<std::size_t>(cur.row)]);
        if (c < 0 || c >= h.cols)
          rs = Status::input(fmt::format("{}: dataset '{}/column_indices': column {} out of range [0, {}) in row {}",
                                         h.file, h.group, c, h.cols, grow));
        else if (!first_in_row && c == last)
          rs = Status::input(fmt::format("{}: dataset '{}/column_indices': duplicate column {} in row {}", h.file,
                                         h.group, c, grow));
        else if (!first_in_row && c < last)
          rs = Status::input(fmt::format("{}: dataset '{}/column_indices': columns not sorted in row {} ({} after {})",
                                         h.file, h.group, grow, c, last));
        else if (c >= mine.begin && c < mine.end) ++d_nnz[static_cast<std::size_t>(cur.row)];
        else ++o_nnz[static_cast<std::size_t>(cur.row)];
        last = c;
      }
    }
  }
  LODESTONE_TRY(agree(comm, rs));

  // Step 3: build the matrix and fill it chunk by chunk.
  Mat a = nullptr;
  auto fail = [&](Status st) -> Result<Matrix> {
    if (a) MatDestroy(&a);
    return st;
  };
  Status ms = [&]() -> Status {
    LODESTONE_PETSC(MatCreate(comm, &a));
    LODESTONE_PETSC(MatSetSizes(a, static_cast<PetscInt>(m), static_cast<PetscInt>(m), static_cast<PetscInt>(n),
                                static_cast<PetscInt>(n)));
    LODESTONE_PETSC(MatSetType(a, MATAIJ));
    LODESTONE_PETSC(MatSeqAIJSetPreallocation(a, 0, d_nnz.data()));
    LODESTONE_PETSC(MatMPIAIJSetPreallocation(a, 0, d_nnz.data(), 0, o_nnz.data()));
    LODESTONE_PETSC(MatSetOption(a, MAT_NO_OFF_PROC_ENTRIES, PETSC_TRUE));
    LODESTONE_PETSC(MatSetOption(a, MAT_NEW_NONZERO_ALLOCATION_ERR, PETSC_TRUE));
    return Status::ok();
  }();
  ms = agree(comm, ms);
  if (!ms) return fail(ms);
  d_nnz = {};
  o_nnz = {};

  FingerprintAccumulator fp;
  std::vector<double> vals;
  std::vector<PetscInt> pcols;
  ms = agree(comm, allocate(h, [&] {
    vals.resize(cols.size());
    pcols.resize(cols.size());
  }));
  if (!ms) return fail(ms);
  RowCursor cur{&off};
  for (std::int64_t round = 0; round < rounds; ++round) {
    const std::int64_t k0 = k_begin + round * chunk;
    const std::int64_t count = rs ? std::clamp<std::int64_t>(k_end - k0, 0, chunk) : 0;
    Status read = h5::read_range(ds.columns.get(), H5T_NATIVE_INT64, count ? k0 : 0, count, cols.data());
    Status vs = h5::read_range(ds.values.get(), H5T_NATIVE_DOUBLE, count ? k0 : 0, count, vals.data());
    if (rs && !read) rs = named(read);
    if (rs && !vs) rs = named(vs);
    for (std::int64_t i = 0; rs && i < count; ++i) {
      const double v = vals[static_cast<std::size_t>(i)];
      if (!std::isfinite(v)) {
        cur.seek(k0 + i);
        rs = Status::input(fmt::format("{}: dataset '{}/values': {} in row {}, column {}", h.file, h.group,
                                       std::isnan(v) ? "NaN" : "infinity", mine.begin + cur.row,
                                       cols[static_cast<std::size_t>(i)]));
      }
      pcols[static_cast<std::size_t>(i)] = static_cast<PetscInt>(cols[static_cast<std::size_t>(i)]);
    }
    // Insert the run row by row (a row may continue from the previous chunk).
    std::int64_t i = 0;
    while (rs && i < count) {
      cur.seek(k0 + i);
      const std::int64_t row_end = std::min<std::int64_t>(off[static_cast<std::size_t>(cur.row) + 1] - k0, count);
      const PetscInt grow = static_cast<PetscInt>(mine.begin + cur.row);
      const PetscInt len = static_cast<PetscInt>(row_end - i);
      for (std::int64_t j = i; j < row_end; ++j) fp.add(grow, cols[static_cast<std::size_t>(j)], vals[static_cast<std::size_t>(j)]);
      PetscErrorCode e = MatSetValues(a, 1, &grow, len, pcols.data() + i, vals.data() + i, INSERT_VALUES);
      if (e) rs = petsc_status(e, "MatSetValues");
      i = row_end;
    }
  }
  rs = agree(comm, rs);
  if (!rs) return fail(rs);
  cols = {};
  vals = {};
  pcols = {};
  Status as = [&]() -> Status {
    LODESTONE_PETSC(MatAssemblyBegin(a, MAT_FINAL_ASSEMBLY));
    LODESTONE_PETSC(MatAssemblyEnd(a, MAT_FINAL_ASSEMBLY));
    return Status::ok();
  }();
  as = agree(comm, as);
  if (!as) return fail(as);

  MatrixInfo info;
  info.layout = Layout::csr;
  info.rows = n;
  info.cols = h.cols;
  info.nnz = ds.nnz;
  info.symmetric = h.symmetric;
  info.fingerprint = fp.finish(comm, n, h.cols);
  info.row_begin = mine.begin;
  info.row_end = mine.end;
  return Matrix(a, info);
}

}  // namespace lodestone::io
