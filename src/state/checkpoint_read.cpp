// Reading a checkpoint on any rank count, checking its kind, version and
// checksums, with fallback to the previous generation (state/checkpoint_file.hpp).
#include <fmt/format.h>

#include <filesystem>

#include "io/h5.hpp"
#include "state/checkpoint_checksum.hpp"
#include "state/checkpoint_file.hpp"
#include "state/checkpoint_h5.hpp"
#include "state/checkpoint_layout.hpp"
#include "support/collective.hpp"

namespace lodestone::ckpt {

namespace {

// A failure that means the file is damaged (an older generation may serve).
ReadOutcome damaged(const std::string& path, const std::string& what) {
  return {Status::input(fmt::format("{}: damaged checkpoint: {}", path, what)), true};
}

template <class T>
bool take(Result<T> r, T& out, std::string& error, const std::string& where) {
  if (!r) {
    if (error.empty()) error = fmt::format("{}: {}", where, r.status().message());
    return false;
  }
  out = std::move(r.value());
  return true;
}

// Identity, progress, counters, arrays and history: the same on every rank.
std::string read_small(hid_t file, Checkpoint& c) {
  std::string err;
  auto run = h5::open_group(file, kRun, "");
  auto options = h5::open_group(file, kOptions, "");
  auto progress = h5::open_group(file, kProgress, "");
  auto state = h5::open_group(file, kState, "");
  auto counters = h5::open_group(file, kCounters, "");
  auto arrays = h5::open_group(file, kArrays, "");
  auto history = h5::open_group(file, kHistory, "");
  for (auto* g : {&run, &options, &progress, &state, &counters, &arrays, &history})
    if (!*g) return g->status().message().substr(2);  // drop the empty file name prefix ": "
  take(read_u64_attribute(run->get(), kFingerprint), c.identity.matrix_fingerprint, err, "/run");
  take(h5::read_int_attribute(run->get(), kRows), c.identity.rows, err, "/run");
  for (const auto& name : attribute_names(options->get())) {
    std::string v;
    if (take(h5::read_string_attribute(options->get(), name), v, err, "/run/options")) c.identity.options[name] = v;
  }
  take(h5::read_int_attribute(progress->get(), kIterations), c.iterations, err, "/progress");
  take(h5::read_int_attribute(progress->get(), kMatvecs), c.matvecs, err, "/progress");
  take(h5::read_int_attribute(progress->get(), kConverged), c.converged, err, "/progress");
  take(h5::read_double_attribute(progress->get(), kElapsed), c.elapsed_seconds, err, "/progress");
  take(h5::read_string_attribute(state->get(), kMethod), c.state.method, err, "/state");
  take(h5::read_int_attribute(state->get(), kRows), c.state.rows, err, "/state");
  for (const auto& name : attribute_names(counters->get())) {
    std::int64_t v = 0;
    if (take(h5::read_int_attribute(counters->get(), name), v, err, "/state/counters")) c.state.counters[name] = v;
  }
  for (const auto& name : link_names(arrays->get())) {
    std::vector<std::int64_t> dims;
    std::vector<double> v;
    if (take(read_replicated_doubles(arrays->get(), name, 1, dims), v, err, "/state/arrays")) c.state.arrays[name] = v;
  }
  if (!err.empty()) return err;
  std::vector<std::int64_t> dims;
  std::vector<double> seconds, est, res;
  if (!take(read_replicated_doubles(history->get(), kHistSeconds, 1, dims), seconds, err, "/history")) return err;
  const std::int64_t n = dims[0];
  std::vector<std::int64_t> it, mv, conv;
  take(read_replicated_ints(history->get(), kHistIteration, n), it, err, "/history");
  take(read_replicated_ints(history->get(), kHistMatvecs, n), mv, err, "/history");
  take(read_replicated_ints(history->get(), kHistConverged, n), conv, err, "/history");
  std::vector<std::int64_t> de, dr;
  take(read_replicated_doubles(history->get(), kHistEstimates, 2, de), est, err, "/history");
  take(read_replicated_doubles(history->get(), kHistResiduals, 2, dr), res, err, "/history");
  if (!err.empty()) return err;
  if (de[0] != n || dr != de) return fmt::format("/history: estimates and residuals must both be [{}, width]", n);
  const std::size_t w = static_cast<std::size_t>(de[1]);
  c.history.resize(static_cast<std::size_t>(n));
  for (std::size_t r = 0; r < c.history.size(); ++r) {
    HistoryRecord& h = c.history[r];
    h.iteration = it[r], h.matvecs = mv[r], h.converged = conv[r], h.seconds = seconds[r];
    h.estimates.assign(est.begin() + r * w, est.begin() + (r + 1) * w);
    h.residuals.assign(res.begin() + r * w, res.begin() + (r + 1) * w);
  }
  return {};
}

// This rank's rows of every block; collective.
ReadOutcome read_blocks(MPI_Comm comm, hid_t file, const std::string& path, bool with_data, Checkpoint& c) {
  SolverState& st = c.state;
  auto blocks = h5::open_group(file, kBlocks, "");
  if (!blocks) return damaged(path, "missing group /state/blocks");
  const bool covered = with_data && sum_all(comm, st.local_rows()) == st.rows;
  for (const auto& name : link_names(blocks->get())) {
    hid_t d = H5Dopen2(blocks->get(), name.c_str(), H5P_DEFAULT);
    if (d < 0) return damaged(path, fmt::format("cannot open block '{}'", name));
    h5::Handle ds(d);
    auto shape = h5::dataset_shape(d);
    if (!shape || shape->dims.size() != 2 || shape->dims[1] != st.rows || shape->type_class != H5T_FLOAT)
      return damaged(path, fmt::format("block '{}' must be float64[columns, {}]", name, st.rows));
    StateBlock& b = st.blocks[name];
    b.columns = shape->dims[0];
    if (!with_data) continue;
    b.local.assign(static_cast<std::size_t>(b.columns * st.local_rows()), 0.0);
    Status s;
    if (b.columns > 0)
      s = transfer_box(d, H5T_NATIVE_DOUBLE, 0, st.row_begin, b.columns, st.local_rows(), b.local.data(), false);
    s = agree(comm, s);
    if (!s) return damaged(path, fmt::format("block '{}': {}", name, s.message()));
    auto stored = read_u64_attribute(d, kChecksum);
    if (!stored) return damaged(path, fmt::format("block '{}': {}", name, stored.status().message()));
    if (covered && block_checksum(comm, name, b, st.row_begin, st.local_rows()) != *stored)
      return damaged(path, fmt::format("block '{}' does not match its checksum", name));
  }
  return {};
}

}  // namespace

ReadOutcome read_one(MPI_Comm comm, const std::string& path, std::int64_t row_begin, std::int64_t row_end,
                     bool with_blocks, Checkpoint& c) {
  c = Checkpoint{};
  auto file = h5::open_read(comm, path);
  if (!file) return {file.status(), true};
  auto root = h5::open_group(file->get(), "/", path);
  if (!root) return damaged(path, root.status().message());
  if (!h5::has_attribute(root->get(), kFileKind))
    return {Status::input(fmt::format("{}: not a Lodestone checkpoint (no file_kind attribute)", path)), false};
  auto kind = h5::read_string_attribute(root->get(), kFileKind);
  if (!kind) return damaged(path, kind.status().message());
  if (*kind != kKindValue)
    return {Status::input(fmt::format("{}: not a checkpoint: its file_kind is '{}'", path, *kind)), false};
  auto version = h5::read_int_attribute(root->get(), kFormat);
  if (!version) return damaged(path, version.status().message());
  if (*version > kCheckpointFormatVersion)
    return {Status::input(fmt::format("{}: checkpoint format version {} is newer than this Lodestone reads (up to {}); "
                                      "resume with the Lodestone that wrote it or a newer one",
                                      path, *version, kCheckpointFormatVersion)),
            false};
  if (*version < 1)
    return {Status::input(fmt::format("{}: unknown checkpoint format version {}", path, *version)), false};
  c.format_version = *version;
  std::string err;
  take(h5::read_string_attribute(root->get(), kWrittenAt), c.written_at, err, "/");
  take(h5::read_int_attribute(root->get(), kWrittenBy), c.written_by_ranks, err, "/");
  if (!err.empty()) return damaged(path, err);
  err = read_small(file->get(), c);
  if (!err.empty()) return damaged(path, err);
  auto stored = h5::open_group(file->get(), kState, path);
  auto sum = read_u64_attribute(stored->get(), kChecksum);
  if (!sum) return damaged(path, "/state: " + sum.status().message());
  if (c.state.rows != c.identity.rows || c.state.rows < 0)
    return damaged(path, fmt::format("/state rows {} differ from /run rows {}", c.state.rows, c.identity.rows));

  Status range;
  // Rows beyond the checkpoint's: it was written for a smaller matrix (a finer mesh saved
  // under the same name, say), which is what the message must say.
  if (with_blocks && row_end > c.state.rows && row_begin >= 0 && row_end >= row_begin)
    range = Status::input(fmt::format("{}: belongs to a different matrix: it holds {} rows, and this matrix has at "
                                      "least {} (rows [{}, {}) on this rank)",
                                      path, c.state.rows, row_end, row_begin, row_end));
  else if (with_blocks && (row_begin < 0 || row_end < row_begin))
    range = Status::input(fmt::format("{}: rows [{}, {}) requested from a checkpoint of {} rows", path, row_begin,
                                      row_end, c.state.rows));
  if (Status s = agree(comm, range); !s) return {s, false};
  c.state.row_begin = with_blocks ? row_begin : 0;
  c.state.row_end = with_blocks ? row_end : 0;
  ReadOutcome b = read_blocks(comm, file->get(), path, with_blocks, c);
  if (!b.status) return b;
  // The blocks' names and widths are part of the small checksum.
  if (small_checksum(c) != *sum) return damaged(path, "the run facts, counters or history do not match their checksum");
  c.read_from = path;
  return {};
}

Result<Checkpoint> read(MPI_Comm comm, const std::string& path, std::int64_t row_begin, std::int64_t row_end,
                        const CheckpointReadOptions& options) {
  Checkpoint c;
  ReadOutcome first = read_one(comm, path, row_begin, row_end, options.read_blocks, c);
  if (first.status) return c;
  const std::string previous = previous_checkpoint_path(path);
  int has_previous = 0;
  if (comm_rank(comm) == 0) {
    std::error_code ec;
    has_previous = std::filesystem::exists(previous, ec) ? 1 : 0;
  }
  MPI_Bcast(&has_previous, 1, MPI_INT, 0, comm);
  if (!first.damaged || !options.allow_previous || !has_previous) return first.status;
  ReadOutcome second = read_one(comm, previous, row_begin, row_end, options.read_blocks, c);
  if (!second.status)
    return Status::input(fmt::format("{}; the previous generation is no better: {}", first.status.message(),
                                     second.status.message()));
  c.note = fmt::format("{}; using the previous checkpoint {}", first.status.message(), previous);
  return c;
}

}  // namespace lodestone::ckpt
