// Collective reader and writer of the results file layout (io/result_file.hpp).
#include "io/result_file.hpp"

#include <fmt/format.h>
#include <hdf5.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <new>
#include <stdexcept>
#include <utility>

#include "io/atomic_output.hpp"
#include "io/h5.hpp"
#include "support/collective.hpp"

namespace lodestone::io {

namespace rl = result_layout;

std::string fingerprint_text(std::uint64_t fingerprint) { return fmt::format("{:016x}", fingerprint); }

static bool parse_fingerprint(const std::string& text, std::uint64_t* out) {
  if (text.size() != 16) return false;
  std::uint64_t v = 0;
  for (char c : text) {
    int d = (c >= '0' && c <= '9') ? c - '0' : (c >= 'a' && c <= 'f') ? c - 'a' + 10 : (c >= 'A' && c <= 'F') ? c - 'A' + 10 : -1;
    if (d < 0) return false;
    v = (v << 4) | static_cast<std::uint64_t>(d);
  }
  *out = v;
  return true;
}

bool is_result_file(MPI_Comm comm, const std::string& path) {
  int yes = 0;
  if (comm_rank(comm) == 0 && H5Fis_hdf5(path.c_str()) > 0) {
    // A serial, read-only look from rank 0; the answer is broadcast.
    h5::Handle f(H5Fopen(path.c_str(), H5F_ACC_RDONLY, H5P_DEFAULT));
    if (f.valid()) {
      h5::Handle root(H5Gopen2(f.get(), "/", H5P_DEFAULT));
      if (root.valid() && h5::has_attribute(root.get(), rl::kFileKind)) {
        auto kind = h5::read_string_attribute(root.get(), rl::kFileKind);
        yes = (kind && *kind == rl::kFileKindValue) ? 1 : 0;
      }
      f.close_file();
    }
  }
  MPI_Bcast(&yes, 1, MPI_INT, 0, comm);
  return yes == 1;
}

// Calls fn(first_local_row, rows) for this rank's m rows in pieces of at most
// piece_entries values (rows x k). Every rank makes the same number of calls,
// some with empty pieces, because each call is a collective transfer.
template <class Fn>
static Status by_pieces(MPI_Comm comm, std::int64_t m, std::int64_t k, std::int64_t piece_entries, Fn fn) {
  const std::int64_t rows_per = std::max<std::int64_t>(1, piece_entries / std::max<std::int64_t>(k, 1));
  const std::int64_t pieces = max_all(comm, (m + rows_per - 1) / rows_per);
  for (std::int64_t p = 0; p < pieces; ++p) {
    const std::int64_t first = std::min(m, p * rows_per);
    LODESTONE_TRY(agree(comm, fn(first, std::min(m, first + rows_per) - first)));
  }
  return Status::ok();
}

// ---------------------------------------------------------------- writing

// Checks that the parts of a SolveResult fit together, on this rank.
static Status check_local(const SolveResult& r) {
  const std::int64_t k = r.pairs();
  const std::int64_t m = r.local_rows();
  if (r.rows <= 0) return Status::input(fmt::format("result to write has {} rows; it needs at least one", r.rows));
  if (r.row_begin < 0 || r.row_begin > r.row_end || r.row_end > r.rows)
    return Status::input(fmt::format("result to write: this rank's rows [{}, {}) do not lie in [0, {})", r.row_begin,
                                     r.row_end, r.rows));
  if (!r.eigenvalues_imag.empty() && static_cast<std::int64_t>(r.eigenvalues_imag.size()) != k)
    return Status::input(fmt::format("result to write: {} eigenvalues but {} imaginary parts", k, r.eigenvalues_imag.size()));
  if (static_cast<std::int64_t>(r.residual_norms.size()) != k)
    return Status::input(fmt::format("result to write: {} eigenvalues but {} residual norms", k, r.residual_norms.size()));
  if (static_cast<std::int64_t>(r.vectors.size()) != m * k)
    return Status::input(fmt::format("result to write: this rank holds {} vector entries; {} rows x {} pairs needs {}",
                                     r.vectors.size(), m, k, m * k));
  if (r.converged < 0 || r.converged > k)
    return Status::input(fmt::format("result to write: converged = {} is not between 0 and {} pairs", r.converged, k));
  for (std::size_t h = 0; h < r.history.size(); ++h) {
    const auto& rec = r.history[h];
    if (static_cast<std::int64_t>(rec.estimates.size()) != k || static_cast<std::int64_t>(rec.residuals.size()) != k)
      return Status::input(fmt::format("result to write: history record {} has {} estimates and {} residuals; "
                                       "every record needs one per pair ({})",
                                       h, rec.estimates.size(), rec.residuals.size(), k));
  }
  return Status::ok();
}

// Checks that the ranks' parts fit together: same K and history length, row
// blocks in rank order covering every row exactly once.
static Status check_across(MPI_Comm comm, const SolveResult& r) {
  const std::int64_t k = r.pairs(), h = static_cast<std::int64_t>(r.history.size());
  if (min_all(comm, k) != max_all(comm, k) || min_all(comm, h) != max_all(comm, h) ||
      min_all(comm, r.rows) != max_all(comm, r.rows))
    return Status::input("result to write: ranks disagree on the number of pairs, rows or history records");
  return check_row_blocks(comm, r.row_begin, r.local_rows(), r.rows, "result to write");
}

// A replicated 1-D array: created by all ranks, data selected by rank 0 only.
template <class T>
static Status write_replicated(MPI_Comm comm, hid_t loc, const char* name, hid_t file_type, hid_t mem_type,
                               const std::vector<T>& values) {
  const auto count = static_cast<std::int64_t>(values.size());
  auto ds = h5::create_dataset(loc, name, file_type, {count});
  LODESTONE_TRY(agree(comm, ds.status()));
  if (count == 0) return Status::ok();  // HDF5 refuses a transfer on an empty dataset
  const bool root = comm_rank(comm) == 0;
  return agree(comm, h5::write_range(ds->get(), mem_type, 0, root ? count : 0, values.data()));
}

static Status write_replicated_rows(MPI_Comm comm, hid_t loc, const char* name, std::int64_t rows, std::int64_t cols,
                                    const std::vector<double>& values) {
  auto ds = h5::create_dataset(loc, name, H5T_IEEE_F64LE, {rows, cols});
  LODESTONE_TRY(agree(comm, ds.status()));
  if (rows * cols == 0) return Status::ok();  // HDF5 refuses a transfer on an empty dataset
  const bool root = comm_rank(comm) == 0;
  return agree(comm, h5::write_rows(ds->get(), H5T_NATIVE_DOUBLE, 0, root ? rows : 0, cols, values.data()));
}

// The replicated facts as rank 0 has them. HDF5 needs identical attribute
// values from every rank, and a fact measured per rank (elapsed seconds, say)
// may differ in the last bit; rank 0's copy is the one written.
static SolveResult replicated_from_root(MPI_Comm comm, const SolveResult& r) {
  SolveResult out;
  out.eigenvalues = r.eigenvalues;
  out.eigenvalues_imag = r.eigenvalues_imag;
  if (out.eigenvalues_imag.empty()) out.eigenvalues_imag.assign(r.eigenvalues.size(), 0.0);
  out.residual_norms = r.residual_norms;
  out.history = r.history;
  const auto k = static_cast<int>(r.eigenvalues.size());  // agreed across ranks already
  MPI_Bcast(out.eigenvalues.data(), k, MPI_DOUBLE, 0, comm);
  MPI_Bcast(out.eigenvalues_imag.data(), k, MPI_DOUBLE, 0, comm);
  MPI_Bcast(out.residual_norms.data(), k, MPI_DOUBLE, 0, comm);
  double d[3] = {r.tolerance, r.norm_estimate, r.elapsed_seconds};
  std::int64_t i[4] = {r.converged, r.matvecs, r.iterations, r.ranks > 0 ? r.ranks : comm_size(comm)};
  std::uint64_t fp = r.matrix_fingerprint;
  MPI_Bcast(d, 3, MPI_DOUBLE, 0, comm);
  MPI_Bcast(i, 4, MPI_INT64_T, 0, comm);
  MPI_Bcast(&fp, 1, MPI_UINT64_T, 0, comm);
  out.tolerance = d[0], out.norm_estimate = d[1], out.elapsed_seconds = d[2];
  out.converged = i[0], out.matvecs = i[1], out.iterations = i[2], out.ranks = i[3];
  out.matrix_fingerprint = fp;
  for (auto [from, to] : {std::pair{&r.method, &out.method}, std::pair{&r.selection, &out.selection}}) {
    int len = static_cast<int>(from->size());
    MPI_Bcast(&len, 1, MPI_INT, 0, comm);
    *to = *from;
    to->resize(static_cast<std::size_t>(len));
    MPI_Bcast(to->data(), len, MPI_CHAR, 0, comm);
  }
  for (auto& rec : out.history) {
    std::int64_t ints[3] = {rec.iteration, rec.matvecs, rec.converged};
    MPI_Bcast(ints, 3, MPI_INT64_T, 0, comm);
    rec.iteration = ints[0], rec.matvecs = ints[1], rec.converged = ints[2];
    MPI_Bcast(&rec.seconds, 1, MPI_DOUBLE, 0, comm);
    MPI_Bcast(rec.estimates.data(), k, MPI_DOUBLE, 0, comm);
    MPI_Bcast(rec.residuals.data(), k, MPI_DOUBLE, 0, comm);
  }
  return out;
}

static Status write_attributes(hid_t root, const SolveResult& r, std::int64_t ranks) {
  LODESTONE_TRY(h5::write_string_attribute(root, rl::kFileKind, rl::kFileKindValue));
  LODESTONE_TRY(h5::write_int_attribute(root, rl::kFormat, rl::kFormatVersion));
  LODESTONE_TRY(h5::write_int_attribute(root, rl::kConverged, r.converged));
  LODESTONE_TRY(h5::write_string_attribute(root, rl::kMethod, r.method));
  LODESTONE_TRY(h5::write_string_attribute(root, rl::kSelection, r.selection));
  LODESTONE_TRY(h5::write_double_attribute(root, rl::kTolerance, r.tolerance));
  LODESTONE_TRY(h5::write_double_attribute(root, rl::kNormEstimate, r.norm_estimate));
  LODESTONE_TRY(h5::write_int_attribute(root, rl::kMatvecs, r.matvecs));
  LODESTONE_TRY(h5::write_int_attribute(root, rl::kIterations, r.iterations));
  LODESTONE_TRY(h5::write_int_attribute(root, rl::kRanks, ranks));
  LODESTONE_TRY(h5::write_string_attribute(root, rl::kFingerprint, fingerprint_text(r.matrix_fingerprint)));
  LODESTONE_TRY(h5::write_double_attribute(root, rl::kElapsed, r.elapsed_seconds));
  return Status::ok();
}

static Status write_contents(MPI_Comm comm, hid_t file, const SolveResult& r, std::int64_t piece_entries) {
  const std::int64_t k = r.pairs(), m = r.local_rows();
  const std::int64_t hcount = static_cast<std::int64_t>(r.history.size());
  const SolveResult facts = replicated_from_root(comm, r);
  h5::Handle root(H5Gopen2(file, "/", H5P_DEFAULT));
  LODESTONE_TRY(agree(comm, root.valid() ? Status::ok() : Status::input("cannot open the root group")));
  LODESTONE_TRY(agree(comm, write_attributes(root.get(), facts, facts.ranks)));

  LODESTONE_TRY(write_replicated(comm, root.get(), rl::kEigenvalues, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, facts.eigenvalues));
  LODESTONE_TRY(write_replicated(comm, root.get(), rl::kEigenvaluesImag, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE,
                                 facts.eigenvalues_imag));
  LODESTONE_TRY(
      write_replicated(comm, root.get(), rl::kResidualNorms, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, facts.residual_norms));

  // Eigenvectors: this rank's rows, turned from column-by-column to row-major piece by piece.
  {
    auto ds = h5::create_dataset(root.get(), rl::kEigenvectors, H5T_IEEE_F64LE, {r.rows, k});
    LODESTONE_TRY(agree(comm, ds.status()));
    std::vector<double> rowmajor;
    if (k > 0)
      LODESTONE_TRY(by_pieces(comm, m, k, piece_entries, [&](std::int64_t first, std::int64_t rows) {
        rowmajor.resize(static_cast<std::size_t>(rows * k));
        for (std::int64_t j = 0; j < k; ++j)
          for (std::int64_t i = 0; i < rows; ++i)
            rowmajor[static_cast<std::size_t>(i * k + j)] = r.vectors[static_cast<std::size_t>(j * m + first + i)];
        return h5::write_rows(ds->get(), H5T_NATIVE_DOUBLE, r.row_begin + first, rows, k, rowmajor.data());
      }));
  }

  // History: replicated on every rank, written from rank 0's selection.
  auto group = h5::create_group(file, std::string("/") + rl::kHistory);
  LODESTONE_TRY(agree(comm, group.status()));
  std::vector<std::int64_t> iteration, matvecs, converged;
  std::vector<double> seconds, estimates, residuals;
  for (const auto& rec : facts.history) {
    iteration.push_back(rec.iteration);
    matvecs.push_back(rec.matvecs);
    converged.push_back(rec.converged);
    seconds.push_back(rec.seconds);
    estimates.insert(estimates.end(), rec.estimates.begin(), rec.estimates.end());
    residuals.insert(residuals.end(), rec.residuals.begin(), rec.residuals.end());
  }
  hid_t g = group->get();
  LODESTONE_TRY(write_replicated(comm, g, rl::kHistIteration, H5T_STD_I64LE, H5T_NATIVE_INT64, iteration));
  LODESTONE_TRY(write_replicated(comm, g, rl::kHistMatvecs, H5T_STD_I64LE, H5T_NATIVE_INT64, matvecs));
  LODESTONE_TRY(write_replicated(comm, g, rl::kHistSeconds, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, seconds));
  LODESTONE_TRY(write_replicated(comm, g, rl::kHistConverged, H5T_STD_I64LE, H5T_NATIVE_INT64, converged));
  LODESTONE_TRY(write_replicated_rows(comm, g, rl::kHistEstimates, hcount, k, estimates));
  LODESTONE_TRY(write_replicated_rows(comm, g, rl::kHistResiduals, hcount, k, residuals));
  return Status::ok();
}

Status write_result_file(MPI_Comm comm, const std::string& path, const SolveResult& result,
                         const std::vector<std::string>& inputs, std::int64_t piece_entries) {
  LODESTONE_TRY(agree(comm, check_local(result)));
  LODESTONE_TRY(check_across(comm, result));
  const double k = static_cast<double>(result.pairs()), h = static_cast<double>(result.history.size());
  LODESTONE_TRY(check_size_limit(comm, path, 8.0 * (static_cast<double>(result.rows) * k + h * (4.0 + 2.0 * k)),
                                 "results file"));
  auto out = AtomicOutput::begin(comm, path, inputs);
  if (!out) return out.status();
  auto file = h5::create(comm, out->temp_path());
  if (!file) return file.status();
  Status s = write_contents(comm, file->get(), result, piece_entries);
  bool closed = file->sync_and_close_file();
  if (s && !closed) s = Status::input(fmt::format("{}: could not finish writing (disk full or file-size limit?)", path));
  if (!s) s = Status::input(fmt::format("{}: {}", path, s.message()));
  LODESTONE_TRY(agree(comm, s));
  return out->commit();
}

// ---------------------------------------------------------------- reading

namespace {

// Runs an allocation sized from the file, turning std::bad_alloc into a Status
// the ranks can agree on (a lone rank throwing would leave the others waiting).
template <class F>
Status allocate(const std::string& path, const char* what, F&& f) {
  try {
    f();
    return Status::ok();
  } catch (const std::bad_alloc&) {
    return Status::input(fmt::format("{}: out of memory while reading {}", path, what));
  } catch (const std::length_error&) {
    return Status::input(fmt::format("{}: {} would not fit in memory", path, what));
  }
}

// Reads the header from an open file. Every rank makes the same sequence of
// metadata calls (the file is opened with collective metadata operations), so
// validation reaches the same verdict everywhere; errors are agreed anyway.
struct Reader {
  MPI_Comm comm;
  hid_t file;
  const std::string& path;

  Status fail(const std::string& what) const { return Status::input(fmt::format("{}: {}", path, what)); }

  Result<h5::Handle> dataset(const std::string& name, bool want_float, std::size_t ndims, h5::DatasetShape* shape) const {
    if (!h5::exists(file, name)) return fail(fmt::format("missing dataset '{}'", name));
    H5O_info_t info;
    if (H5Oget_info_by_name2(file, name.c_str(), &info, H5O_INFO_BASIC, H5P_DEFAULT) < 0 || info.type != H5O_TYPE_DATASET)
      return fail(fmt::format("'{}' is not a dataset", name));
    h5::Handle ds(H5Dopen2(file, name.c_str(), H5P_DEFAULT));
    if (!ds.valid()) return fail(fmt::format("cannot open dataset '{}'", name));
    auto sh = h5::dataset_shape(ds.get());
    if (!sh) return fail(fmt::format("dataset '{}': {}", name, sh.status().message()));
    if (sh->dims.size() != ndims)
      return fail(fmt::format("dataset '{}' has {} dimensions; expected {}", name, sh->dims.size(), ndims));
    if (want_float && sh->type_class != H5T_FLOAT)
      return fail(fmt::format("dataset '{}' must hold floating-point numbers", name));
    if (!want_float && sh->type_class != H5T_INTEGER)
      return fail(fmt::format("dataset '{}' must hold integers", name));
    *shape = *sh;
    return ds;
  }
};

struct OpenResult {
  h5::Handle file;
  ResultHeader header;
};

Result<OpenResult> open_result(MPI_Comm comm, const std::string& path) {
  auto file = h5::open_read(comm, path);
  if (!file) return file.status();
  Reader rd{comm, file->get(), path};
  ResultHeader h;
  auto fail = [&](const std::string& what) { return rd.fail(what); };

  Status meta = [&]() -> Status {
    h5::Handle root(H5Gopen2(file->get(), "/", H5P_DEFAULT));
    if (!root.valid()) return fail("cannot open the root group");
    if (!h5::has_attribute(root.get(), rl::kFileKind))
      return fail("not a Lodestone results file (the root has no 'file_kind' attribute; is it a matrix file?)");
    auto kind = h5::read_string_attribute(root.get(), rl::kFileKind);
    if (!kind) return fail(kind.status().message());
    if (*kind != rl::kFileKindValue)
      return fail(fmt::format("not a Lodestone results file (file_kind is '{}', expected '{}')", *kind, rl::kFileKindValue));
    auto version = h5::read_int_attribute(root.get(), rl::kFormat);
    if (!version) return fail(version.status().message());
    if (*version != rl::kFormatVersion)
      return fail(fmt::format("results format_version is {}; this Lodestone reads version {}", *version, rl::kFormatVersion));

    auto get_int = [&](const char* name, std::int64_t* out) -> Status {
      auto v = h5::read_int_attribute(root.get(), name);
      if (!v) return fail(v.status().message());
      *out = *v;
      return Status::ok();
    };
    auto get_double = [&](const char* name, double* out) -> Status {
      auto v = h5::read_double_attribute(root.get(), name);
      if (!v) return fail(v.status().message());
      *out = *v;
      return Status::ok();
    };
    auto get_string = [&](const char* name, std::string* out) -> Status {
      auto v = h5::read_string_attribute(root.get(), name);
      if (!v) return fail(v.status().message());
      *out = *v;
      return Status::ok();
    };
    LODESTONE_TRY(get_int(rl::kConverged, &h.converged));
    LODESTONE_TRY(get_string(rl::kMethod, &h.method));
    LODESTONE_TRY(get_string(rl::kSelection, &h.selection));
    LODESTONE_TRY(get_double(rl::kTolerance, &h.tolerance));
    LODESTONE_TRY(get_double(rl::kNormEstimate, &h.norm_estimate));
    LODESTONE_TRY(get_int(rl::kMatvecs, &h.matvecs));
    LODESTONE_TRY(get_int(rl::kIterations, &h.iterations));
    LODESTONE_TRY(get_int(rl::kRanks, &h.ranks));
    LODESTONE_TRY(get_double(rl::kElapsed, &h.elapsed_seconds));
    std::string fp;
    LODESTONE_TRY(get_string(rl::kFingerprint, &fp));
    if (!parse_fingerprint(fp, &h.matrix_fingerprint))
      return fail(fmt::format("attribute 'matrix_fingerprint' is '{}'; expected 16 hexadecimal digits", fp));
    if (!(h.tolerance >= 0) || !std::isfinite(h.tolerance))
      return fail(fmt::format("attribute 'tolerance' is {}; expected a finite number >= 0", h.tolerance));
    if (!(h.norm_estimate >= 0) || !std::isfinite(h.norm_estimate))
      return fail(fmt::format("attribute 'norm_estimate' is {}; expected a finite number >= 0", h.norm_estimate));

    h5::DatasetShape vals, imag, res, vecs;
    auto d1 = rd.dataset(std::string("/") + rl::kEigenvalues, true, 1, &vals);
    if (!d1) return d1.status();
    auto d2 = rd.dataset(std::string("/") + rl::kEigenvaluesImag, true, 1, &imag);
    if (!d2) return d2.status();
    auto d3 = rd.dataset(std::string("/") + rl::kResidualNorms, true, 1, &res);
    if (!d3) return d3.status();
    auto d4 = rd.dataset(std::string("/") + rl::kEigenvectors, true, 2, &vecs);
    if (!d4) return d4.status();
    h.pairs = vals.dims[0];
    h.rows = vecs.dims[0];
    if (imag.dims[0] != h.pairs || res.dims[0] != h.pairs)
      return fail(fmt::format("'eigenvalues' has {} entries but 'eigenvalues_imag' has {} and 'residual_norms' {}",
                              h.pairs, imag.dims[0], res.dims[0]));
    if (vecs.dims[1] != h.pairs)
      return fail(fmt::format("'eigenvectors' is {} x {}; expected {} columns, one per eigenvalue", vecs.dims[0],
                              vecs.dims[1], h.pairs));
    if (h.rows <= 0) return fail("'eigenvectors' has no rows");
    // Every size below comes from the file and sizes an allocation on every rank:
    // they must agree with each other before anything is allocated.
    if (h.pairs < 0 || h.pairs > h.rows)
      return fail(fmt::format("'eigenvalues' has {} entries but 'eigenvectors' has {} rows; a result has at most "
                              "one pair per row (damaged file?)",
                              h.pairs, h.rows));
    if (8.0 * static_cast<double>(h.rows) * static_cast<double>(h.pairs) > 0x1p62)
      return fail(fmt::format("'eigenvectors' is {} x {}, too large for any matrix (damaged file?)", h.rows, h.pairs));
    if (h.converged < 0 || h.converged > h.pairs)
      return fail(fmt::format("attribute 'converged' is {}; expected 0 to {}", h.converged, h.pairs));

    const std::string hg = std::string("/") + rl::kHistory;
    if (!h5::exists(file->get(), hg)) return fail("missing group '/history'");
    h5::DatasetShape it, mv, sec, conv, est, resid;
    auto h1 = rd.dataset(hg + "/" + rl::kHistIteration, false, 1, &it);
    if (!h1) return h1.status();
    auto h2 = rd.dataset(hg + "/" + rl::kHistMatvecs, false, 1, &mv);
    if (!h2) return h2.status();
    auto h3 = rd.dataset(hg + "/" + rl::kHistSeconds, true, 1, &sec);
    if (!h3) return h3.status();
    auto h4 = rd.dataset(hg + "/" + rl::kHistConverged, false, 1, &conv);
    if (!h4) return h4.status();
    auto h5d = rd.dataset(hg + "/" + rl::kHistEstimates, true, 2, &est);
    if (!h5d) return h5d.status();
    auto h6 = rd.dataset(hg + "/" + rl::kHistResiduals, true, 2, &resid);
    if (!h6) return h6.status();
    h.history = it.dims[0];
    if (h.history < 0 || h.history > rl::kMaxHistoryRecords)
      return fail(fmt::format("'/history' has {} records; a results file holds at most {} (damaged file?)", h.history,
                              rl::kMaxHistoryRecords));
    if (mv.dims[0] != h.history || sec.dims[0] != h.history || conv.dims[0] != h.history)
      return fail("the datasets in '/history' differ in length");
    for (const auto* s : {&est, &resid})
      if (s->dims[0] != h.history || s->dims[1] != h.pairs)
        return fail(fmt::format("'/history/estimates' and '/history/residuals' must be {} x {} (records x pairs)",
                                h.history, h.pairs));
    return Status::ok();
  }();
  LODESTONE_TRY(agree(comm, meta));

  // The small replicated arrays, read by every rank.
  auto read_all = [&](const char* name, std::vector<double>* out) -> Status {
    LODESTONE_TRY(agree(comm, allocate(path, name, [&] { out->assign(static_cast<std::size_t>(h.pairs), 0.0); })));
    if (h.pairs == 0) return Status::ok();  // nothing to transfer (HDF5 refuses an empty transfer)
    h5::Handle ds(H5Dopen2(file->get(), name, H5P_DEFAULT));
    Status s = h5::read_range(ds.get(), H5T_NATIVE_DOUBLE, 0, h.pairs, out->data());
    return agree(comm, s ? s : fail(fmt::format("dataset '{}': {}", name, s.message())));
  };
  LODESTONE_TRY(read_all(rl::kEigenvalues, &h.eigenvalues));
  LODESTONE_TRY(read_all(rl::kEigenvaluesImag, &h.eigenvalues_imag));
  LODESTONE_TRY(read_all(rl::kResidualNorms, &h.residual_norms));
  return OpenResult{std::move(*file), std::move(h)};
}

}  // namespace

Result<ResultHeader> read_result_header(MPI_Comm comm, const std::string& path) {
  auto r = open_result(comm, path);
  if (!r) return r.status();
  return std::move(r->header);
}

Result<SolveResult> read_result_file(MPI_Comm comm, const std::string& path, std::int64_t row_begin,
                                     std::int64_t row_end, std::int64_t piece_entries) {
  auto opened = open_result(comm, path);
  if (!opened) return opened.status();
  const ResultHeader& h = opened->header;
  hid_t file = opened->file.get();
  auto fail = [&](const std::string& what) { return Status::input(fmt::format("{}: {}", path, what)); };

  Status range;
  if (row_begin < 0 || row_begin > row_end || row_end > h.rows)
    range = fail(fmt::format("rank {} asked for rows [{}, {}), but the eigenvectors have {} rows (is this result "
                             "for a different matrix?)",
                             comm_rank(comm), row_begin, row_end, h.rows));
  LODESTONE_TRY(agree(comm, range));

  SolveResult r;
  r.eigenvalues = h.eigenvalues;
  r.eigenvalues_imag = h.eigenvalues_imag;
  r.residual_norms = h.residual_norms;
  r.rows = h.rows;
  r.row_begin = row_begin;
  r.row_end = row_end;
  r.converged = h.converged;
  r.method = h.method;
  r.selection = h.selection;
  r.tolerance = h.tolerance;
  r.norm_estimate = h.norm_estimate;
  r.matvecs = h.matvecs;
  r.iterations = h.iterations;
  r.ranks = h.ranks;
  r.matrix_fingerprint = h.matrix_fingerprint;
  r.elapsed_seconds = h.elapsed_seconds;

  const std::int64_t k = h.pairs, m = row_end - row_begin;
  LODESTONE_TRY(
      agree(comm, allocate(path, "the eigenvectors", [&] { r.vectors.resize(static_cast<std::size_t>(m * k)); })));
  if (k > 0) {
    h5::Handle ds(H5Dopen2(file, (std::string("/") + rl::kEigenvectors).c_str(), H5P_DEFAULT));
    std::vector<double> rowmajor;
    LODESTONE_TRY(by_pieces(comm, m, k, piece_entries, [&](std::int64_t first, std::int64_t rows) {
      rowmajor.resize(static_cast<std::size_t>(rows * k));
      Status s = h5::read_rows(ds.get(), H5T_NATIVE_DOUBLE, row_begin + first, rows, k, rowmajor.data());
      if (!s) return fail(fmt::format("dataset 'eigenvectors': {}", s.message()));
      for (std::int64_t i = 0; i < rows; ++i)
        for (std::int64_t j = 0; j < k; ++j)
          r.vectors[static_cast<std::size_t>(j * m + first + i)] = rowmajor[static_cast<std::size_t>(i * k + j)];
      return Status::ok();
    }));
  }

  const std::int64_t hc = h.history;
  std::vector<std::int64_t> iteration, matvecs, converged;
  std::vector<double> seconds, estimates, residuals;
  LODESTONE_TRY(agree(comm, allocate(path, "the history", [&] {
                  for (auto* v : {&iteration, &matvecs, &converged}) v->resize(static_cast<std::size_t>(hc));
                  seconds.resize(static_cast<std::size_t>(hc));
                  estimates.resize(static_cast<std::size_t>(hc * k));
                  residuals.resize(static_cast<std::size_t>(hc * k));
                })));
  auto read = [&](const char* name, hid_t type, bool two_d, void* out) -> Status {
    const std::string full = std::string("/") + rl::kHistory + "/" + name;
    if (hc == 0 || (two_d && k == 0)) return Status::ok();  // empty: nothing to transfer
    h5::Handle ds(H5Dopen2(file, full.c_str(), H5P_DEFAULT));
    Status s = two_d ? h5::read_rows(ds.get(), type, 0, hc, k, out) : h5::read_range(ds.get(), type, 0, hc, out);
    return agree(comm, s ? s : fail(fmt::format("dataset '{}': {}", full, s.message())));
  };
  LODESTONE_TRY(read(rl::kHistIteration, H5T_NATIVE_INT64, false, iteration.data()));
  LODESTONE_TRY(read(rl::kHistMatvecs, H5T_NATIVE_INT64, false, matvecs.data()));
  LODESTONE_TRY(read(rl::kHistSeconds, H5T_NATIVE_DOUBLE, false, seconds.data()));
  LODESTONE_TRY(read(rl::kHistConverged, H5T_NATIVE_INT64, false, converged.data()));
  LODESTONE_TRY(read(rl::kHistEstimates, H5T_NATIVE_DOUBLE, true, estimates.data()));
  LODESTONE_TRY(read(rl::kHistResiduals, H5T_NATIVE_DOUBLE, true, residuals.data()));
  LODESTONE_TRY(agree(comm, allocate(path, "the history", [&] {
                  r.history.resize(static_cast<std::size_t>(hc));
                  for (std::int64_t i = 0; i < hc; ++i) {
                    auto& rec = r.history[static_cast<std::size_t>(i)];
                    rec.iteration = iteration[i];
                    rec.matvecs = matvecs[i];
                    rec.seconds = seconds[i];
                    rec.converged = converged[i];
                    rec.estimates.assign(estimates.begin() + i * k, estimates.begin() + (i + 1) * k);
                    rec.residuals.assign(residuals.begin() + i * k, residuals.begin() + (i + 1) * k);
                  }
                })));
  return r;
}

}  // namespace lodestone::io
