// Writing a checkpoint collectively, each rank its own rows, through the
// two-generation atomic output (state/checkpoint_file.hpp).
#include <fmt/format.h>

#include <algorithm>
#include <ctime>
#include <limits>

#include "io/atomic_output.hpp"
#include "io/h5.hpp"
#include "state/checkpoint_checksum.hpp"
#include "state/checkpoint_file.hpp"
#include "state/checkpoint_h5.hpp"
#include "state/checkpoint_layout.hpp"
#include "state/checkpoint_output.hpp"
#include "support/collective.hpp"
#include "support/format.hpp"

namespace lodestone::ckpt {

namespace {

std::string broadcast_text(MPI_Comm comm, std::string text) {
  int len = static_cast<int>(text.size());
  MPI_Bcast(&len, 1, MPI_INT, 0, comm);
  text.resize(static_cast<std::size_t>(len));
  MPI_Bcast(text.data(), len, MPI_CHAR, 0, comm);
  return text;
}

// The checks that keep the collective HDF5 calls below from hanging or
// writing nonsense: shapes are consistent and the replicated parts agree.
Status check_before_writing(MPI_Comm comm, const Checkpoint& c) {
  const SolverState& st = c.state;
  const std::int64_t local = st.local_rows();
  Status s;
  if (st.row_begin < 0 || local < 0 || st.row_end > st.rows)
    s = Status::input(fmt::format("checkpoint: rank {} holds rows [{}, {}) outside 0..{}", comm_rank(comm),
                                  st.row_begin, st.row_end, st.rows));
  for (const auto& [name, b] : st.blocks) {
    if (!s) break;
    if (name.empty() || name.find('/') != std::string::npos || name == ".")
      s = Status::input(fmt::format("checkpoint: block name '{}' is not a plain name", name));
    else if (b.columns < 0 || static_cast<std::int64_t>(b.local.size()) != b.columns * local)
      s = Status::input(fmt::format("checkpoint: block '{}' on rank {} holds {} values, expected {} columns x {} rows",
                                    name, comm_rank(comm), b.local.size(), b.columns, local));
  }
  LODESTONE_TRY(agree(comm, s));
  LODESTONE_TRY(check_row_blocks(comm, st.row_begin, local, st.rows, "checkpoint"));
  const std::uint64_t h = small_checksum(c);
  std::uint64_t lo = 0, hi = 0;
  MPI_Allreduce(&h, &lo, 1, MPI_UINT64_T, MPI_MIN, comm);
  MPI_Allreduce(&h, &hi, 1, MPI_UINT64_T, MPI_MAX, comm);
  if (lo != hi)
    return Status::input("checkpoint: the replicated state (options, counters, arrays, history) differs between ranks");
  return Status::ok();
}

Status write_attributes(hid_t obj, const std::map<std::string, std::string>& text,
                        const std::map<std::string, std::int64_t>& ints) {
  for (const auto& [k, v] : text) LODESTONE_TRY(h5::write_string_attribute(obj, k, v));
  for (const auto& [k, v] : ints) LODESTONE_TRY(h5::write_int_attribute(obj, k, v));
  return Status::ok();
}

Status write_history(MPI_Comm comm, hid_t file, const std::vector<HistoryRecord>& history) {
  auto g = h5::create_group(file, kHistory);
  LODESTONE_TRY(agree(comm, g.status()));
  const std::int64_t rows = static_cast<std::int64_t>(history.size());
  std::size_t width = 0;
  for (const auto& h : history) width = std::max({width, h.estimates.size(), h.residuals.size()});
  std::vector<std::int64_t> it, mv, conv;
  std::vector<double> sec, est, res;
  const double pad = std::numeric_limits<double>::quiet_NaN();
  for (const auto& h : history) {
    it.push_back(h.iteration), mv.push_back(h.matvecs), conv.push_back(h.converged), sec.push_back(h.seconds);
    for (std::size_t j = 0; j < width; ++j) {
      est.push_back(j < h.estimates.size() ? h.estimates[j] : pad);
      res.push_back(j < h.residuals.size() ? h.residuals[j] : pad);
    }
  }
  const std::vector<std::int64_t> d1{rows}, d2{rows, static_cast<std::int64_t>(width)};
  LODESTONE_TRY(write_replicated(comm, g->get(), kHistIteration, H5T_STD_I64LE, H5T_NATIVE_INT64, d1, it.data()));
  LODESTONE_TRY(write_replicated(comm, g->get(), kHistMatvecs, H5T_STD_I64LE, H5T_NATIVE_INT64, d1, mv.data()));
  LODESTONE_TRY(write_replicated(comm, g->get(), kHistSeconds, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, d1, sec.data()));
  LODESTONE_TRY(write_replicated(comm, g->get(), kHistConverged, H5T_STD_I64LE, H5T_NATIVE_INT64, d1, conv.data()));
  LODESTONE_TRY(write_replicated(comm, g->get(), kHistEstimates, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, d2, est.data()));
  return write_replicated(comm, g->get(), kHistResiduals, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE, d2, res.data());
}

Status write_state(MPI_Comm comm, hid_t file, const Checkpoint& c) {
  const SolverState& st = c.state;
  auto g = h5::create_group(file, kState);
  auto blocks = h5::create_group(file, kBlocks);
  auto arrays = h5::create_group(file, kArrays);
  auto counters = h5::create_group(file, kCounters);
  Status s = !g ? g.status() : !blocks ? blocks.status() : !arrays ? arrays.status() : counters.status();
  LODESTONE_TRY(agree(comm, s));
  s = write_attributes(g->get(), {{kMethod, st.method}}, {{kRows, st.rows}});
  if (s) s = write_u64_attribute(g->get(), kChecksum, small_checksum(c));
  if (s) s = write_attributes(counters->get(), {}, st.counters);
  LODESTONE_TRY(agree(comm, s));
  for (const auto& [name, b] : st.blocks) {
    auto ds = h5::create_dataset(blocks->get(), name, H5T_IEEE_F64LE, {b.columns, st.rows});
    LODESTONE_TRY(agree(comm, ds.status()));
    // A block with no columns has no storage to write (the same on every rank).
    if (b.columns > 0)
      s = transfer_box(ds->get(), H5T_NATIVE_DOUBLE, 0, st.row_begin, b.columns, st.local_rows(),
                       const_cast<double*>(b.local.data()), true);
    LODESTONE_TRY(agree(comm, s.is_ok() ? s : Status::input(fmt::format("block '{}': {}", name, s.message()))));
    const std::uint64_t sum = block_checksum(comm, name, b, st.row_begin, st.local_rows());
    LODESTONE_TRY(agree(comm, write_u64_attribute(ds->get(), kChecksum, sum)));
  }
  for (const auto& [name, a] : st.arrays) {
    if (name.empty() || name.find('/') != std::string::npos)
      return Status::input(fmt::format("checkpoint: array name '{}' is not a plain name", name));
    LODESTONE_TRY(write_replicated(comm, arrays->get(), name, H5T_IEEE_F64LE, H5T_NATIVE_DOUBLE,
                                   {static_cast<std::int64_t>(a.size())}, a.data()));
  }
  return Status::ok();
}

Status write_contents(MPI_Comm comm, hid_t file, const Checkpoint& c) {
  auto root = h5::open_group(file, "/", "checkpoint");
  auto run = h5::create_group(file, kRun);
  auto options = h5::create_group(file, kOptions);
  auto progress = h5::create_group(file, kProgress);
  Status s = !root ? root.status() : !run ? run.status() : !options ? options.status() : progress.status();
  LODESTONE_TRY(agree(comm, s));
  const std::string when = broadcast_text(comm, comm_rank(comm) == 0 ? utc_now() : std::string());
  s = write_attributes(root->get(), {{kFileKind, kKindValue}, {kWrittenAt, when}, {kWriter, "lodestone 0.1.0"}},
                       {{kFormat, kCheckpointFormatVersion}, {kWrittenBy, comm_size(comm)}});
  if (s) s = write_u64_attribute(run->get(), kFingerprint, c.identity.matrix_fingerprint);
  if (s) s = write_attributes(run->get(), {}, {{kRows, c.identity.rows}});
  if (s) s = write_attributes(options->get(), c.identity.options, {});
  if (s)
    s = write_attributes(progress->get(), {},
                         {{kIterations, c.iterations}, {kMatvecs, c.matvecs}, {kConverged, c.converged}});
  if (s) s = h5::write_double_attribute(progress->get(), kElapsed, c.elapsed_seconds);
  LODESTONE_TRY(agree(comm, s));
  LODESTONE_TRY(write_state(comm, file, c));
  return write_history(comm, file, c.history);
}

}  // namespace

Status write(MPI_Comm comm, const std::string& path, const Checkpoint& ckpt, const std::vector<std::string>& inputs) {
  LODESTONE_TRY(check_before_writing(comm, ckpt));
  double values = 0;  // replicated facts, so every rank counts the same
  for (const auto& [name, b] : ckpt.state.blocks) values += static_cast<double>(b.columns * ckpt.state.rows);
  for (const auto& [name, a] : ckpt.state.arrays) values += static_cast<double>(a.size());
  for (const auto& h : ckpt.history) values += 4.0 + 2.0 * static_cast<double>(h.estimates.size());
  LODESTONE_TRY(io::check_size_limit(comm, path, 8.0 * values, "checkpoint"));
  auto out = GenerationalOutput::begin(comm, path, inputs);
  if (!out) return out.status();
  auto file = h5::create(comm, out->temp_path());
  if (!file) return file.status();
  Status s = write_contents(comm, file->get(), ckpt);
  // Synced on every rank before rank 0 renames it.
  bool closed = file->sync_and_close_file();
  if (s && !closed) s = Status::input(fmt::format("{}: could not finish writing the checkpoint (disk full?)", path));
  LODESTONE_TRY(agree(comm, s.is_ok() ? s : Status::input(fmt::format("{}: {}", path, s.message()))));
  return out->commit();
}

}  // namespace lodestone::ckpt
